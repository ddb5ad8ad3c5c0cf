"""``afecheck stages``: the table, the JSON with every field, and clean errors for bad input."""

from __future__ import annotations

import dataclasses
import io
import json
from pathlib import Path

from afecheck.analysis.results import StageInput, StageResult
from afecheck.cli import main

FIXTURES = Path(__file__).parent / "fixtures" / "stages"


def _run(*argv: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    code = main(list(argv), stdout=out, stderr=err)
    return code, out.getvalue(), err.getvalue()


def test_text_table_lists_every_stage():
    code, out, err = _run("stages", str(FIXTURES / "topologies.yaml"))
    assert code == 0, err
    header = next(line for line in out.splitlines() if line.startswith("op-amp"))
    for col in ("topology", "gain", "NG", "PM deg", "crossover", "Vcm V", "Vout V", "load err"):
        assert col in header
    rows = {line.split()[0]: line.split()[1] for line in out.splitlines()
            if line[:2] in ("UF", "UN", "UI", "US", "UD", "UT", "UG", "UK", "UM", "UC") and "(" not in line}
    assert rows["UN"] == "non-inverting" and rows["UT"] == "transimpedance" and rows["UK"] == "active-filter"
    assert "not evaluated: no DC feedback" in out


def test_text_shows_the_worked_ntc_numbers():
    code, out, _ = _run("stages", str(FIXTURES / "ntc_inverting.yaml"))
    assert code == 0
    # gain -1.3333 at 25 °C (-0.667 V from 0.5 V, common practice) and the loading error span over 0..50 °C
    assert "gain -1.3333" in out
    assert "loading error 20.9..43.5%" in out


def test_json_carries_every_field():
    code, out, err = _run("stages", "--json", str(FIXTURES / "instrumentation.yaml"))
    assert code == 0, err
    data = json.loads(out, parse_constant=lambda c: (_ for _ in ()).throw(ValueError(c)))
    assert data["schema_version"] == 1
    assert [s["opamp"] for s in data["stages"]] == ["UA", "UB", "UC"]
    stage_fields = {f.name for f in dataclasses.fields(StageResult)}
    input_fields = {f.name for f in dataclasses.fields(StageInput)}
    for s in data["stages"]:
        assert set(s) == stage_fields
        for i in s["inputs"]:
            assert set(i) == input_fields
    assert data["stages"][0]["group"] == ["UA", "UB"]
    assert "OUT" in data["nets"]
    # deterministic: the same input gives byte-identical output
    assert _run("stages", "--json", str(FIXTURES / "instrumentation.yaml"))[1] == out


def test_intent_and_parts_options(tmp_path):
    lib = tmp_path / "lib.yaml"
    lib.write_text("afecheck-parts: 1\nparts:\n  LIB-AMP: {gbw: 3 MHz, open_loop_gain: 100 dB, second_pole: 9 MHz}\n",
                   encoding="utf-8")
    design = tmp_path / "d.yaml"
    design.write_text("""afecheck: 1
rails: {VP: {voltage: 5 V}}
components:
  U1: {kind: opamp, part: LIB-AMP, pins: {in+: IN, in-: OUT, out: OUT, v+: VP, v-: GND}}
""", encoding="utf-8")
    intent = tmp_path / "intent.yaml"
    intent.write_text("afecheck-intent: 1\nsignals: {IN: {dc: [1 V, 2 V]}}\nloads: {OUT: {resistance: 10k}}\n",
                      encoding="utf-8")
    code, out, err = _run("stages", "--json", "--parts", str(lib), "--intent", str(intent), str(design))
    assert code == 0, err
    (s,) = json.loads(out)["stages"]
    assert s["part"] == "LIB-AMP" and s["topology"] == "follower"
    assert s["inputs"][0]["source"]["kind"] == "signal"


def test_bad_input_exits_2_without_traceback(tmp_path):
    bad = tmp_path / "bad.yaml"
    bad.write_text("afecheck: 1\ncomponents:\n  R1: {kind: resistor, value: banana, pins: {1: A, 2: B}}\n",
                   encoding="utf-8")
    code, out, err = _run("stages", str(bad))
    assert code == 2
    assert "Traceback" not in err and "R1" in err
    code, _, err = _run("stages", str(tmp_path / "missing.yaml"))
    assert code == 2 and "Traceback" not in err


def test_stages_prints_the_budgets_worksheet_and_its_json_carries_every_contributor():
    import io
    import json

    from afecheck.cli import main

    path = "rules/budgets/offset/bad.yaml"
    out = io.StringIO()
    assert main(["stages", path], stdout=out, stderr=io.StringIO()) == 0
    text = out.getvalue()
    assert "Budgets worksheet" in text and "top: U1 offset voltage 50.9 mV" in text
    assert "budget 5.00 mV (1019 %)" in text
    out = io.StringIO()
    assert main(["stages", "--json", path], stdout=out, stderr=io.StringIO()) == 0
    ws = json.loads(out.getvalue())["worksheet"]
    noise = ws["noise"]["nets"]["OUT"]
    assert len(noise["freqs"]) == len(noise["output_density"]) > 10
    assert {c["name"] for c in noise["contributors"]} >= {"U1 voltage noise", "R1 thermal", "R2 thermal"}
    assert abs(sum(c["share"] for c in noise["contributors"]) - 1) < 1e-9
    terms = {t["name"] for t in ws["dc_error"]["nets"]["OUT"]["terms"]}
    assert {"U1 offset voltage", "R1 tolerance", "U1 finite open-loop gain"} <= terms


def test_stages_shows_nonlinearity_and_its_json_carries_the_swept_points():
    import io
    import json

    from afecheck.cli import main

    path = "rules/budgets/nonlinearity/bad.yaml"
    out = io.StringIO()
    assert main(["stages", path], stdout=out, stderr=io.StringIO()) == 0
    text = out.getvalue()
    # the DC error's three parts, each with its budget where declared
    assert "    offset  " in text and "    gain    " in text
    assert "nonlin  11.2 % of the 2.00 V span (end-point)" in text and "budget 1 % (1125 %)" in text
    assert "swept: NTC1 -20 to 80 °C" in text
    out = io.StringIO()
    assert main(["stages", "--json", path], stdout=out, stderr=io.StringIO()) == 0
    nl = json.loads(out.getvalue())["worksheet"]["dc_error"]["nets"]["OUT"]["nonlinearity"]
    assert len(nl["points"]) == len(nl["outputs"]) == len(nl["deviations"]) >= 17
    assert nl["refs"] == ["NTC1"] and max(map(abs, nl["deviations"])) == abs(nl["worst"])
