"""Band gain of a stage whose gain falls across the band: read where results.py says it is read."""

from __future__ import annotations

import math

import pytest

from afecheck.analysis import analyse
from afecheck.model.load import load_design

LOSSY_INTEGRATOR = """
afecheck: 1
name: lossy integrator
parts:
  HI: {gbw: 1 GHz, open_loop_gain: 1e8, output_resistance: 0}
rails: {VP: {voltage: 5 V}, VN: {voltage: -5 V}}
signals:
  IN: {dc: [0, 0], ac_amplitude: 10 mV, band: [1 Hz, 1 kHz]}
components:
  R1: {kind: resistor, value: 10k, pins: {1: IN, 2: INM}}
  RF: {kind: resistor, value: 100M, pins: {1: INM, 2: OUT}}
  CF: {kind: capacitor, value: 100n, pins: {1: INM, 2: OUT}}
  U1: {kind: opamp, part: HI, pins: {in+: GND, in-: INM, out: OUT, v+: VP, v-: VN}}
"""


def test_band_gain_of_a_falling_response_is_read_a_hundredth_below_the_band_top(tmp_path) -> None:
    # results.StageInput.band_gain: the largest |gain| at the band's upper edge, a hundredth of it and their
    # geometric mean. An inverting lossy integrator, |G| = (RF/R1)/√(1 + (2πf·RF·CF)²) (S. Franco, "Design with
    # Operational Amplifiers and Analog Integrated Circuits", 4th ed., ch. 3), falls over all three, so the
    # largest is at 10 Hz: 15.9 (twice that if read at 5 Hz).
    path = tmp_path / "d.yaml"
    path.write_text(LOSSY_INTEGRATOR, encoding="utf-8")
    (stage,) = analyse(load_design(path)).stages
    (inp,) = stage.inputs
    f = 1e3 / 100
    expected = (100e6 / 10e3) / math.sqrt(1 + (2 * math.pi * f * 100e6 * 100e-9) ** 2)
    assert inp.band_gain == pytest.approx(expected, rel=1e-4)
