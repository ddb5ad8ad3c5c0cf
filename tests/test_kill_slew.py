"""Required slew rate of a stage with a small AC amplitude on a wide DC range: 2π·f·Vpk of the AC part."""

from __future__ import annotations

import math

import pytest

from afecheck.analysis import analyse
from afecheck.model.load import load_design

FOLLOWER = """
afecheck: 1
name: follower, small sine on a wide DC range
parts:
  FAST: {gbw: 100 MHz, open_loop_gain: 1e6, output_resistance: 0}
rails: {VP: {voltage: 5 V}, VN: {voltage: -5 V}}
signals:
  IN: {dc: [-2 V, 2 V], ac_amplitude: 0.5 V, band: [10 Hz, 10 kHz]}
components:
  U1: {kind: opamp, part: FAST, pins: {in+: IN, in-: OUT, out: OUT, v+: VP, v-: VN}}
"""


def test_required_slew_rate_is_two_pi_f_times_the_sine_peak(tmp_path) -> None:
    # a sine of peak Vp at f slews at most 2π·f·Vp (S. Franco, "Design with Operational Amplifiers and Analog
    # Integrated Circuits", 4th ed., ch. 6): 2π·10 kHz·0.5 V = 31.4 V/ms; the ±2 V DC range does not slew
    path = tmp_path / "d.yaml"
    path.write_text(FOLLOWER, encoding="utf-8")
    (stage,) = analyse(load_design(path)).stages
    assert stage.required_slew_rate == pytest.approx(2 * math.pi * 10e3 * 0.5, rel=1e-3)
