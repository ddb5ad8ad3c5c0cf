"""DC ranges of nets no stage solves: a resistive divider and a thermistor divider left on their own, by hand."""

from __future__ import annotations

import math

import pytest

from afecheck.analysis import analyse
from afecheck.model.load import load_design

DESIGN = """
afecheck: 1
name: leftover dividers
parts:
  P: {gbw: 1 MHz, open_loop_gain: 1e5, offset_voltage: 0, bias_current: 0, offset_current: 0}
rails: {VCC: {voltage: 5 V, tolerance: 5%}, VEE: {voltage: -5 V}}
signals:
  IN: {dc: [0, 1 V]}
components:
  U1: {kind: opamp, part: P, pins: {in+: IN, in-: OUT, out: OUT, v+: VCC, v-: VEE}}
  R1: {kind: resistor, value: 30k, pins: {1: VCC, 2: MID}}
  R2: {kind: resistor, value: 10k, pins: {1: MID, 2: GND}}
  RT1: {kind: ntc, r25: 10k, beta: 3950 K, temperature: [0 °C, 50 °C], pins: {1: TH, 2: GND}}
  R5: {kind: resistor, value: 10k, pins: {1: VCC, 2: TH}}
"""


def test_dividers_no_stage_solves_get_their_range(tmp_path):
    path = tmp_path / "d.yaml"
    path.write_text(DESIGN, encoding="utf-8")
    nets = analyse(load_design(path)).nets
    # 30 kΩ over 10 kΩ from VCC = 5 V ± 5 %: a quarter of 4.75..5.25 V (Ohm, hand calculation)
    assert (nets["MID"].dc_min, nets["MID"].dc_max) == (pytest.approx(1.1875), pytest.approx(1.3125))
    # 10 kΩ over an NTC (Beta model, IEC 60539-1) on 0..50 °C: lowest at 50 °C with VCC low, highest at 0 °C with
    # VCC high: V = VCC·R/(10k + R) (hand calculation)
    r50 = 10e3 * math.exp(3950 * (1 / 323.15 - 1 / 298.15))
    r0 = 10e3 * math.exp(3950 * (1 / 273.15 - 1 / 298.15))
    assert nets["TH"].dc_min == pytest.approx(4.75 * r50 / (10e3 + r50), rel=1e-9)
    assert nets["TH"].dc_max == pytest.approx(5.25 * r0 / (10e3 + r0), rel=1e-9)
