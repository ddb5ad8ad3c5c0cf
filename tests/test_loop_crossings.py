"""Loop crossings found between grid points and above the old sweep top (issue: exact worst cases, description 4).

The expected crossings come from the loop gain written out in closed form in the test (a single- or two-pole
op-amp A(jf) = A0/((1 + jf/fp1)(1 + jf/fp2)) times the feedback network's transfer, the network solved here by
Kirchhoff's current law with numpy), sampled densely and refined by bisection: nothing of afecheck's solver or
grid is used for the reference.
"""

from __future__ import annotations

import numpy as np
import pytest
from ngspice_harness import opamp_elements

from afecheck.analysis.loop import default_loop_grid, loop_gain
from afecheck.analysis.netlist import Capacitor, Netlist, Resistor

R, C = 10e3, 15.915e-9  # twin-T notch near 1 kHz
DETUNE = 2e-4  # the shunt resistor 0.02 % off R/2: the notch stays finite, so the phase turns smoothly
A0, FP1 = 1e6, 10.0


def twin_t(f: np.ndarray) -> np.ndarray:
    """Voltage transfer of the unloaded twin-T from OUT to N (nodal analysis of its three inner nodes)."""
    w = 2j * np.pi * f
    g, g3 = 1 / R, 1 / (R / 2 * (1 + DETUNE))
    y = np.zeros((f.size, 3, 3), complex)
    b = np.zeros((f.size, 3), complex)
    y[:, 0, 0], y[:, 0, 2], b[:, 0] = 2 * g + w * 2 * C, -g, g  # A: R1 from OUT, R2 to N, 2C to ground
    y[:, 1, 1], y[:, 1, 2], b[:, 1] = 2 * w * C + g3, -w * C, w * C  # B: C1 from OUT, C2 to N, R/2 to ground
    y[:, 2, 2], y[:, 2, 0], y[:, 2, 1] = g + w * C, -g, -w * C  # N: R2 and C2 only (ideal op-amp input)
    return np.linalg.solve(y, b[..., None])[:, 2, 0]


def notch_loop(f: np.ndarray) -> np.ndarray:
    return A0 / (1 + 1j * f / FP1) * twin_t(f)


def bisect(h, lo: float, hi: float) -> float:
    """Root of h between lo and hi (sign change), in log frequency, to 1e-12 relative."""
    a, b = np.log(lo), np.log(hi)
    ha = h(np.exp(a))
    for _ in range(80):
        m = 0.5 * (a + b)
        hm = h(np.exp(m))
        if np.sign(hm) == np.sign(ha):
            a, ha = m, hm
        else:
            b = m
    return float(np.exp(0.5 * (a + b)))


def test_a_notch_that_dips_through_unity_between_grid_points_is_found() -> None:
    els, inst = opamp_elements("U1", "0", "N", "OUT", a0=A0, gbw=A0 * FP1)
    net = Netlist(els + (Resistor("R1", "OUT", "A", R), Resistor("R2", "A", "N", R), Capacitor("C3", "A", "0", 2 * C),
                         Capacitor("C1", "OUT", "B", C), Capacitor("C2", "B", "N", C),
                         Resistor("R3", "B", "0", R / 2 * (1 + DETUNE))), {"U1": inst})
    grid = default_loop_grid(inst)
    near = grid[(grid > 500) & (grid < 2000)]  # the grid itself never sees |T| < 1 near the notch
    assert np.all(np.abs(notch_loop(near)) > 1.0)
    # reference: the dense closed form, both edges of the dip refined by bisection
    f = np.logspace(np.log10(990.0), np.log10(1010.0), 400001)
    mag = np.abs(notch_loop(f))
    edges = np.nonzero((mag[:-1] > 1) != (mag[1:] > 1))[0]
    assert len(edges) == 2
    roots = [bisect(lambda x: np.log(np.abs(notch_loop(np.atleast_1d(x))))[0], f[i], f[i + 1]) for i in edges]
    lg = loop_gain(net, "U1")
    found = [x for x in lg.crossovers_hz if 990 < x < 1010]
    assert found == [pytest.approx(roots[0], rel=1e-6), pytest.approx(roots[1], rel=1e-6)]
    # the phase margins there, from the closed form (wrapped to one turn: the unwrapping branch is a convention)
    for fx, pm in zip(lg.crossovers_hz, lg.phase_margins_deg, strict=True):
        if 990 < fx < 1010:
            theirs = 180.0 + np.degrees(np.angle(notch_loop(np.array([fx]))[0]))
            assert (pm - theirs + 180.0) % 360.0 - 180.0 == pytest.approx(0.0, abs=1e-3)
    # the stage is only as stable as its worst crossing: it is one of the notch edges, not the final crossover
    worst = min(range(len(lg.phase_margins_deg)), key=lg.phase_margins_deg.__getitem__)
    assert 990 < lg.crossovers_hz[worst] < 1010


def test_gain_margin_above_the_old_sweep_top_is_found() -> None:
    # a follower whose third pole (Ro with a tiny load capacitance) is far above the old sweep top
    ro, c_load, f2 = 50.0, 1 / (2 * np.pi * 50.0 * 1e12), 20e6
    els, inst = opamp_elements("U1", "0", "OUT", "OUT", a0=1e5, gbw=1e7, f2=f2, ro=ro)
    net = Netlist(els + (Capacitor("CL", "OUT", "0", c_load),), {"U1": inst})

    def t(f):
        f = np.atleast_1d(f)
        return 1e5 / ((1 + 1j * f / 100.0) * (1 + 1j * f / f2) * (1 + 1j * f / 1e12))

    def phase_plus_180(f):
        # unwrapped: the three lags add, each atan(f/fp)
        return 180.0 - np.degrees(np.arctan(f / 100.0) + np.arctan(f / f2) + np.arctan(f / 1e12))

    f180 = bisect(lambda x: phase_plus_180(x), 1e8, 1e11)
    assert f180 > default_loop_grid(inst)[-1]  # beyond where the sweep used to stop
    gm_db = -20 * np.log10(abs(t(f180)[0]))
    lg = loop_gain(net, "U1")
    assert lg.phase_crossover_hz == pytest.approx(f180, rel=1e-6)
    assert lg.gain_margin_db == pytest.approx(gm_db, abs=1e-4)
    assert lg.gain_margin_db > 90.0
