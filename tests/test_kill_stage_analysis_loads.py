"""Another op-amp's input capacitance loading a stage's output: the driver's band gain and phase margin against the
loop written out by hand (Black's feedback formula with the output resistance and the load as a divider)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from afecheck.analysis import analyse
from afecheck.model.load import load_design

DESIGN = """
afecheck: 1
name: input capacitance as a load
parts:
  DRV: {gbw: 1 MHz, open_loop_gain: 1e5, second_pole: 1e12, output_resistance: 1k, input_resistance_diff: 1e15,
        input_resistance_cm: 1e15, input_capacitance_diff: 0, input_capacitance_cm: 0, offset_voltage: 0,
        bias_current: 0, offset_current: 0}
  RCV: {gbw: 1 MHz, open_loop_gain: 1e5, second_pole: 1e12, output_resistance: 0, input_resistance_diff: 1e15,
        input_resistance_cm: 1e15, input_capacitance_diff: 0, input_capacitance_cm: 10n, offset_voltage: 0,
        bias_current: 0, offset_current: 0}
rails: {VP: {voltage: 5 V}, VN: {voltage: -5 V}}
signals:
  IN: {dc: [0, 0], ac_amplitude: 1 V, band: [1 kHz, 100 kHz]}
components:
  U1: {kind: opamp, part: DRV, pins: {in+: IN, in-: A, out: A, v+: VP, v-: VN}}
  U2: {kind: opamp, part: RCV, pins: {in+: A, in-: B, out: B, v+: VP, v-: VN}}
"""


def _loop(f: np.ndarray) -> np.ndarray:
    """U1's loop gain: A(jf) = A0/(1 + jf/fp1), fp1 = GBW/A0 = 10 Hz, through Ro = 1 kΩ into U2's Ccm = 10 nF
    (a divider Zc/(Ro + Zc)) and straight back to in− (S. Franco, "Design with Operational Amplifiers and Analog
    Integrated Circuits", 4th ed., ch. 6, from memory: the output resistance and a capacitive load)."""
    a = 1e5 / (1 + 1j * f / 10.0)
    zc = 1 / (2j * math.pi * f * 10e-9)
    return a * zc / (1e3 + zc)


def test_a_downstream_input_capacitance_loads_the_driver(tmp_path):
    path = tmp_path / "d.yaml"
    path.write_text(DESIGN, encoding="utf-8")
    stage = {s.opamp: s for s in analyse(load_design(path)).stages}["U1"]
    assert stage.load_capacitance == pytest.approx(10e-9)
    # closed loop L/(1 + L) (Black); over the band 1..100 kHz its magnitude only rises (the peak lies above the
    # band), so the largest gain in band is at 100 kHz: 2.598 (hand calculation with the loop above)
    f = np.logspace(3, 5, 2001)
    h = np.abs(_loop(f) / (1 + _loop(f)))
    assert np.all(np.diff(h) > 0)
    assert stage.inputs[0].band_gain == pytest.approx(h[-1], rel=1e-6)
    # crossover |L| = 1 and phase margin 180° + arg L there, by bisection on the same loop
    lo, hi = 1e4, 1e7
    for _ in range(200):
        mid = math.sqrt(lo * hi)
        lo, hi = (mid, hi) if abs(_loop(np.array([mid]))[0]) > 1 else (lo, mid)
    fc = math.sqrt(lo * hi)
    assert stage.crossover_hz == pytest.approx(fc, rel=1e-5)
    assert stage.phase_margin_deg == pytest.approx(180 + math.degrees(np.angle(_loop(np.array([fc]))[0])), abs=1e-3)
