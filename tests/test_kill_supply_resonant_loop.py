"""The isolation resistor is sized against the worst of a loop's crossings, not the first: a follower whose
feedback runs through a series-resonant L-C (10 µH, 100 pF: 5.03 MHz) crosses unity three times."""

from __future__ import annotations

import math

import pytest
from ngspice_harness import opamp_elements

from afecheck.analysis.loop import loop_gain
from afecheck.analysis.netlist import Capacitor, Inductor, Netlist, Resistor, VoltageSource
from afecheck.analysis.supply import isolation_resistor

L1, C1, CL = 10e-6, 100e-12, 1e-9


def _follower(riso: float | None) -> Netlist:
    """OUT feeds in− through L1 with C1 from in− to ground; the 1 nF load on OUT, behind riso when given."""
    els, inst = opamp_elements("U1", "IN", "FB", "OUT", a0=1e5, gbw=1e6, ro=100.0)
    load = (Capacitor("CL", "OUT", "0", CL),) if riso is None else (
        Resistor("RISO", "OUT", "ISO", riso), Capacitor("CL", "ISO", "0", CL))
    return Netlist(els + (VoltageSource("VIN", "IN", "0", dc=0.0), Inductor("L1", "OUT", "FB", L1),
                          Capacitor("C1", "FB", "0", C1)) + load, {"U1": inst})


def test_the_isolation_margin_is_the_worst_crossing_of_the_loop() -> None:
    # The feedback factor β = 1/(1 − ω²L1C1 + ...) peaks at f0 = 1/(2π√(L1·C1)) (series resonance, common circuit
    # theory): past the first crossover (near the 1 MHz gain-bandwidth) |T| climbs back over 1 around f0 and falls
    # again with the resonance's extra 180° of lag, so the last crossing, not the first, has the least margin.
    assert 1 / (2 * math.pi * math.sqrt(L1 * C1)) == pytest.approx(5.033e6, rel=1e-3)
    bare = loop_gain(_follower(None), "U1")
    assert len(bare.crossovers_hz) == 3 and bare.crossovers_hz[0] < 1e6 < 5e6 < bare.crossovers_hz[1]
    assert bare.phase_margin_deg == bare.phase_margins_deg[0] > 45.0  # the first crossing looks healthy
    assert min(bare.phase_margins_deg) < 0.0  # the last one is unstable
    riso, pm = isolation_resistor(_follower(None), "U1", "OUT", frozenset({"IN"}))
    assert riso is not None and pm is not None
    # the margin it reports is the worst crossing of the loop rebuilt by hand with that resistor before the load
    hand = loop_gain(_follower(riso), "U1")
    assert pm == min(hand.phase_margins_deg)
    assert pm >= 60.0 - 1e-9  # the 60° target (common practice) is met


def _nanopower_follower(riso: float | None) -> Netlist:
    """A 10 kHz follower with 500 kΩ open-loop output resistance (a nanopower archetype) into 200 pF of cable."""
    els, inst = opamp_elements("U1", "IN", "OUT", "OUT", a0=1e5, gbw=1e4, ro=500e3)
    load = (Capacitor("CL", "OUT", "0", 200e-12),) if riso is None else (
        Resistor("RISO", "OUT", "ISO", riso), Capacitor("CL", "ISO", "0", 200e-12))
    return Netlist(els + (VoltageSource("VIN", "IN", "0", dc=0.0),) + load, {"U1": inst})


def test_no_isolation_resistor_is_offered_beyond_the_100_kilohm_search() -> None:
    # By the loop rebuilt by hand: 100 kΩ before the 200 pF leaves well under 60° of margin (the load pole and the
    # resistor's zero both sit near the 10 kHz crossover), 200 kΩ would give 60°; the analysis searches up to
    # 100 kΩ, as its note says ("no isolation resistor up to 100 kΩ"), and so offers none.
    assert min(loop_gain(_nanopower_follower(1e5), "U1").phase_margins_deg) < 50.0
    assert min(loop_gain(_nanopower_follower(2e5), "U1").phase_margins_deg) > 60.0
    assert isolation_resistor(_nanopower_follower(None), "U1", "OUT", frozenset({"IN"})) == (None, None)


def test_a_loop_that_never_reaches_unity_needs_no_isolation_resistor() -> None:
    # Non-inverting gain 1 + 1 GΩ/1 kΩ ≈ 1e6 on an op-amp of A0 = 1e5: T(0) = A0·β ≈ 0.1 (hand), and |T| only falls
    # from there, so there is no crossing and no margin to restore: the search ends at its 0.01 Ω floor, where the
    # margin counts as the full 180°.
    els, inst = opamp_elements("U1", "IN", "FB", "OUT", a0=1e5, gbw=1e6, ro=100.0)
    net = Netlist(els + (VoltageSource("VIN", "IN", "0", dc=0.0), Resistor("RF", "OUT", "FB", 1e9),
                         Resistor("RG", "FB", "0", 1e3), Capacitor("CL", "OUT", "0", 1e-6)), {"U1": inst})
    lg = loop_gain(net, "U1")
    assert lg.crossovers_hz == () and abs(lg.t[0]) == pytest.approx(1e5 * 1e3 / (1e9 + 1e3), rel=1e-3)
    riso, pm = isolation_resistor(net, "U1", "OUT", frozenset({"IN"}))
    assert pm == 180.0 and riso is not None and riso < 0.01 * 1.002
