"""A floating voltage source (neither pin on ground) stamped into the nodal matrix, against Kirchhoff by hand."""

from __future__ import annotations

import numpy as np
import pytest

from afecheck.analysis.mna import solve_ac, solve_dc
from afecheck.analysis.netlist import Netlist, Resistor, VoltageSource


def test_a_floating_source_between_two_loaded_nodes():
    # 1 V from b (−) to a (+), 1 kΩ from a to ground; from b, 1 kΩ to ground in parallel with 2 kΩ + 2 kΩ (800 Ω):
    # va − vb = 1 V and KCL around the source gives va/1k + vb/800 = 0 (Kirchhoff; hand calculation)
    nl = Netlist((VoltageSource("V1", "a", "b", dc=1.0, ac=1.0), Resistor("R1", "b", "0", 1e3),
                  Resistor("R2", "a", "0", 1e3), Resistor("R3", "c", "b", 2e3), Resistor("R4", "c", "0", 2e3)), {})
    sol = solve_dc(nl)
    # so va = 1 V·1k/(1k + 800) = 0.5556 V, vb = va − 1 V, and c halfway down R3 + R4 from b
    va = 1e3 / 1.8e3
    assert sol.voltage("a") == pytest.approx(va, rel=1e-12)
    assert sol.voltage("b") == pytest.approx(va - 1.0, rel=1e-12)
    assert sol.voltage("c") == pytest.approx((va - 1.0) / 2, rel=1e-12)
    ac = solve_ac(nl, np.array([1e3]), {"V1": 1.0})
    assert abs(ac.voltage("a")[0]) == pytest.approx(va, rel=1e-12)
