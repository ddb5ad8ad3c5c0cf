"""The op-amp macromodel's parts, by hand: the bias currents at each pin, the optional input capacitances and output
resistance, and the SPICE expansion of the gain block (its poles where the part puts them, a pole at or above
1e30 Hz left out) checked by solving the expansion against the block's own A(jf)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from afecheck.analysis.macromodel import expand_core, opamp_macromodel
from afecheck.analysis.mna import solve_ac
from afecheck.analysis.netlist import Capacitor, CurrentSource, Netlist, OpAmpCore, Resistor, VoltageSource
from afecheck.model.load import load_design

PART = """
afecheck: 1
name: macromodel by hand
parts:
  P:
    gbw: 1 MHz
    open_loop_gain: 1e5
    second_pole: 20 MHz
    output_resistance: {ro}
    input_resistance_diff: 1e12
    input_resistance_cm: 1e13
    input_capacitance_diff: {cdiff}
    input_capacitance_cm: {ccm}
    bias_current: 10 nA
    offset_current: 2 nA
    offset_voltage: 1 mV
rails: {{VP: {{voltage: 5 V}}, VN: {{voltage: -5 V}}}}
signals: {{IN: {{dc: [0, 1 V]}}}}
components:
  U1: {{kind: opamp, part: P, pins: {{in+: IN, in-: OUT, out: OUT, v+: VP, v-: VN}}}}
"""


def _model(tmp_path, ro="50", cdiff="0", ccm="0"):
    path = tmp_path / "d.yaml"
    path.write_text(PART.format(ro=ro, cdiff=cdiff, ccm=ccm), encoding="utf-8")
    return load_design(path).part("U1")


def test_bias_currents_and_input_network(tmp_path):
    # Ib+ = Ib + Ios/2 = 11 nA and Ib− = Ib − Ios/2 = 9 nA into the pins (the usual definition Ios = Ib+ − Ib−:
    # S. Franco, "Design with Operational Amplifiers and Analog Integrated Circuits", 4th ed., ch. 5, from memory);
    # first pole GBW/A0 = 10 Hz; Ro = 50 Ω between the gain block and the pin
    m = opamp_macromodel("U1", "P", "M", "O", _model(tmp_path))
    by = {e.name: e for e in m.elements}
    assert by["U1#ib+"].dc == pytest.approx(11e-9) and by["U1#ib-"].dc == pytest.approx(9e-9)
    assert isinstance(by["U1#ib+"], CurrentSource) and by["U1#ib+"].pos == "P"
    core = by["U1#gain"]
    assert (core.fp1, core.fp2, core.vos, core.pos) == (pytest.approx(10.0), pytest.approx(20e6), 1e-3, "U1#o")
    assert (by["U1#ro"].a, by["U1#ro"].b, by["U1#ro"].value) == ("U1#o", "O", 50.0)
    assert not any(isinstance(e, Capacitor) for e in m.elements)  # none declared (0 F)
    assert m.instance.pole1_hz == pytest.approx(10.0) and m.instance.output_resistance == 50.0
    # without offsets: no bias sources and no Vos
    bare = opamp_macromodel("U1", "P", "M", "O", _model(tmp_path), include_offsets=False)
    assert not any(isinstance(e, CurrentSource) for e in bare.elements)
    assert {e.name: e for e in bare.elements}["U1#gain"].vos == 0.0


def test_input_capacitances_and_zero_output_resistance(tmp_path):
    # Cdiff between the pins, Ccm from each pin to ground; with Ro = 0 the gain block drives the output pin itself
    m = opamp_macromodel("U1", "P", "M", "O", _model(tmp_path, ro="0", cdiff="2p", ccm="3p"))
    caps = {e.name: (e.a, e.b, e.value) for e in m.elements if isinstance(e, Capacitor)}
    assert caps == {"U1#cdiff": ("P", "M", pytest.approx(2e-12)), "U1#ccm+": ("P", "0", pytest.approx(3e-12)),
                    "U1#ccm-": ("M", "0", pytest.approx(3e-12))}
    by = {e.name: e for e in m.elements}
    assert by["U1#gain"].pos == "O" and "U1#ro" not in by


def _expanded_gain(core: OpAmpCore, f: np.ndarray) -> np.ndarray:
    """v(out)/v(in) of the expansion driven by a 1 V AC source at cpos (cneg grounded), solved by the MNA."""
    nl = Netlist((VoltageSource("VIN", core.cpos, "0", dc=0.0, ac=1.0), *expand_core(core),
                  Resistor("RL", core.pos, "0", 1e3)), {})
    return solve_ac(nl, f, {"VIN": 1.0}).voltage(core.pos)


def test_expansion_places_the_poles_where_the_part_does():
    # A(jf) = A0/((1 + jf/fp1)(1 + jf/fp2)): the expansion's buffered RC sections must reproduce it exactly
    core = OpAmpCore("X", "out", "0", "in", "0", 1e5, 10.0, 20e6)
    f = np.array([1.0, 10.0, 1e3, 20e6, 1e8])
    assert np.allclose(_expanded_gain(core, f), core.gain(f), rtol=1e-9)


def test_a_pole_at_1e30_hz_is_left_out_of_the_expansion():
    # a single-pole part carries its second pole at 1e30 Hz or above: the expansion writes one RC section only,
    # and a pole just below that is still written
    one = expand_core(OpAmpCore("X", "out", "0", "in", "0", 1e5, 10.0, 1e30))
    assert sum(isinstance(e, Capacitor) for e in one) == 1
    two = expand_core(OpAmpCore("X", "out", "0", "in", "0", 1e5, 10.0, 0.5e30))
    assert sum(isinstance(e, Capacitor) for e in two) == 2
    # the RC of the section is 1/(2π·fp) (a first-order low-pass), whatever resistance it is drawn with
    r = next(e for e in one if isinstance(e, Resistor))
    c = next(e for e in one if isinstance(e, Capacitor))
    assert r.value * c.value == pytest.approx(1 / (2 * math.pi * 10.0))
