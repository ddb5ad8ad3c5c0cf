"""A charge amplifier is its own topology, and a stage that could not be evaluated claims nothing about feedback.

Charge amplifier: the charge lands on the feedback capacitor, Vout = −q/Cf at the virtual ground (common practice;
see Horowitz and Hill, The Art of Electronics, 3rd ed., from memory), so the gain is in V/C.
"""

from __future__ import annotations

import json

import pytest
from tools.crowded import ladder

from afecheck.analysis import analyse
from afecheck.api import check_design
from afecheck.graph.queries import MAX_REGION_PARTS
from afecheck.model.load import load_design

PART = ("{gbw: 10 MHz, open_loop_gain: 1e6, second_pole: 100 MHz, output_resistance: 10, input_resistance_diff: 1e13, "
        "input_resistance_cm: 1e13, input_capacitance_diff: 0, input_capacitance_cm: 0, bias_current: 0, "
        "offset_current: 0, offset_voltage: 0}")


def charge_stage(tmp_path, feedback: str):
    text = f"""afecheck: 1
parts: {{P: {PART}}}
rails:
  VP: {{voltage: 5 V}}
  VN: {{voltage: -5 V}}
components:
  C1: {{kind: capacitor, value: 100p, pins: {{1: Q, 2: OUT}}}}
{feedback}  U1: {{kind: opamp, part: P, pins: {{in+: GND, in-: Q, out: OUT, v+: VP, v-: VN}}}}
signals:
  Q: {{kind: charge, charge: 10 pC, capacitance: 1n, leakage_resistance: 10G, band: [10 Hz, 1 kHz]}}
"""
    path = tmp_path / "q.yaml"
    path.write_text(text, encoding="utf-8")
    return load_design(path)


def test_a_piezo_into_a_feedback_capacitor_is_a_charge_amplifier(tmp_path) -> None:
    loaded = charge_stage(tmp_path, "  R1: {kind: resistor, value: 1G, pins: {1: Q, 2: OUT}}\n")
    (u1,) = analyse(loaded).stages
    assert u1.topology == "charge-amplifier"
    (q,) = u1.inputs
    assert q.gain_unit == "V/C"
    # in band the gain is 1/Cf (the bleed resistor's corner 1/(2π·1G·100p) = 1.6 Hz is below the band)
    assert q.band_gain == pytest.approx(1 / 100e-12, rel=1e-3)
    assert q.gain == pytest.approx(-1 / 100e-12, rel=1e-3)  # an inversion: the charge lands on Cf from in-
    report = check_design(loaded)
    assert not [f for f in report.findings if f.rule.startswith("loading.")]


def test_a_charge_amplifier_without_a_bleed_resistor_is_still_one_and_needs_a_dc_path(tmp_path) -> None:
    loaded = charge_stage(tmp_path, "")
    (u1,) = analyse(loaded).stages
    assert u1.topology == "charge-amplifier" and u1.feedback == "none"
    report = check_design(loaded)
    (f,) = [f for f in report.findings if f.rule == "stability.feedback-sense"]
    assert "C1" in f.message and "resistor or reset switch across C1" in f.fix


def test_a_photodiode_with_resistive_feedback_stays_transimpedance(tmp_path) -> None:
    text = f"""afecheck: 1
parts: {{P: {PART}}}
rails:
  VP: {{voltage: 5 V}}
  VN: {{voltage: -5 V}}
components:
  R1: {{kind: resistor, value: 100k, pins: {{1: PD, 2: OUT}}}}
  C1: {{kind: capacitor, value: 2p, pins: {{1: PD, 2: OUT}}}}
  U1: {{kind: opamp, part: P, pins: {{in+: GND, in-: PD, out: OUT, v+: VP, v-: VN}}}}
signals:
  PD: {{kind: current, current: [0 A, 10 uA], capacitance: 20p, shunt_resistance: 1G}}
"""
    path = tmp_path / "pd.yaml"
    path.write_text(text, encoding="utf-8")
    (u1,) = analyse(load_design(path)).stages
    assert u1.topology == "transimpedance" and u1.inputs[0].gain_unit == "V/A"


def test_a_stage_not_evaluated_claims_no_feedback_and_gets_no_feedback_error(tmp_path) -> None:
    path = tmp_path / "big.json"
    path.write_text(json.dumps(ladder(2, MAX_REGION_PARTS)), encoding="utf-8")
    loaded = load_design(path)
    stages = analyse(loaded).stages
    assert stages and all(s.not_evaluated and s.feedback == "not-evaluated" for s in stages)
    report = check_design(loaded)
    assert not [f for f in report.findings if f.rule == "stability.feedback-sense"]
    assert [f for f in report.findings if f.rule == "coverage.not-evaluated"]
