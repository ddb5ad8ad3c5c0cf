"""The loop-gain sweep's extension past the default grid's top, by hand: a decade at a time at the grid's own
12 points a decade, until |T| is under -100 dB with the phase settled (loop.py's documented stopping rule)."""

from __future__ import annotations

import numpy as np
import pytest
from ngspice_harness import opamp_elements

from afecheck.analysis.loop import SETTLED_MAGNITUDE, default_loop_grid, loop_gain
from afecheck.analysis.netlist import Netlist, Resistor


def test_the_sweep_grows_a_decade_at_a_time_at_the_grids_own_density_until_the_loop_has_settled() -> None:
    # A single-pole part (A0 = 1e5, GBW = 1 MHz, so fp1 = 10 Hz) in a gain-of-two non-inverting stage: β = 1/2 and
    # |T(f)| = A0·β/|1 + jf/fp1| (S. Franco, "Design with Operational Amplifiers and Analog Integrated Circuits",
    # 4th ed., ch. 8). The default grid runs from fp1/30 to 100·GBW = 100 MHz at 12 points a decade; there
    # |T| = 1e6·0.5/1e8 = 5e-3, still above 1e-5. By hand it is 5e-4 at 1 GHz, 5e-5 at 10 GHz and 5e-6 at 100 GHz,
    # where it first falls under 1e-5 (the phase then within 6e-8 degrees of -90°): three decades are added.
    els, inst = opamp_elements("U1", "0", "N", "OUT", a0=1e5, gbw=1e6)
    net = Netlist(els + (Resistor("R1", "OUT", "N", 1e3), Resistor("R2", "N", "0", 1e3)), {"U1": inst})
    base = default_loop_grid(inst)
    assert base[-1] == pytest.approx(1e8, rel=1e-12)
    lg = loop_gain(net, "U1")
    assert lg.freqs.size == base.size + 3 * 12
    assert np.array_equal(lg.freqs[:base.size], base)
    added = lg.freqs[base.size - 1:]
    assert np.allclose(added, 1e8 * 10.0 ** (np.arange(37) / 12.0), rtol=1e-12)
    hand = 1e5 * 0.5 / np.abs(1 + 1j * added / 10.0)
    assert np.allclose(np.abs(lg.t[base.size - 1:]), hand, rtol=1e-9)
    assert abs(lg.t[-1]) < SETTLED_MAGNITUDE < abs(lg.t[-13])
