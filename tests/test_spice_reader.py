"""The SPICE netlist reader: what each card becomes, where it is located, and the shipped two-file sample."""

from __future__ import annotations

import io
import json
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest

from afecheck.cli import main
from afecheck.errors import InputError
from afecheck.model.load import load_design

ROOT = Path(__file__).resolve().parent.parent
SAMPLE = ROOT / "sample_designs" / "hive_scale.cir"
SAMPLE_INTENT = ROOT / "sample_designs" / "hive_scale.intent.yaml"
OPX = ".subckt OPX in+ in- out v+ v-\nE1 out 0 in+ in- 1e5\n.ends\n"


def run_cli(*argv: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    code = main(list(argv), out, err)
    return code, out.getvalue(), err.getvalue()


def write(folder: Path, name: str, text: str) -> Path:
    path = folder / name
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text, encoding="utf-8")
    return path


def test_sources_become_rails_signals_and_components(tmp_path: Path) -> None:
    deck = write(tmp_path, "s.cir", "sources\nV1 vdd 0 5\nV2 0 vee 5\nV3 sig 0 DC 1 AC 10m\n"
                 "V4 sin 0 SIN(0.5 0.2 1k)\nV5 a b 0.1\nV6 c d AC 1\nR1 vdd a 1k\nR2 b sig 1k\nR3 c sin 1k\n"
                 "R4 d vee 1k\nR5 a 0 1k\n")
    d = load_design(deck).design
    assert d.rails["vdd"].voltage == 5.0 and d.rails["vee"].voltage == -5.0
    assert d.signals["sig"].dc == (1.0, 1.0) and d.signals["sig"].ac_amplitude == 0.01
    assert d.signals["sin"].dc == (0.5, 0.5) and d.signals["sin"].ac_amplitude == 0.2
    assert d.signals["sin"].band == (1e3, 1e3)
    assert d.components["V5"].kind == "vsource" and d.components["V5"].value == 0.1
    assert d.components["V6"].kind == "signal_source" and d.components["V6"].pins == {"p": "c", "n": "d"}


def test_intent_refines_a_netlist_signal_and_spells_its_nets(tmp_path: Path) -> None:
    deck = write(tmp_path, "s.cir", "t\nVIN In 0 DC 1.2 AC 5m\nVREF ref 0 2.5\nR1 IN ref 10k\n")
    intent = write(tmp_path, "i.yaml", "afecheck-intent: 1\nsignals:\n  IN: {dc: [1 V, 1.4 V], band: [1 Hz, 1 kHz]}\n"
                   "  REF: {dc: [2.4 V, 2.6 V]}\n")
    loaded = load_design(deck, intent=intent)
    d = loaded.design
    assert set(d.signals) == {"IN", "REF"} and "REF" not in d.rails  # declared as a signal: not a rail
    assert d.signals["IN"].dc == (1.0, 1.4) and d.signals["IN"].ac_amplitude == 0.005
    assert d.signals["IN"].band == (1.0, 1e3)
    assert d.components["R1"].pins == {"1": "IN", "2": "REF"}
    assert loaded.position("signals", "IN")[:2] == (str(deck), 2)
    assert loaded.position("signals", "IN", "band")[:2] == (str(intent), 3)


def test_includes_keep_their_own_file_and_line(tmp_path: Path) -> None:
    write(tmp_path, "lib/parts.inc", "* shared parts\nR9 mid 0 {RX}\n.param RX=4.7k\n")
    deck = write(tmp_path, "top.cir", "t\n.include lib/parts.inc\nV1 vcc 0 5\nR1 vcc mid 1k\n")
    loaded = load_design(deck)
    assert loaded.design.components["R9"].value == 4.7e3
    assert loaded.position("components", "R9") == (str(tmp_path / "lib/parts.inc"), 2, 1)
    assert loaded.locate(refs=("R9",)).file == str(tmp_path / "lib/parts.inc")


def test_hierarchy_globals_locals_and_parameters(tmp_path: Path) -> None:
    deck = write(tmp_path, "h.cir", "t\n.global vcc\nV1 vcc 0 5\n.param K=2\n"
                 ".subckt OUTER a b params: r=1k\n.subckt INNER x y\nR1 x y {r*K}\nR2 y vcc 1k\n.ends\n"
                 "X1 a m INNER\nRm m b {r}\n.ends OUTER\n"
                 "XA in out OUTER r=3k\nXB in out OUTER\nRin vcc in 1k\nRout out 0 1k\n")
    d = load_design(deck).design
    assert d.components["XA.X1.R1"].value == 6e3 and d.components["XB.X1.R1"].value == 2e3
    assert d.components["XA.X1.R2"].pins == {"1": "XA.m", "2": "vcc"}
    assert d.components["XA.Rm"].pins == {"1": "XA.m", "2": "out"}


def test_opamp_pins_from_map_glob_and_inference(tmp_path: Path) -> None:
    vendor = ".subckt VND_A1 1 2 3 4 5 6\nQ1 1 2 3 QN\n.ends\n"
    deck = write(tmp_path, "o.cir", "t\nV1 vcc 0 5\nR1 a 0 1k\nR2 a o1 1k\nR3 b 0 1k\nR4 b o2 1k\n" + OPX + vendor +
                 "XU1 0 a o1 vcc 0 OPX\nXU2 0 b vcc 0 o2 vcc VND_A1\n")
    netmap = write(tmp_path, "m.yaml", "afecheck-map: 1\nsubcircuits:\n  opx: {part: AFE-GP1}\n"
                   "  VND_*: {part: AFE-RRIO1, pins: [in+, in-, v+, v-, out, null]}\n")
    loaded = load_design(deck, netlist_map=netmap)
    d = loaded.design
    assert d.components["U1"].part == "AFE-GP1"
    assert d.components["U1"].pins == {"in+": "0", "in-": "a", "out": "o1", "v+": "vcc", "v-": "0"}
    assert d.components["U2"].pins == {"in+": "0", "in-": "b", "v+": "vcc", "v-": "0", "out": "o2"}
    assert loaded.position("components", "U2", "part")[:2] == (str(netmap), 4)


def test_map_refinements_make_an_ntc_and_keep_a_reference_source(tmp_path: Path) -> None:
    deck = write(tmp_path, "n.cir", "t\nVREF ref 0 2.5\nRT1 ref th 10k\nR1 th 0 10k\nC1 th 0 100n\n")
    netmap = write(tmp_path, "m.yaml", "afecheck-map: 1\ncomponents:\n  rt1: {kind: ntc, r25: 10k, beta: 3950 K,"
                   " temperature: [0 °C, 50 °C]}\n  C1: {dielectric: X7R}\n  VREF: {kind: vsource}\n")
    d = load_design(deck, netlist_map=netmap).design
    assert d.components["RT1"].kind == "ntc" and d.components["RT1"].temperature == (0.0, 50.0)
    assert d.components["C1"].dielectric == "X7R"
    assert d.components["VREF"].kind == "vsource" and not d.rails


def test_notes_for_ignored_cards(tmp_path: Path) -> None:
    deck = write(tmp_path, "x.cir", "t\nV1 a 0 PULSE(0 5 1u 1n 1n 1u 2u)\nR1 a 0 1M tc1=0.001\n.model DX D\n"
                 ".control\nrun\n.endc\n.tran 1u 1m\n.end\nR2 this is after the end\n")
    loaded = load_design(deck)
    notes = "\n".join(loaded.notes)
    assert "PULSE waveform is ignored" in notes and "'M' means milli" in notes and "tc1= is read and ignored" in notes
    assert ".model DX" in notes and ".control block" in notes and ".tran (x.cir:8)" in notes
    assert loaded.design.components["R1"].value == pytest.approx(1e-3)


def test_a_card_on_the_title_line_is_noted(tmp_path: Path) -> None:
    deck = write(tmp_path, "t.cir", "R9 a 0 1k\nV1 a 0 1\nR1 a 0 2k\n")
    loaded = load_design(deck)
    assert "R9" not in loaded.design.components and any("line 1 of a SPICE netlist is its title" in n
                                                         for n in loaded.notes)


def test_a_map_with_a_yaml_design_is_refused(tmp_path: Path) -> None:
    netmap = write(tmp_path, "m.yaml", "afecheck-map: 1\n")
    with pytest.raises(InputError, match="applies to SPICE netlist input only"):
        load_design(ROOT / "sample_designs" / "soil_probe_reader.yaml", netlist_map=netmap)


def test_input_format_reads_any_name(tmp_path: Path) -> None:
    deck = write(tmp_path, "export.txt", "t\nV1 a 0 1\nR1 a 0 1k\n")
    code, out, err = run_cli("stages", str(deck), "--input-format", "spice")
    assert code == 0 and "0 op-amp stage" in out, err


# ---- the shipped sample, in every report format --------------------------------------------------------

EXPECTED = {("headroom.input-common-mode", "U1", 10), ("headroom.output-swing", "U1", 10),
            ("distortion.class2-ceramic", "XAAF.C2", 18), ("stability.phase-margin", "XAAF.A", 19),
            ("distortion.input-pair-transition", "XAAF.A", 19)}


def test_sample_findings_point_at_the_netlist_cards() -> None:
    code, out, err = run_cli("check", "--format", "json", str(SAMPLE), "--intent", str(SAMPLE_INTENT))
    assert code == 1, err
    findings = json.loads(out)["findings"]
    on_cards = [f for f in findings if f["refs"] and f["location"]["file"].endswith(".cir")]
    found = {(f["rule"], f["refs"][0], f["location"]["line"]) for f in on_cards}
    assert found == EXPECTED
    (on_intent,) = [f for f in findings if not f["location"]["file"].endswith(".cir")]  # the ADC, declared there
    assert on_intent["rule"] == "adc.anti-alias"
    assert on_intent["location"]["file"].endswith("hive_scale.intent.yaml") and on_intent["location"]["line"] == 18
    lines = SAMPLE.read_text(encoding="utf-8").splitlines()
    assert lines[9].startswith("XU1 ") and lines[17].startswith("C2 ") and lines[18].startswith("XA ")


def test_sample_locations_in_sarif_junit_markdown_and_text() -> None:
    base = [str(SAMPLE), "--intent", str(SAMPLE_INTENT)]
    _, sarif, _ = run_cli("check", "--format", "sarif", *base)
    results = json.loads(sarif)["runs"][0]["results"]
    results = [r for r in results  # the netlist's own cards (intent-file findings point at the intent file)
               if r["locations"][0]["physicalLocation"]["artifactLocation"].get("uri", "").endswith(".cir")]
    places = {(r["ruleId"], r["locations"][0]["physicalLocation"]["region"]["startLine"]) for r in results}
    assert places == {(rule, line) for rule, _, line in EXPECTED}
    uris = {r["locations"][0]["physicalLocation"]["artifactLocation"].get("uri", "") for r in results}
    assert all(u.endswith("hive_scale.cir") for u in uris), uris
    _, junit, _ = run_cli("check", "--format", "junit", *base)
    text = ET.tostring(ET.fromstring(junit), encoding="unicode")
    for _, _, line in EXPECTED:
        assert f"hive_scale.cir:{line}" in text
    for fmt in ("markdown", "text"):
        _, out, _ = run_cli("check", "--format", fmt, *base)
        for _, _, line in EXPECTED:
            assert f"hive_scale.cir:{line}" in out, fmt


def test_map_schema_and_model_accept_the_documented_map() -> None:
    jsonschema = pytest.importorskip("jsonschema")
    import yaml

    from afecheck.commands.schema import schema_for
    from afecheck.model.schema import NetlistMap

    docs = (ROOT / "docs" / "SPICE-IMPORT.md").read_text(encoding="utf-8")
    example = yaml.safe_load(docs.split("```yaml\n", 1)[1].split("```", 1)[0])
    jsonschema.Draft202012Validator(schema_for("map")).validate(example)
    assert NetlistMap.model_validate(example).subcircuits["VENDOR_AMP"].pins[-1] is None
    intent = yaml.safe_load(SAMPLE_INTENT.read_text(encoding="utf-8"))
    jsonschema.Draft202012Validator(schema_for("intent")).validate(intent)
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.Draft202012Validator(schema_for("map")).validate({"afecheck-map": 1, "subcircuits": {"X": {}}})
