"""The SPICE expansion of the op-amp gain block carries its input offset voltage as a source in series with the +
input, for any non-zero offset (1 V, an exaggerated one, included) and only then. Reference: a follower of gain
A0 with Vos at its + input settles at A0·Vos/(1 + A0) (S. Franco, "Design with Operational Amplifiers and Analog
Integrated Circuits", 4th ed., ch. 5; hand calculation)."""

from __future__ import annotations

import pytest

from afecheck.analysis.macromodel import expand_core
from afecheck.analysis.mna import solve_dc
from afecheck.analysis.netlist import Netlist, OpAmpCore, Resistor, VoltageSource

A0 = 1e5


@pytest.mark.parametrize("vos", [1.0, 1e-3, -2e-3, 0.0])
def test_the_expanded_follower_settles_at_a0_vos_over_one_plus_a0(vos: float) -> None:
    core = OpAmpCore("X", "OUT", "0", "IN", "OUT", A0, 10.0, 20e6, vos)
    els = expand_core(core)
    assert sum(isinstance(e, VoltageSource) for e in els) == (vos != 0.0)  # no 0 V source written for no offset
    dc = solve_dc(Netlist((VoltageSource("VIN", "IN", "0"), *els, Resistor("RL", "OUT", "0", 10e3)), {}))
    assert dc.voltage("OUT") == pytest.approx(A0 * vos / (1 + A0), rel=1e-12, abs=1e-15)
