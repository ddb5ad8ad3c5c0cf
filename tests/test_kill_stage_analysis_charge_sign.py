"""A charge amplifier inverts: its gain in V/C is about −1/Cf whether or not the charge signal declares how much
charge it delivers (the sign once came from the AC solution kept only for signals with an amplitude)."""

from __future__ import annotations

import math

import pytest

from afecheck.analysis import analyse
from afecheck.model.load import load_design
from tests.hand_part import template_part

DESIGN = """
afecheck: 1
name: charge amplifier
parts:
""" + template_part("P") + """
rails: {{VP: {{voltage: 5 V}}, VN: {{voltage: -5 V}}}}
signals:
  KN: {{kind: charge, {charge}capacitance: 1n, leakage_resistance: 10G, band: [10 Hz, 1 kHz]}}
components:
  CF: {{kind: capacitor, value: 100p, pins: {{1: KN, 2: OUT}}}}
  RB: {{kind: resistor, value: 1G, pins: {{1: KN, 2: OUT}}}}
  U1: {{kind: opamp, part: P, pins: {{in+: GND, in-: KN, out: OUT, v+: VP, v-: VN}}}}
loads: {{OUT: {{resistance: 10k}}}}
"""


def _per_volt(f: float) -> complex:
    """Vout per volt of the charge's Thevenin source (q/Cs behind Cs = 1 nF), inverting amplifier with Zi = 1/(jωCs),
    Zf = RB ∥ CF and the 10 GΩ leakage from in− to ground: H = −(Zf/Zi)/(1 + NG/A), NG = 1 + Zf/(Zi ∥ RL),
    A = A0/((1 + jf/fp1)(1 + jf/fp2)) (the inverting amplifier with finite open-loop gain; S. Franco, "Design with
    Operational Amplifiers and Analog Integrated Circuits", 4th ed., ch. 1, from memory)."""
    s = 2j * math.pi * f
    zi = 1 / (s * 1e-9)
    zf = 1e9 / (1 + s * 1e9 * 100e-12)
    zg = zi * 10e9 / (zi + 10e9)
    a = 1e5 / ((1 + s / (2 * math.pi * 10.0)) * (1 + s / (2 * math.pi * 1e12)))
    return -(zf / zi) / (1 + (1 + zf / zg) / a)


@pytest.mark.parametrize("charge", ["charge: 10 pC, ", ""])
def test_a_charge_amplifier_gain_is_negative(tmp_path, charge):
    path = tmp_path / "d.yaml"
    path.write_text(DESIGN.format(charge=charge), encoding="utf-8")
    (kn,) = analyse(load_design(path)).stages[0].inputs
    # the largest |H| over the band's three points (1 kHz, 100 Hz, 10 Hz), per coulomb: |H|/Cs, signed by the
    # inversion mid-band (arg H = 180° there)
    peak = max(abs(_per_volt(f)) for f in (10.0, 100.0, 1e3))
    assert _per_volt(100.0).real < 0
    assert kn.gain_unit == "V/C"
    assert kn.gain == pytest.approx(-peak / 1e-9, rel=1e-6)
    assert kn.band_gain == pytest.approx(peak / 1e-9, rel=1e-6)
