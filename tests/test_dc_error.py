"""DC error and drift against a textbook formula and against ngspice operating points at every corner."""

from __future__ import annotations

import itertools

import pytest
import yaml

from afecheck.analysis.channel import find_channels
from afecheck.analysis.dc_error import (
    _end_options,
    analyse_dc_error,
    channel_dc_error,
    ideal,
    perturbed,
    quantities,
)
from afecheck.analysis.netlist import netlist_from_design
from afecheck.analysis.spice import ControlBlock, spice_deck
from afecheck.model.load import load_design
from tests.ngspice_harness import needs_ngspice, parse_print, run_ngspice
from tests.tools.budget_stages import write_channel
from tests.tools.corners import copies

STAGE = """
afecheck: 1
name: dc error check
operating_temperature: [-15 °C, 65 °C]
parts:
  P:
    gbw: 1 MHz
    open_loop_gain: 1000
    output_resistance: 0
    input_resistance_diff: 1e15
    input_resistance_cm: 1e15
    offset_voltage: 1 mV
    offset_drift: 2 uV/K
    bias_current: 0
    offset_current: 0
rails: {VP: {voltage: 5 V}, VN: {voltage: -5 V}}
signals:
  IN: {dc: [0 V, 0.4 V]}
components:
  U1: {kind: opamp, part: P, pins: {in+: IN, in-: FB, out: OUT, v+: VP, v-: VN}}
  RF: {kind: resistor, value: 9k, tolerance: 0, pins: {1: OUT, 2: FB}}
  RG: {kind: resistor, value: 1k, tolerance: 0, tempco: 50 ppm/K, pins: {1: FB, 2: GND}}
"""


def test_finite_gain_and_offset_terms_match_the_closed_loop_formulas(tmp_path):
    path = tmp_path / "d.yaml"
    path.write_text(STAGE, encoding="utf-8")
    res = analyse_dc_error(load_design(path), ["OUT"]).nets["OUT"]
    terms = {t.name: t for t in res.terms}
    # closed-loop gain with finite A0: G/(1 + G/A0), S. Franco, "Design with Operational Amplifiers and Analog
    # Integrated Circuits", 4th ed., ch. 1 (from memory); so the gain error is -(G/A0)/(1 + G/A0)
    g, a0 = 10.0, 1000.0
    # (the reference amplifier has A0 × 1e6, so the term is short by G/(A0·1e6) = 1e-8: rel 1e-5 covers it)
    assert terms["U1 finite open-loop gain"].gain_error == pytest.approx(-(g / a0) / (1 + g / a0), rel=1e-5)
    # output offset Vos·G/(1 + G/A0), same source
    assert terms["U1 offset voltage"].offset == pytest.approx(1e-3 * g / (1 + g / a0), rel=1e-6)
    assert res.offset_worst == pytest.approx(1e-3 * g / (1 + g / a0), rel=1e-6)
    # drift: 2 µV/K over 40 K (25 °C to 65 °C) times the gain; RG at 50 ppm/K over 40 K grows by x = 0.2 %, and the
    # gain G(x)/(1 + G(x)/A0) with G(x) = 1 + 9/(1 + x) moves by that much of the ideal span (same formula)
    drift = {t.name: t for t in res.drift_terms}
    assert drift["U1 offset drift"].offset == pytest.approx(2e-6 * 40 * g / (1 + g / a0), rel=1e-6)
    gx = 1 + 9 / (1 + 50e-6 * 40)
    moved = gx / (1 + gx / a0) - g / (1 + g / a0)
    assert drift["RG tempco"].gain_error == pytest.approx(moved / g, rel=1e-6)


def _corner_outputs(loaded, net: str):
    """(our exact worst-case error low/high, ngspice's minimum/maximum error over every corner combination)."""
    ch = find_channels(loaded)[net]
    res = channel_dc_error(loaded, ch, [net])[net]
    effect = {t.name for t in res.terms if max(abs(t.error_low), abs(t.error_high)) > 0 and t.kind != "sensor"}
    ends = [netlist_from_design(loaded, ch.refs, _end_options(loaded, ch, k)) for k in (0, 1)]
    qs = [q for q in quantities(loaded, ends[0])[0] if q.name in effect]
    assert len(qs) <= 10
    nets = []
    for nl in ends:
        nets.append(ideal(nl))
        nets += [perturbed(nl, [(q, s * q.limit) for q, s in zip(qs, signs, strict=True)])
                 for signs in itertools.product((-1.0, 1.0), repeat=len(qs))]
    names = [f"c{i}_{net}" for i in range(len(nets))]
    deck = spice_deck(copies(nets), control=ControlBlock(op_nodes=names))
    text, _ = run_ngspice(deck.text, timeout=600)
    values = parse_print(text)
    v = [values[deck.vector(n)] for n in names]
    half = len(v) // 2
    errors = [x - v[0] for x in v[1:half]] + [x - v[half] for x in v[half + 1:]]
    return res, min(errors), max(errors)


def _check(tmp_path, seed: int, second: bool = False) -> None:
    path, out = write_channel(tmp_path, seed, second=second)
    if second:  # two stages: bias and offset currents left out so the corners stay 2^6 and ngspice quick
        data = yaml.safe_load(path.read_text(encoding="utf-8"))
        for part in data["parts"].values():
            part["bias_current"] = part["offset_current"] = 0.0
        path.write_text(yaml.safe_dump(data), encoding="utf-8")
    res, lo, hi = _corner_outputs(load_design(path), out)
    assert res.corner_low == pytest.approx(lo, rel=1e-3)
    assert res.corner_high == pytest.approx(hi, rel=1e-3)
    # the linear sum stays within the products of tolerances of the exact corner
    assert res.offset_worst >= 0 and max(abs(lo), abs(hi)) > 0


@needs_ngspice
@pytest.mark.ngspice
@pytest.mark.parametrize("seed", [0, 1])
def test_worst_case_equals_the_worst_ngspice_corner(tmp_path, seed):
    _check(tmp_path, seed)


@needs_ngspice
@pytest.mark.ngspice
@pytest.mark.slow
@pytest.mark.parametrize("seed", range(2, 32))
def test_worst_case_equals_the_worst_ngspice_corner_on_many_channels(tmp_path, seed):
    _check(tmp_path, seed)


@needs_ngspice
@pytest.mark.ngspice
@pytest.mark.slow
@pytest.mark.parametrize("seed", range(6))
def test_worst_case_through_two_stages_equals_the_worst_ngspice_corner(tmp_path, seed):
    _check(tmp_path, seed, second=True)
