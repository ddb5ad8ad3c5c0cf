"""A thermistor's own thermal noise, against Johnson-Nyquist at the temperature the analysis documents for it."""

from __future__ import annotations

import math

import pytest

from afecheck.analysis.noise import BOLTZMANN, analyse_noise
from afecheck.model.load import load_design

NTC_DIVIDER = """
afecheck: 1
name: thermistor divider noise
operating_temperature: [-40 °C, 85 °C]
parts:
  QUIET:
    gbw: 1 THz
    open_loop_gain: 1e9
    second_pole: 1e15
    output_resistance: 0
    input_resistance_diff: 1e15
    input_resistance_cm: 1e15
    input_capacitance_diff: 0
    input_capacitance_cm: 0
    voltage_noise: 0
    voltage_noise_corner: 0
    current_noise: 0
    current_noise_corner: 0
rails: {VREF: {voltage: 2.5 V}, VP: {voltage: 5 V}, VN: {voltage: -5 V}}
components:
  RT1: {kind: ntc, r25: 10k, beta: 3950 K, temperature: [0 °C, 50 °C], pins: {1: VREF, 2: TH}}
  R1: {kind: resistor, value: 10k, pins: {1: TH, 2: GND}}
  U1: {kind: opamp, part: QUIET, pins: {in+: TH, in-: OUT, out: OUT, v+: VP, v-: VN}}
loads:
  OUT: {resistance: 10k, adc: {full_scale: 5 V, bits: 12, sample_rate: 2 kHz}}
"""


def test_thermistor_noise_is_johnson_at_the_middle_of_its_own_range(tmp_path) -> None:
    # noise.py's documented temperatures: a thermistor at the middle of its declared range (25 °C here, where it
    # is exactly r25 = 10 kΩ), the fixed resistor at the top of the design's operating range (85 °C). Each is a
    # Johnson-Nyquist source √(4kTR) (Johnson 1928; Nyquist 1928) divided by the other resistor: at TH each
    # reaches the follower through R_other/(R_ntc + R_other) = 1/2.
    path = tmp_path / "d.yaml"
    path.write_text(NTC_DIVIDER, encoding="utf-8")
    res = analyse_noise(load_design(path), ["OUT"]).nets["OUT"]
    by = {c.name: c for c in res.contributors}
    ntc = math.sqrt(4 * BOLTZMANN * (25.0 + 273.15) * 10e3) / 2
    fixed = math.sqrt(4 * BOLTZMANN * (85.0 + 273.15) * 10e3) / 2
    assert by["RT1 thermal"].output_density_top == pytest.approx(ntc, rel=1e-6)
    assert by["R1 thermal"].output_density_top == pytest.approx(fixed, rel=1e-6)
