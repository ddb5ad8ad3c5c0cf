"""Loop gain of an op-amp whose macromodel is referenced to a mid-supply node instead of ground (opamp_macromodel's
``ground`` argument, as in a single-supply stage built around a 2.5 V reference): its gain element then has no
grounded side, and the test source that replaces it must still be v(out) − v(ref) = 1 V.
Reference: T(jf) = A(jf)·β with A = A0/((1 + jf/fp1)(1 + jf/fp2)) and β = R2/(R1 + R2) (the reference node is an
AC ground through its source; S. Franco, "Design with Operational Amplifiers and Analog Integrated Circuits",
4th ed., ch. 8; hand calculation)."""

from __future__ import annotations

import numpy as np
import pytest

from afecheck.analysis.loop import loop_gain
from afecheck.analysis.macromodel import opamp_macromodel
from afecheck.analysis.netlist import GROUND, Netlist, Resistor, VoltageSource
from afecheck.parts.model import OpAmpModel

A0, GBW, F2 = 1e5, 1e6, 20e6  # fp1 = 10 Hz
MODEL = OpAmpModel(gbw=GBW, open_loop_gain=A0, second_pole=F2, output_resistance=0.0, input_resistance_diff=1e300,
                   input_resistance_cm=1e300, input_capacitance_diff=0.0, input_capacitance_cm=0.0, bias_current=0.0,
                   offset_current=0.0, offset_voltage=0.0)


def _gain_of_two(ref: str) -> Netlist:
    """Non-inverting gain of 2 around ``ref``: R1 from OUT to FB, R2 from FB to ``ref``, + input on ``ref``."""
    mm = opamp_macromodel("U1", ref, "FB", "OUT", MODEL, ground=ref)
    extra = () if ref == GROUND else (VoltageSource("VREF", ref, GROUND, dc=2.5),)
    return Netlist(extra + mm.elements + (Resistor("R1", "OUT", "FB", 10e3), Resistor("R2", "FB", ref, 10e3)),
                   {"U1": mm.instance})


def test_a_macromodel_referenced_to_a_mid_supply_node_has_the_loop_gain_a_times_beta() -> None:
    net = _gain_of_two("MID")
    core = net.element(net.opamps["U1"].loop_element)
    assert core.neg == "MID" and core.pos != GROUND  # no grounded side
    f = np.array([1.0, 1e3, 1e5, 5e5, 2e6])
    lg = loop_gain(net, "U1", f)
    hand = A0 / ((1 + 1j * f / (GBW / A0)) * (1 + 1j * f / F2)) * 0.5
    assert np.allclose(lg.t, hand, rtol=1e-9, atol=0)
    assert lg.t_dc == pytest.approx(A0 * 0.5, rel=1e-12)
    assert lg.sign == "negative"
    # the same stage referenced to ground has the same loop
    assert np.allclose(loop_gain(_gain_of_two(GROUND), "U1", f).t, hand, rtol=1e-9, atol=0)
