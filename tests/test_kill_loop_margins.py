"""Gain margin of a loop that crosses unity three times (a twin-T notch in the feedback, then the final crossover)
before its phase crosses −180°: the margin must be read at the phase crossing, not at any magnitude crossing.
Reference: the loop written out here by nodal analysis (Kirchhoff's current law with numpy) and bisection, nothing
of afecheck's solver or grid."""

from __future__ import annotations

import numpy as np
import pytest
from ngspice_harness import opamp_elements
from test_loop_crossings import A0, DETUNE, FP1, C, R, bisect

from afecheck.analysis.loop import loop_gain
from afecheck.analysis.netlist import Capacitor, Netlist, Resistor

F2, RO, CL = 20e6, 200.0, 100e-12  # second pole, output resistance and a load capacitor: a third lag near 8 MHz


def loaded_notch_loop(f: np.ndarray) -> np.ndarray:
    """A(jf) = A0/((1 + jf/fp1)(1 + jf/f2)) times v(N)/v(internal): Ro into OUT (loaded by CL and the twin-T),
    through the twin-T to N (nodes OUT, A, B, N)."""
    w = 2j * np.pi * f
    g, g3, go = 1 / R, 1 / (R / 2 * (1 + DETUNE)), 1 / RO
    y = np.zeros((f.size, 4, 4), complex)
    b = np.zeros((f.size, 4), complex)
    y[:, 0, 0], y[:, 0, 1], y[:, 0, 2], b[:, 0] = go + g + w * C + w * CL, -g, -w * C, go
    y[:, 1, 1], y[:, 1, 0], y[:, 1, 3] = 2 * g + 2 * w * C, -g, -g
    y[:, 2, 2], y[:, 2, 0], y[:, 2, 3] = 2 * w * C + g3, -w * C, -w * C
    y[:, 3, 3], y[:, 3, 1], y[:, 3, 2] = g + w * C, -g, -w * C
    h = np.linalg.solve(y, b[..., None])[:, 3, 0]
    return A0 / ((1 + 1j * f / FP1) * (1 + 1j * f / F2)) * h


def test_gain_margin_is_read_at_the_phase_crossing_after_three_unity_crossings() -> None:
    els, inst = opamp_elements("U1", "0", "N", "OUT", a0=A0, gbw=A0 * FP1, f2=F2, ro=RO)
    net = Netlist(els + (Resistor("R1", "OUT", "A", R), Resistor("R2", "A", "N", R), Capacitor("C3", "A", "0", 2 * C),
                         Capacitor("C1", "OUT", "B", C), Capacitor("C2", "B", "N", C),
                         Resistor("R3", "B", "0", R / 2 * (1 + DETUNE)), Capacitor("CL", "OUT", "0", CL)),
                  {"U1": inst})
    lg = loop_gain(net, "U1")
    assert len(lg.crossovers_hz) == 3  # both notch edges and the final crossover
    # the phase crossing: T real and negative, found where Im T changes sign between 5 and 50 MHz
    f180 = bisect(lambda x: np.imag(loaded_notch_loop(np.atleast_1d(x)))[0], 5e6, 50e6)
    t180 = loaded_notch_loop(np.array([f180]))[0]
    assert t180.real < 0
    assert lg.phase_crossover_hz == pytest.approx(f180, rel=1e-6)
    assert lg.gain_margin_db == pytest.approx(-20 * np.log10(abs(t180)), abs=1e-4)
    assert lg.gain_margin_db == pytest.approx(9.80, abs=0.01)
