"""`afecheck spice` output read back by the SPICE reader gives the same stages and the same findings.

For every sample design and for generated designs (tests/tools/generate.py, varied by a seeded random walk so
that they carry findings): the deck, with the intent and map that carry what SPICE cannot say, read back has
stages and findings equal to the original's, every number to 1e-9 relative (spice_roundtrip.py).
"""

from __future__ import annotations

import json
import random
from pathlib import Path

import pytest
from spice_roundtrip import compare, findings_of, round_trip
from tools.generate import generate_design

from afecheck.model.load import load_design

SAMPLES = sorted(p for p in (Path(__file__).resolve().parent.parent / "sample_designs").glob("*.yaml")
                 if not p.name.endswith(".intent.yaml"))
FAST_SEEDS = range(6)
SLOW_SEEDS = range(6, 206)


def varied_design(seed: int) -> dict:
    """A generated design with 1..4 channels whose values, rails, signals and part wander by seed."""
    rng = random.Random(seed)
    data = generate_design(1 + seed % 4, name=f"varied rack {seed}")
    scale = (0.1, 0.33, 0.5, 1.0, 1.0, 2.0, 4.7, 10.0)
    for comp in data["components"].values():
        if comp["kind"] in ("resistor", "capacitor") and rng.random() < 0.5:
            comp["value"] = f"{float(_si(comp['value'])) * rng.choice(scale)!r}"
        if comp["kind"] == "signal_source" and rng.random() < 0.5:
            lo = rng.uniform(-0.5, 2.0)
            comp["dc"] = [lo, lo + rng.uniform(0.0, 4.0)]
            comp["ac_amplitude"] = rng.choice([0.0, 0.01, 0.5])
    data["rails"]["VCC"]["voltage"] = rng.choice(["3.3 V", "5 V", "12 V"])
    part = data["parts"]["BENCH-PREC2"]
    part["gbw"] = rng.choice(["100 kHz", "1.5 MHz", "20 MHz"])
    part["min_stable_gain"] = rng.choice([1, 1, 5])
    part["input_cm_high"] = rng.choice(["1.5 V", "-1.5 V"])
    _add_inductors(data, random.Random(seed + 1_000_000))
    return data


def _add_inductors(data: dict, rng: random.Random) -> None:
    """In about a third of the designs, put an inductor in series with some resistors (a new net between them),
    so the round trip carries L cards too (a separate generator, so the other values do not move)."""
    if rng.random() >= 0.35:
        return
    for ref, comp in list(data["components"].items()):
        if comp["kind"] == "resistor" and rng.random() < 0.3:
            key = next(k for k in comp["pins"] if str(k) == "2")
            net = comp["pins"][key]
            mid = f"{ref}_L"
            comp["pins"][key] = mid
            data["components"][f"L{ref}"] = {"kind": "inductor", "value": rng.choice(["1 uH", "47 uH", "2.2 mH"]),
                                             "pins": {"1": mid, "2": net}}


def _si(text: str) -> float:
    from afecheck.model.units import parse_quantity

    return parse_quantity(text, "1")


def _check(loaded, folder: Path) -> None:  # noqa: ANN001 - LoadedDesign
    trip = round_trip(loaded, folder)
    diffs = compare(trip)
    assert not diffs, "\n".join(diffs[:20]) + "\n" + trip.deck


@pytest.mark.parametrize("path", SAMPLES, ids=lambda p: p.name)
def test_sample_reads_back_with_the_same_stages_and_findings(path: Path, tmp_path: Path) -> None:
    _check(load_design(path), tmp_path)


def _generated(seed: int, tmp_path: Path) -> None:
    source = tmp_path / "generated.json"
    source.write_text(json.dumps(varied_design(seed)), encoding="utf-8")
    folder = tmp_path / "trip"
    folder.mkdir()
    _check(load_design(source), folder)


@pytest.mark.parametrize("seed", FAST_SEEDS)
def test_generated_design_reads_back_the_same(seed: int, tmp_path: Path) -> None:
    _generated(seed, tmp_path)


@pytest.mark.slow
@pytest.mark.parametrize("seed", SLOW_SEEDS)
def test_many_generated_designs_read_back_the_same(seed: int, tmp_path: Path) -> None:
    _generated(seed, tmp_path)


def test_some_varied_designs_carry_inductors() -> None:
    with_l = [seed for seed in range(206) if any(c["kind"] == "inductor"
                                                     for c in varied_design(seed)["components"].values())]
    assert 40 <= len(with_l) <= 120 and any(s in with_l for s in FAST_SEEDS), len(with_l)


def test_the_varied_designs_carry_findings(tmp_path: Path) -> None:
    """The round trip compares something: the varied designs raise findings of several rules."""
    rules: set[str] = set()
    for seed in FAST_SEEDS:
        source = tmp_path / f"g{seed}.json"
        source.write_text(json.dumps(varied_design(seed)), encoding="utf-8")
        rules |= {f["rule"] for f in findings_of(load_design(source))}
    assert len(rules) >= 3, rules


def test_a_changed_value_in_the_deck_is_seen(tmp_path: Path) -> None:
    """The comparison can fail: one resistor changed in the deck changes stages and findings."""
    trip = round_trip(load_design(SAMPLES[0]), tmp_path)
    deck = tmp_path / "board.cir"
    lines = deck.read_text(encoding="utf-8").splitlines()
    i = next(i for i, line in enumerate(lines) if line.startswith("R2 "))
    name, a, b, value = lines[i].split()
    lines[i] = f"{name} {a} {b} {float(value) * 1.001!r}"
    deck.write_text("\n".join(lines) + "\n", encoding="utf-8")
    trip.back = load_design(deck, intent=tmp_path / "intent.json", netlist_map=tmp_path / "map.json")
    assert any("stages" in d for d in compare(trip))
