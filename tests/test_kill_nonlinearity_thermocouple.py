"""A thermocouple's end-point nonlinearity follows its published E(t) (the curvature of the ITS-90 table), with the
cold junction at the middle of its declared range: checked at the table's 100 °C points."""

from __future__ import annotations

import pytest

from afecheck.analysis.channel import find_channels
from afecheck.analysis.nonlinearity import channel_nonlinearity
from afecheck.model.load import load_design

A0 = 1e5
DESIGN = f"""
afecheck: 1
name: thermocouple straightness
parts:
  P: {{gbw: 1 MHz, open_loop_gain: {A0:g}, output_resistance: 0, input_resistance_diff: 1e15,
       input_resistance_cm: 1e15, offset_voltage: 0, bias_current: 0, offset_current: 0}}
rails: {{VP: {{voltage: 10 V}}, VN: {{voltage: -10 V}}}}
components:
  TC: {{kind: thermocouple, type: K, hot: [0 °C, 400 °C], cold: [20 °C, 30 °C], pins: {{p: S, n: GND}}}}
  U1: {{kind: opamp, part: P, pins: {{in+: S, in-: FB, out: OUT, v+: VP, v-: VN}}}}
  RF: {{kind: resistor, value: 10k, pins: {{1: OUT, 2: FB}}}}
  RG: {{kind: resistor, value: 10k, pins: {{1: FB, 2: GND}}}}
"""
# type K at 0, 100, 200, 300, 400 °C and at 25 °C, reference junction 0 °C (NIST Monograph 175, ITS-90 table for
# type K; from memory, to the table's 1 µV): the cold junction sits at 25 °C, the middle of 20..30 °C
TABLE_MV = [0.0, 4.096, 8.138, 12.209, 16.397]
COLD_MV = 1.000


def test_thermocouple_outputs_and_deviations_follow_the_table(tmp_path):
    path = tmp_path / "d.yaml"
    path.write_text(DESIGN, encoding="utf-8")
    loaded = load_design(path)
    nl = channel_nonlinearity(loaded, find_channels(loaded)["OUT"], ["OUT"])["OUT"]
    gain = 2 * A0 / (A0 + 2)  # non-inverting gain 2 with finite A0 (Franco, "Design with Operational Amplifiers")
    at = {round(p * 400): (o, d) for p, o, d in zip(nl.points, nl.outputs, nl.deviations, strict=True)}
    expected = [gain * (mv - COLD_MV) / 1000 for mv in TABLE_MV]
    chord = [expected[0] + k / 4 * (expected[-1] - expected[0]) for k in range(5)]
    for k in range(5):
        out, dev = at[100 * k]
        assert out == pytest.approx(expected[k], abs=gain * 1.5e-6)
        # the deviation from the straight line through the ends: −0.06 mV at 200 °C, −0.09 mV at 300 °C (× gain)
        assert dev == pytest.approx(expected[k] - chord[k], abs=gain * 3e-6)
    assert nl.over == "TC hot junction 0 to 400 °C" and nl.refs == ("TC",)
    assert nl.worst < -gain * 0.08e-3  # the curve sags below its chord by more than 0.08 mV at 300 °C
