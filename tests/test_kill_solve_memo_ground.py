"""Ground keeps a number of its own in the solve memo's key: a divider (RB from the middle node to ground) and the
same three elements with RB from the middle node back to the source node must not share a solve.
Reference: Ohm's law by hand (the divider's middle at half the source, the other circuit's at the full source)."""

from __future__ import annotations

import pytest

from afecheck.analysis.mna import DcSolution
from afecheck.analysis.netlist import Netlist, Resistor, VoltageSource
from afecheck.analysis.solve_memo import numeric_key, unit_system


def _net(rb_to: str) -> Netlist:
    return Netlist((VoltageSource("V1", "x", "0", dc=1.0), Resistor("RA", "x", "y", 1e3),
                    Resistor("RB", "y", rb_to, 1e3)), {})


def test_a_resistor_to_ground_and_one_to_the_first_node_have_different_keys_and_solves() -> None:
    divider, shunted = _net("0"), _net("x")
    assert numeric_key(divider) != numeric_key(shunted)
    cache: dict = {}
    for net, expected in ((divider, 0.5), (shunted, 1.0)):  # 1 V·1k/(1k + 1k); no current through RA and RB
        system = unit_system(net, numeric_key(net), cache)
        assert DcSolution(system, system.solve_dc_vector()).voltage("y") == pytest.approx(expected, rel=1e-12)
