"""A notch that dips through |T| = 1 between two frequencies of a sparse, caller-given grid, inside the first step of
the extremum search's sub-grid above the lower of them: the search must keep that first step in its interval.
Reference: the twin-T loop of test_loop_crossings, written out by nodal analysis with numpy and bisected; nothing
of afecheck's solver or grid."""

from __future__ import annotations

import numpy as np
import pytest
from ngspice_harness import opamp_elements
from test_loop_crossings import A0, DETUNE, FP1, C, R, bisect, notch_loop

from afecheck.analysis.loop import loop_gain
from afecheck.analysis.netlist import Capacitor, Netlist, Resistor


def notch_net(detune: float) -> Netlist:
    """The twin-T loop of test_loop_crossings as a netlist, its shunt resistor ``detune`` off R/2."""
    els, inst = opamp_elements("U1", "0", "N", "OUT", a0=A0, gbw=A0 * FP1)
    return Netlist(els + (Resistor("R1", "OUT", "A", R), Resistor("R2", "A", "N", R), Capacitor("C3", "A", "0", 2 * C),
                          Capacitor("C1", "OUT", "B", C), Capacitor("C2", "B", "N", C),
                          Resistor("R3", "B", "0", R / 2 * (1 + detune))), {"U1": inst})


def notch_edges(lo: float, hi: float) -> tuple[float, float, float, float]:
    """(bottom, lowest |T|, fall, rise) of the written-out loop's notch between lo and hi: the bottom sampled
    densely, the two edges where |T| falls through 1 and rises back bisected either side of it."""
    fine = np.geomspace(lo, hi, 20001)
    m = np.abs(notch_loop(fine))
    bottom = fine[m.argmin()]
    h = lambda x: np.log(np.abs(notch_loop(np.atleast_1d(x))))[0]  # noqa: E731
    return float(bottom), float(m.min()), bisect(h, lo, bottom), bisect(h, bottom, hi)


# 990 Hz, then 1000.3 Hz (just above the notch, |T| = 1.6), then 1262 Hz: the search between 990 and 1262 Hz
# samples 24 points a ln(1262/990)/23 step apart, the second at 1000.5 Hz (|T| = 2.6), above the notch near 1000 Hz
GRID = np.array([100.0, 300.0, 990.0, 1000.3, 1262.0, 3000.0, 1e4])


def test_a_notch_in_the_first_step_of_the_search_interval_is_found() -> None:
    net = notch_net(DETUNE)
    assert np.all(np.abs(notch_loop(GRID)) > 1.0)  # no grid point is inside the notch
    second = 990.0 * (1262.0 / 990.0) ** (1 / 23)
    assert abs(notch_loop(np.array([second]))[0]) > 1.0  # nor the search's second sample
    bottom, lowest, fall, rise = notch_edges(995.0, 1000.3)
    assert lowest < 0.3 and 990.0 < bottom < second
    lg = loop_gain(net, "U1", GRID)
    assert lg.crossovers_hz == pytest.approx((fall, rise), rel=1e-6)


# The mirror case: 790 Hz, then 999.7 Hz (just below the notch, |T| = 1.4), then 1000.5 Hz (|T| = 2.6): the
# notch lies in the search's last sub-step, between its sample at 990.3 Hz (|T| = 49) and 1000.5 Hz itself
MIRROR = np.array([100.0, 300.0, 790.0, 999.7, 1000.5, 3000.0, 1e4])


def test_a_notch_in_the_last_step_of_the_search_interval_is_found() -> None:
    net = notch_net(DETUNE)
    assert np.all(np.abs(notch_loop(MIRROR)) > 1.0)
    last_but_one = 1000.5 / (1000.5 / 790.0) ** (1 / 23)
    bottom, lowest, fall, rise = notch_edges(999.7, 1000.5)
    assert lowest < 0.3 and last_but_one < 999.7 < bottom < 1000.5
    lg = loop_gain(net, "U1", MIRROR)
    assert lg.crossovers_hz == pytest.approx((fall, rise), rel=1e-6)
