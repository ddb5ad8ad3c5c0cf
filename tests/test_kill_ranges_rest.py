"""DC forms with a source left out of the forms: its netlist value is held as a constant column beside the
others. Reached directly through solve_forms, and from a design through the rounding left when three input
currents share one node (the stamped sum and the matrix product add them in different orders)."""

from __future__ import annotations

import numpy as np
import pytest

from afecheck.analysis import analyse
from afecheck.analysis.affine import constant_form, quantity_form
from afecheck.analysis.corners import UnitGrid
from afecheck.analysis.mna import assemble
from afecheck.analysis.netlist import GROUND, Netlist, Resistor, VoltageSource
from afecheck.analysis.ranges import solve_forms
from afecheck.model.load import load_design
from tests.hand_part import part


def test_a_source_without_a_form_keeps_its_netlist_value():
    # three 1 kΩ resistors from M to V1, V2 and V3 (Millman: M = (V1 + V2 + V3)/3, hand calculation).
    # V1 = 1 V ± 0.5 V and V3 = 0 V have forms; V2 = 2 V has none and stays at its netlist value:
    # M spans (0.5 + 2 + 0)/3 .. (1.5 + 2 + 0)/3
    nl = Netlist((VoltageSource("V1", "A", GROUND, dc=1.0), VoltageSource("V2", "B", GROUND, dc=2.0),
                  VoltageSource("V3", "C", GROUND, dc=0.0), Resistor("R1", "A", "M", 1e3),
                  Resistor("R2", "B", "M", 1e3), Resistor("R3", "C", "M", 1e3)))
    system = assemble(nl)
    forms = {"V1": quantity_form("v1", 1.0, -0.5, 0.5), "V3": constant_form(0.0)}
    grid = UnitGrid((), 1, np.zeros((1, 0), dtype=int), {})
    dc = solve_forms(system, forms, {}, grid)
    m = system.node_index("M")
    lo, hi = dc.bounds(np.array([m]))
    assert (lo[m], hi[m]) == (pytest.approx(2.5 / 3, rel=1e-12), pytest.approx(3.5 / 3, rel=1e-12))
    assert dc.form(m).extremes() == (pytest.approx(2.5 / 3, rel=1e-12), pytest.approx(3.5 / 3, rel=1e-12))


DESIGN = """
afecheck: 1
name: three followers on one photodiode
parts:
""" + "\n".join((part("A", ib="0.1n", ios="0.03n"), part("B", ib="0.7n", ios="0.011n"),
                 part("C", ib="0.3n", ios="0.017n"))) + """
rails: {VP: {voltage: 5 V}, VN: {voltage: -5 V}}
signals:
  X: {kind: current, current: [0.1 nA, 0.3 nA], shunt_resistance: 1M}
components:
  U1: {kind: opamp, part: A, pins: {in+: X, in-: O1, out: O1, v+: VP, v-: VN}}
  U2: {kind: opamp, part: B, pins: {in+: X, in-: O2, out: O2, v+: VP, v-: VN}}
  U3: {kind: opamp, part: C, pins: {in+: X, in-: O3, out: O3, v+: VP, v-: VN}}
loads: {O1: {resistance: 1T}, O2: {resistance: 1T}, O3: {resistance: 1T}}
"""


def test_three_input_currents_on_one_node(tmp_path):
    path = tmp_path / "d.yaml"
    path.write_text(DESIGN, encoding="utf-8")
    a = analyse(load_design(path))
    # X = 1 MΩ·(Isig − Σ Ib+), Ib+ = Ib + Ios/2 of each op-amp, every quantity at both signs (superposition;
    # hand calculation; the 1 PΩ input resistances are left out, 1e-9 relative): the photocurrent 0.1..0.3 nA
    # and the three Ib+ spans ±(0.1 + 0.015), ±(0.7 + 0.0055), ±(0.3 + 0.0085) nA
    spread = (0.1 + 0.015 + 0.7 + 0.0055 + 0.3 + 0.0085) * 1e-9
    assert a.nets["X"].dc_min == pytest.approx(1e6 * (0.1e-9 - spread), rel=1e-6)
    assert a.nets["X"].dc_max == pytest.approx(1e6 * (0.3e-9 + spread), rel=1e-6)
    # each follower's output supplies its own in− bias current Ib− = Ib − Ios/2 at both signs (the 1 TΩ load takes
    # under 3e-15 A): |Ib| + |Ios|/2
    stages = {s.opamp: s for s in a.stages}
    for ref, ib, ios in (("U1", 0.1e-9, 0.03e-9), ("U2", 0.7e-9, 0.011e-9), ("U3", 0.3e-9, 0.017e-9)):
        assert stages[ref].iout_peak == pytest.approx(ib + ios / 2, rel=1e-4, abs=0.0)
