"""Two non-inverting stages in cascade whose netlist names the first stage's output before anything else (so that
node is the nodal matrix's first unknown, row 0): that output also drives the second op-amp's input, so the solver
must keep it as an unknown instead of substituting it. Reference: the finite-gain non-inverting gain
A/(1 + A·β) of each stage, multiplied (S. Franco, "Design with Operational Amplifiers and Analog Integrated
Circuits", 4th ed., ch. 1 and 6; hand calculation)."""

from __future__ import annotations

import numpy as np
import pytest
from ngspice_harness import opamp_elements

from afecheck.analysis.mna import solve_dc, system_of, transfer
from afecheck.analysis.netlist import Netlist, Resistor, VoltageSource

A0, GBW = 1e5, 1e6  # single pole at 10 Hz


def _cascade() -> Netlist:
    e1, i1 = opamp_elements("U1", "IN", "F1", "A", a0=A0, gbw=GBW)
    e2, i2 = opamp_elements("U2", "A", "F2", "B", a0=A0, gbw=GBW)
    return Netlist((Resistor("R1", "A", "F1", 9e3), Resistor("R2", "F1", "0", 1e3)) + e1 + e2
                   + (Resistor("R3", "B", "F2", 1e3), Resistor("R4", "F2", "0", 1e3),
                      VoltageSource("VIN", "IN", "0", dc=1e-3, ac=1.0)), {"U1": i1, "U2": i2})


def _stage(a: complex | np.ndarray, beta: float) -> complex | np.ndarray:
    return a / (1 + a * beta)


def test_a_first_node_that_is_an_op_amp_output_and_another_op_amps_input_solves_by_hand() -> None:
    net = _cascade()
    assert system_of(net).node_index("A") == 0
    # β1 = 1k/(9k + 1k) = 0.1 (gain 10), β2 = 1k/(1k + 1k) = 0.5 (gain 2)
    dc = solve_dc(net)
    g1, g2 = _stage(A0, 0.1), _stage(A0, 0.5)
    assert dc.voltage("A") == pytest.approx(1e-3 * g1, rel=1e-12)
    assert dc.voltage("B") == pytest.approx(1e-3 * g1 * g2, rel=1e-12)
    f = np.array([1e3, 1e5])
    a = A0 / (1 + 1j * f / (GBW / A0))
    assert np.allclose(transfer(net, "VIN", "B", f), _stage(a, 0.1) * _stage(a, 0.5), rtol=1e-12, atol=0)
