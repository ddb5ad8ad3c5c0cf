"""SARIF of many designs against the official schema: generated rack designs varied at random (values, parts,
follower stages, awkward and duplicated names, several designs per run with the same name) and the fuzz
generators' designs, every report validated with the OASIS SARIF 2.1.0 JSON schema (tests/schemas/).

The schema is the outside reference: [OASIS SARIF 2.1.0 errata 01] sarif-schema-2.1.0.json, draft-04.
"""

from __future__ import annotations

import datetime as dt
import json
import random
import tempfile
from pathlib import Path
from typing import Any

import jsonschema
import pytest
import yaml
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from tools.fuzzing import mutated_samples, random_designs
from tools.generate import _jsonable, generate_design

from afecheck.api import review_files
from afecheck.engine.finding import Finding, Location, Severity
from afecheck.errors import InputError
from afecheck.report import render
from afecheck.report.data import DesignResult, Entry, Report

SCHEMA = Path(__file__).parent / "schemas" / "sarif-schema-2.1.0.json"
VALIDATOR = jsonschema.Draft4Validator(json.loads(SCHEMA.read_text(encoding="utf-8")))
TODAY = dt.date(2026, 12, 2)
PARTS = ("AFE-GP1", "AFE-PREC1", "AFE-RRIO1", "AFE-JFET1", "AFE-HS1", "AFE-DECOMP5")
ODD_NETS = ("Ω-net", "a b", "网", "50%/x", "#1", 'q"uote', "<tag>", "back\\slash", "x" * 120)
VALUES = ("47", "470", "1k", "4k7", "10k", "100k", "1M", "10M")


def _sarif_problems(log: dict[str, Any]) -> list[str]:
    """Schema errors, plus the index links the schema cannot see (ruleIndex, artifact index)."""
    problems = [f"{'/'.join(map(str, e.absolute_path))}: {e.message}"[:300] for e in VALIDATOR.iter_errors(log)]
    run = log["runs"][0]
    rules, artifacts = run["tool"]["driver"]["rules"], run.get("artifacts", [])
    for r in run["results"]:
        if rules[r["ruleIndex"]]["id"] != r["ruleId"]:
            problems.append(f"ruleIndex of {r['ruleId']} points at {rules[r['ruleIndex']]['id']}")
        for loc in r["locations"]:
            art = loc.get("physicalLocation", {}).get("artifactLocation")
            if art and artifacts[art["index"]]["location"]["uri"] != art["uri"]:
                problems.append(f"artifact index {art['index']} is not {art['uri']}")
    return problems


def _rename_net(data: dict, old: str, new: str) -> None:
    for comp in data["components"].values():
        comp["pins"] = {p: new if n == old else n for p, n in comp["pins"].items()}
    for section in ("signals", "loads"):
        if old in data.get(section, {}):
            data[section][new] = data[section].pop(old)


def _variant(rng: random.Random, index: int) -> dict:
    """A generated rack design with a few changes that mostly keep it valid but change what the rules find."""
    data = generate_design(rng.choice((1, 1, 2, 3)), name=f"corpus rack {index % 7}")  # names repeat across files
    comps = data["components"]
    for _ in range(rng.randint(1, 5)):
        op = rng.randrange(6)
        ref = rng.choice(sorted(comps))
        comp = comps[ref]
        if op == 0 and comp["kind"] == "resistor":
            comp["value"] = rng.choice(VALUES)
        elif op == 1 and comp["kind"] == "opamp":
            comp["part"] = rng.choice(PARTS)
        elif op == 2 and comp["kind"] == "opamp":  # a follower: its output and inverting input one net, named twice
            _rename_net(data, comp["pins"]["in-"], comp["pins"]["out"])
        elif op == 3:
            nets = sorted({n for c in comps.values() for n in c["pins"].values()} - {"GND", "VCC", "VREF"})
            taken = set(comps) | {n for c in comps.values() for n in c["pins"].values()}
            new = rng.choice([*ODD_NETS, *sorted(comps)])  # a net may share its name with a part
            if nets and new not in taken:
                _rename_net(data, rng.choice(nets), new)
        elif op == 4:
            data["rails"]["VCC"]["voltage"] = rng.choice(("3.3 V", "5 V", "2.7 V", "12 V"))
        elif op == 5 and data["signals"]:
            sig = data["signals"][rng.choice(sorted(data["signals"]))]
            sig["ac_amplitude"] = rng.choice(("1 mV", "100 mV", "1 V", "2 V"))
    return data


def _review(folder: Path, designs: list[tuple[str, str]]) -> Report | None:
    paths = []
    for i, (text, suffix) in enumerate(designs):
        path = folder / f"d{i}{suffix}"
        path.write_text(text, encoding="utf-8", errors="surrogatepass")
        paths.append(path)
    try:
        return review_files(paths, today=TODAY, discover=False)
    except InputError:
        return None


def _corpus(count: int, seed: int) -> tuple[int, int]:
    """Review ``count`` varied designs in runs of one to three; return (runs with a report, results seen)."""
    rng = random.Random(seed)
    reports = results = 0
    with tempfile.TemporaryDirectory(prefix="afesarif-") as tmp:
        done = 0
        while done < count:
            batch = []
            for _ in range(min(rng.randint(1, 3), count - done)):
                data = _jsonable(_variant(rng, done))
                as_json = rng.random() < 0.5
                batch.append((json.dumps(data), ".json") if as_json else
                             (yaml.safe_dump(data, allow_unicode=True, sort_keys=False), ".yaml"))
                done += 1
            run_dir = Path(tmp) / str(done)
            run_dir.mkdir()
            report = _review(run_dir, batch)
            if report is None:
                continue
            log = json.loads(render(report, "sarif"))
            problems = _sarif_problems(log)
            assert not problems, (batch, problems[:3])
            reports += 1
            results += len(log["runs"][0]["results"])
    return reports, results


def test_sarif_of_a_generated_corpus_is_valid():
    reports, results = _corpus(24, seed=20261203)
    assert reports >= 10 and results >= 25, (reports, results)  # the corpus really exercised the reporter


@pytest.mark.slow
def test_sarif_of_a_large_generated_corpus_is_valid():
    reports, results = _corpus(250, seed=7)
    assert reports >= 80 and results >= 200, (reports, results)  # seed 7 gives 115 and 291


def _fuzz_sarif(case: tuple[str, str]) -> None:
    with tempfile.TemporaryDirectory(prefix="afesarif-") as tmp:
        report = _review(Path(tmp), [case])
        if report is not None:
            problems = _sarif_problems(json.loads(render(report, "sarif")))
            assert not problems, (case, problems[:3])


@settings(max_examples=20, deadline=None, database=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.one_of(mutated_samples(), random_designs()))
def test_sarif_of_fuzzed_designs_is_valid(case):
    _fuzz_sarif(case)


@pytest.mark.slow
@settings(max_examples=200, deadline=None, database=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.one_of(mutated_samples(), random_designs()))
def test_sarif_of_many_fuzzed_designs_is_valid(case):
    _fuzz_sarif(case)


def test_a_net_named_twice_is_one_logical_location():
    loc = Location(file="d.yaml", line=3, refs=("U1", "U1"), nets=("OUT", "OUT", "U1"), pins=("U1.out", "U1.out"))
    finding = Finding("TST201", "follower-thing", Severity.ERROR, "U1 drives OUT", loc, design="d")
    report = Report(designs=(DesignResult("d.yaml", "d", (), (Entry(finding, "open", "U1"),), ("U1",)),),
                    rules=())
    log = json.loads(render(report, "sarif"))
    assert _sarif_problems(log) == []
    (result,) = log["runs"][0]["results"]
    assert result["locations"][0]["logicalLocations"] == [
        {"name": "U1", "kind": "component"}, {"name": "OUT", "kind": "net"}, {"name": "U1", "kind": "net"},
        {"name": "U1.out", "kind": "pin"}]


def test_two_spellings_of_one_file_are_one_artifact():
    findings = [Finding("TST201", "x", Severity.WARNING, "m", Location(file=f, line=1), design="d")
                for f in ("a.yaml", "./a.yaml")]
    report = Report(designs=(DesignResult("a.yaml", "d", (), tuple(Entry(f, "open") for f in findings), ()),),
                    rules=())
    log = json.loads(render(report, "sarif"))
    assert _sarif_problems(log) == []
    assert [a["location"]["uri"] for a in log["runs"][0]["artifacts"]] == ["a.yaml"]
