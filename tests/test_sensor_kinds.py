"""Issue 17's sensor kinds as a user declares them: the schema and docs document each, and the circuits they sit in
(current-source excitation, an RTD in a resistive bridge with 3-wire lead compensation) give the values the
published equations give.

RTD values: IEC 60751:2022 (Callendar-Van Dusen, A = 3.9083e-3, B = -5.775e-7; the table gives Pt100 138.51 Ω at
100 °C). Bridge arithmetic: Kirchhoff's laws on two dividers.
"""

from __future__ import annotations

import io
import json
import re
from pathlib import Path

import pytest
import yaml

from afecheck.analysis import analyse
from afecheck.cli import main
from afecheck.model.load import load_design

ROOT = Path(__file__).resolve().parent.parent
IDEAL = ("  IDEAL: {gbw: 1 MHz, open_loop_gain: 1e9, output_resistance: 0, input_resistance_diff: 1T, "
         "input_resistance_cm: 1T, bias_current: 0, offset_current: 0, offset_voltage: 0}\n")
RAILS = "rails:\n  VREF: {voltage: 2.5 V}\n  VCC: {voltage: 12 V}\n  VEE: {voltage: -12 V}\n"

KIND_FIELDS = {
    "Ntc": {"r25", "beta", "steinhart_hart", "points", "temperature", "dissipation", "tolerance"},
    "Rtd": {"r0", "temperature", "class", "wiring", "lead_resistance", "dissipation"},
    "Thermocouple": {"type", "hot", "cold", "compensated", "cjc_accuracy", "lead_resistance"},
    "Bridge": {"arrangement", "resistance", "sensitivity", "measurand", "unit", "span", "zero_offset"},
}


def test_schema_documents_every_sensor_kind_with_its_fields() -> None:
    out = io.StringIO()
    assert main(["schema"], stdout=out, stderr=io.StringIO()) == 0
    defs = json.loads(out.getvalue())["$defs"]
    for name, fields in KIND_FIELDS.items():
        assert defs[name]["description"], name
        assert fields <= set(defs[name]["properties"]), (name, fields - set(defs[name]["properties"]))
    assert defs["Rtd"]["properties"]["wiring"]["enum"] == ["2-wire", "3-wire", "4-wire"]
    assert set(defs["Thermocouple"]["properties"]["type"]["enum"]) == {"E", "J", "K", "N", "T"}
    assert defs["Bridge"]["properties"]["arrangement"]["enum"] == ["full", "half", "quarter"]


def _format_sensor_examples() -> dict[str, dict]:
    """Every component in the YAML blocks of docs/FORMAT.md's sensor section, by refdes."""
    text = (ROOT / "docs" / "FORMAT.md").read_text(encoding="utf-8")
    section = text.split("#### Sensors", 1)[1].split("\n### ", 1)[0]
    found: dict[str, dict] = {}
    for block in re.findall(r"```yaml\n(.*?)```", section, flags=re.S):
        found.update(yaml.safe_load(block))
    return found


def test_format_md_shows_an_example_of_each_kind_and_each_loads(tmp_path: Path) -> None:
    examples = _format_sensor_examples()
    kinds = {c["kind"] for c in examples.values()}
    assert {"ntc", "rtd", "thermocouple", "bridge"} <= kinds
    assert any("points" in c for c in examples.values()) and any("steinhart_hart" in c for c in examples.values())
    nets = sorted({n for c in examples.values() for n in c["pins"].values()} - {"GND", "VCC"})
    design = {"afecheck": 1, "name": "format examples", "rails": {"VCC": {"voltage": 3.3}},
              "components": examples, "loads": {n: {"resistance": 1e6} for n in nets}}
    path = tmp_path / "examples.yaml"
    path.write_text(yaml.safe_dump(design, allow_unicode=True), encoding="utf-8")
    loaded = load_design(path)
    assert {r for r, c in loaded.sensors.items()} == {r for r, c in examples.items()
                                                      if c["kind"] in ("thermocouple", "bridge")}


def _design(tmp_path: Path, components: str, extra: str = "") -> Path:
    path = tmp_path / "d.yaml"
    path.write_text("afecheck: 1\nname: t\nparts:\n" + IDEAL + RAILS + "components:\n" + components + extra,
                    encoding="utf-8")
    return path


def _cvd(r0: float, t: float) -> float:
    return r0 * (1 + 3.9083e-3 * t - 5.775e-7 * t * t)


def test_rtd_excited_by_a_current_source_reads_i_times_r(tmp_path: Path) -> None:
    # a 1 mA current source (a declared current signal) drives a 4-wire Pt100 through its 5 Ω force lead, drawn
    # as a resistor; a follower reads the sense point at the sensor, so the lead drops out (4-wire)
    parts = ("  RL: {kind: resistor, value: 5, pins: {1: EXC, 2: RTD}}\n"
             "  RT1: {kind: rtd, r0: 100, temperature: [0 °C, 100 °C], class: A, pins: {1: RTD, 2: GND}}\n"
             "  U1: {kind: opamp, part: IDEAL, pins: {in+: RTD, in-: OUT, out: OUT, v+: VCC, v-: VEE}}\n")
    out = analyse(load_design(_design(tmp_path, parts, "signals:\n  EXC: {kind: current, current: [1 mA, 1 mA]}\n")))
    # IEC 60751 table: 100.00 Ω at 0 °C, 138.51 Ω at 100 °C (±0.005 Ω)
    assert out.nets["OUT"].dc_min == pytest.approx(1e-3 * 100.00, abs=1e-3 * 0.005)
    assert out.nets["OUT"].dc_max == pytest.approx(1e-3 * 138.51, abs=1e-3 * 0.005)


@pytest.mark.parametrize("lead", [0.0, 5.0, 20.0])
def test_rtd_in_a_bridge_with_3_wire_leads_cancels_the_lead(tmp_path: Path, lead: float) -> None:
    # Wheatstone bridge from 2.5 V: left half 1 kΩ over the Pt100 (3-wire: one lead in its arm), right half 1 kΩ
    # over 100 Ω plus the twin lead drawn as a resistor in the adjacent arm; each mid-point read by a follower.
    twin = f"  RL: {{kind: resistor, value: {lead if lead else 1e-6}, pins: {{1: RB, 2: GND}}}}\n"
    parts = (f"  RT1: {{kind: rtd, r0: 100, temperature: [0 °C, 100 °C], wiring: 3-wire, lead_resistance: {lead}, "
             "pins: {1: SP, 2: GND}}\n"
             "  R1: {kind: resistor, value: 1k, pins: {1: VREF, 2: SP}}\n"
             "  R2: {kind: resistor, value: 1k, pins: {1: VREF, 2: SN}}\n"
             "  R3: {kind: resistor, value: 100, pins: {1: SN, 2: RB}}\n" + twin +
             "  U1: {kind: opamp, part: IDEAL, pins: {in+: SP, in-: OP, out: OP, v+: VCC, v-: VEE}}\n"
             "  U2: {kind: opamp, part: IDEAL, pins: {in+: SN, in-: ON, out: ON, v+: VCC, v-: VEE}}\n")
    nets = analyse(load_design(_design(tmp_path, parts))).nets
    r_twin = lead if lead else 1e-6
    right = 2.5 * (100.0 + r_twin) / (1100.0 + r_twin)
    for t, end in ((0.0, "dc_min"), (100.0, "dc_max")):
        left = 2.5 * (_cvd(100.0, t) + lead) / (1000.0 + _cvd(100.0, t) + lead)
        assert getattr(nets["OP"], end) == pytest.approx(left, rel=1e-8)
        assert nets["ON"].dc_min == pytest.approx(right, rel=1e-8)
    # at 0 °C the bridge balances whatever the lead resistance: the 3-wire connection's point
    assert nets["OP"].dc_min - nets["ON"].dc_min == pytest.approx(0.0, abs=1e-8)
