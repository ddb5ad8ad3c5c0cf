"""Where a stage's figures are read: the high-frequency noise gain a decade above the gain-bandwidth, and a charge
amplifier's gain at 1 kHz when its sensor declares no band; each against the feedback network's own impedance."""

from __future__ import annotations

import math

import pytest

from afecheck.analysis import analyse
from afecheck.model.load import load_design

PART = """
parts:
  P:
    gbw: {gbw}
    open_loop_gain: 1e5
    second_pole: {pole2}
    output_resistance: 0
    input_resistance_diff: 1e15
    input_resistance_cm: 1e15
    input_capacitance_diff: 0
    input_capacitance_cm: 0
    offset_voltage: 0
    bias_current: 0
    offset_current: 0
rails: {{VP: {{voltage: 5 V}}, VN: {{voltage: -5 V}}}}
"""


def _stage(tmp_path, body: str, gbw: str = "1 MHz", pole2: str = "500 kHz"):
    path = tmp_path / "d.yaml"
    path.write_text("afecheck: 1\nname: probe points\n" + PART.format(gbw=gbw, pole2=pole2) + body, encoding="utf-8")
    (stage,) = analyse(load_design(path)).stages
    return stage


def test_high_frequency_noise_gain_is_read_a_decade_above_the_gain_bandwidth(tmp_path):
    # Non-inverting, RF = 9 kΩ with CF across it, RG = 1 kΩ: the noise gain 1/β = 1 + ZF/RG (S. Franco, "Design
    # with Operational Amplifiers and Analog Integrated Circuits", 4th ed., ch. 6, from memory), ZF = RF/(1 + jf/fz).
    # CF puts fz at 10 MHz, ten times the 1 MHz gain-bandwidth (above the 500 kHz second pole) where the figure is
    # read: there ZF = 9k/(1 + j) and
    # |1 + 4.5·(1 − j)| = √(5.5² + 4.5²) = 7.106 (hand calculation); at DC the noise gain is 10.
    cf = 1 / (2 * math.pi * 9e3 * 10e6)
    stage = _stage(tmp_path, f"""signals: {{IN: {{dc: [0, 0.1 V]}}}}
components:
  U1: {{kind: opamp, part: P, pins: {{in+: IN, in-: FB, out: OUT, v+: VP, v-: VN}}}}
  RF: {{kind: resistor, value: 9k, pins: {{1: OUT, 2: FB}}}}
  CF: {{kind: capacitor, value: {cf!r}, pins: {{1: OUT, 2: FB}}}}
  RG: {{kind: resistor, value: 1k, pins: {{1: FB, 2: GND}}}}
""")
    assert stage.noise_gain_dc == pytest.approx(10.0, rel=1e-6)
    assert stage.noise_gain_hf == pytest.approx(math.hypot(5.5, 4.5), rel=1e-6)


def test_charge_amplifier_without_a_band_is_read_at_1_khz(tmp_path):
    # Charge amplifier: the sensor's charge into the virtual ground, CF = 100 pF with a bleed RF across it whose
    # corner 1/(2π·RF·CF) is exactly 1 kHz. V/Q = jω·ZF = jωRF/(1 + jωRF·CF) (the charge amplifier's transfer,
    # Franco as above), so at 1 kHz |V/Q| = (1/CF)/√2 = 7.071e9 V/C (hand calculation); the gain is read at 1 kHz
    # when the sensor declares no band (it has none at DC).
    rf = 1 / (2 * math.pi * 1e3 * 100e-12)
    stage = _stage(tmp_path, f"""signals: {{KNOCK: {{kind: charge, charge: 10 pC, capacitance: 1n}}}}
components:
  U1: {{kind: opamp, part: P, pins: {{in+: GND, in-: KNOCK, out: OUT, v+: VP, v-: VN}}}}
  CF: {{kind: capacitor, value: 100p, pins: {{1: OUT, 2: KNOCK}}}}
  RF: {{kind: resistor, value: {rf!r}, pins: {{1: OUT, 2: KNOCK}}}}
""", gbw="10 GHz", pole2="1e12")
    (inp,) = stage.inputs
    assert inp.gain_unit == "V/C"
    # a 10 GHz part keeps its full A0 = 1e5 at 1 kHz: loop gain 1e5/11 (noise gain 1 + 1 nF/100 pF), so the gain
    # is within 11/1e5 = 1.1e-4 of ideal; read at 2 kHz instead it would be 2/√5 of 1/CF, 26 % higher
    assert inp.gain == pytest.approx(-1e10 / math.sqrt(2), rel=2e-4)


def test_charge_amplifier_band_gain_over_a_band_ending_at_1_hz(tmp_path):
    # The same charge amplifier (bleed corner 1 kHz) over a declared band of 0.1..1 Hz: |V/Q| = ωRF/√(1 + (ωRF·CF)²)
    # rises across the band, so the band's largest gain is at 1 Hz: (1/CF)·(1 Hz/1 kHz)/√(1 + 1e-6) ≈ 1.0e7 V/C
    # (hand calculation, Franco as above); a band ending at exactly 1 Hz is a band like any other
    rf = 1 / (2 * math.pi * 1e3 * 100e-12)
    stage = _stage(tmp_path, f"""signals:
  KNOCK: {{kind: charge, charge: 10 pC, capacitance: 1n, band: [0.1 Hz, 1 Hz]}}
components:
  U1: {{kind: opamp, part: P, pins: {{in+: GND, in-: KNOCK, out: OUT, v+: VP, v-: VN}}}}
  CF: {{kind: capacitor, value: 100p, pins: {{1: OUT, 2: KNOCK}}}}
  RF: {{kind: resistor, value: {rf!r}, pins: {{1: OUT, 2: KNOCK}}}}
""", gbw="10 GHz", pole2="1e12")
    (inp,) = stage.inputs
    assert inp.band_gain == pytest.approx(1e10 * 1e-3 / math.sqrt(1 + 1e-6), rel=2e-4)
