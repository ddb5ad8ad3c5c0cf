"""Nodal analysis: DC and batched AC solves, transfer and impedance, singular circuits, design conversion."""

from __future__ import annotations

import math
import textwrap

import numpy as np
import pytest
from ngspice_harness import opamp_elements

from afecheck.analysis.macromodel import expand_netlist
from afecheck.analysis.mna import assemble, impedance, log_grid, solve_ac, solve_dc, transfer
from afecheck.analysis.netlist import (
    Capacitor,
    CurrentSource,
    Netlist,
    NetlistOptions,
    Resistor,
    Vccs,
    Vcvs,
    VoltageSource,
    netlist_from_design,
)
from afecheck.errors import InputError, SingularCircuitError


def inverting(ro: float = 0.0) -> Netlist:
    els, inst = opamp_elements("U1", "0", "inm", "out", a0=1e5, gbw=1e7, f2=math.inf, ro=ro)
    return Netlist((VoltageSource("V1", "in", "0", dc=1.0, ac=1.0), Resistor("Rg", "in", "inm", 1e4),
                    Resistor("Rf", "inm", "out", 1e5)) + els, {"U1": inst})


def test_divider_and_source_currents() -> None:
    # common practice: Ohm's law; SPICE sign convention (a source delivering current reads negative)
    nl = Netlist((VoltageSource("V1", "a", "0", dc=5.0), Resistor("R1", "a", "b", 3e3), Resistor("R2", "b", "0", 2e3),
                  CurrentSource("I1", "0", "b", dc=1e-3)))
    sol = solve_dc(nl)
    # superposition: 5·2/5 = 2 V, plus 1 mA into (3k || 2k = 1.2k) = 1.2 V
    assert sol.voltage("b") == pytest.approx(3.2, rel=1e-12)
    assert sol.current("V1") == pytest.approx(-(5.0 - 3.2) / 3e3, rel=1e-12)
    assert isinstance(sol.voltage("b"), float)


def test_controlled_sources() -> None:
    # common practice: VCVS v = k·vc; VCCS into a resistor gives v = -gm·vc·R (current leaves pos)
    nl = Netlist((VoltageSource("V1", "c", "0", dc=0.5), Resistor("Rc", "c", "0", 1e3),
                  Vcvs("E1", "e", "0", "c", "0", 4.0), Resistor("Re", "e", "0", 1e3),
                  Vccs("G1", "g", "0", "c", "0", 2e-3), Resistor("Rg", "g", "0", 1e3)))
    sol = solve_dc(nl)
    assert sol.voltage("e") == pytest.approx(2.0, rel=1e-12)
    assert sol.voltage("g") == pytest.approx(-1.0, rel=1e-12)


def test_rc_lowpass_batched() -> None:
    # [DER] RULES-REFERENCE R4f: R 1k, C 10n, fc 15.92 kHz; |H(1 kHz)| = 0.9980; phase -atan(f/fc)
    nl = Netlist((VoltageSource("V1", "in", "0", ac=1.0), Resistor("R1", "in", "out", 1e3),
                  Capacitor("C1", "out", "0", 10e-9)))
    f = log_grid(10.0, 1e7, 50)
    h = transfer(nl, "V1", "out", f)
    fc = 1 / (2 * math.pi * 1e3 * 10e-9)
    assert np.allclose(np.abs(h), 1 / np.sqrt(1 + (f / fc) ** 2), rtol=1e-12)
    assert np.allclose(np.angle(h), -np.arctan(f / fc), atol=1e-12)
    assert abs(transfer(nl, "V1", "out", [1e3])[0]) == pytest.approx(0.9980, abs=5e-5)
    sol = solve_ac(nl, f)
    assert sol.voltage("out").shape == f.shape
    assert isinstance(sol.magnitude("out", 0), float)


def test_inverting_input_impedance() -> None:
    # REFERENCE-TOOLS (ngspice run): Zin = Ri + (Rf + Rout)/(1 + A0); single pole, A0 1e5, Ro 50
    nl = inverting(ro=50.0).without("V1").with_elements(Resistor("Rs", "in", "0", 1e15))
    z = impedance(nl, "inm", [1e-3])[0]
    assert z.real == pytest.approx((1e5 + 50.0) / (1 + 1e5), rel=1e-6)
    zin = impedance(inverting(ro=50.0).without("V1"), "in", [1e-3])[0]
    assert zin.real == pytest.approx(1e4 + (1e5 + 50.0) / (1 + 1e5), rel=1e-9)


def test_transfer_zeroes_other_sources() -> None:
    # common practice: superposition; V2 has an AC value but transfer() excites V1 alone
    nl = Netlist((VoltageSource("V1", "a", "0", ac=1.0), VoltageSource("V2", "b", "0", ac=3.0),
                  Resistor("R1", "a", "m", 1e3), Resistor("R2", "b", "m", 1e3)))
    assert transfer(nl, "V1", "m", [1.0])[0] == pytest.approx(0.5)
    assert solve_ac(nl, [1.0]).voltage("m")[0] == pytest.approx(2.0)
    with pytest.raises(KeyError):
        transfer(nl, "nope", "m", [1.0])


def test_floating_node_named() -> None:
    nl = Netlist((VoltageSource("V1", "a", "0", dc=1.0), Resistor("R1", "a", "0", 1e3),
                  Resistor("R2", "x", "y", 1e3)))
    with pytest.raises(SingularCircuitError, match="x, y") as info:
        solve_dc(nl)
    assert info.value.nodes == ("x", "y")


def test_capacitor_only_node_singular_at_dc_not_ac() -> None:
    nl = Netlist((VoltageSource("V1", "a", "0", ac=1.0), Capacitor("C1", "a", "b", 1e-9),
                  CurrentSource("I1", "b", "0", dc=1e-9)))
    with pytest.raises(SingularCircuitError, match="at DC"):
        solve_dc(nl)
    assert abs(solve_ac(nl, [1e3]).voltage("b")[0]) == pytest.approx(1.0)
    with pytest.raises(SingularCircuitError):
        solve_ac(nl, [0.0, 1e3])


def test_voltage_source_loop() -> None:
    nl = Netlist((VoltageSource("V1", "a", "0", dc=1.0), VoltageSource("V2", "a", "0", dc=2.0),
                  Resistor("R1", "a", "0", 1e3)))
    with pytest.raises(SingularCircuitError, match="V2"):
        solve_dc(nl)


def test_compact_core_equals_expanded_chain() -> None:
    # the single op-amp core element and the standard-element chain written for SPICE must agree
    els, inst = opamp_elements("U1", "inp", "inm", "out", a0=2e5, gbw=3e6, f2=9e6, ro=75.0, vos=2e-3,
                               ib=5e-9, ios=1e-9, rcm=1e9, rdiff=1e8, ccm=4e-12, cdiff=2e-12)
    nl = Netlist((VoltageSource("V1", "in", "0", dc=0.3, ac=1.0), Resistor("Rs", "in", "inp", 1e4),
                  Resistor("Rg", "inm", "0", 1e3), Resistor("Rf", "inm", "out", 4.7e3),
                  Capacitor("Cf", "inm", "out", 10e-12)) + els, {"U1": inst})
    big = expand_netlist(nl)
    assert assemble(big).size > assemble(nl).size
    assert solve_dc(nl).voltage("out") == pytest.approx(solve_dc(big).voltage("out"), rel=1e-12)
    f = log_grid(1.0, 1e9, 10)
    a, b = solve_ac(nl, f).voltage("out"), solve_ac(big, f).voltage("out")
    assert np.allclose(a, b, rtol=1e-9, atol=1e-15)


def test_non_positive_resistor_refused() -> None:
    with pytest.raises(ValueError):
        solve_dc(Netlist((VoltageSource("V1", "a", "0", dc=1.0), Resistor("R1", "a", "0", 0.0))))


def test_duplicate_names_refused() -> None:
    with pytest.raises(ValueError, match="R1"):
        Netlist((Resistor("R1", "a", "0", 1.0), Resistor("R1", "a", "0", 2.0)))


DESIGN = textwrap.dedent("""
    afecheck: 1
    name: soil-probe reader
    ground: AGND
    parts:
      GP-AMP: {gbw: 1 MHz, open_loop_gain: 100 dB, output_resistance: 100, second_pole: 3 MHz,
               input_resistance_diff: 1T, input_resistance_cm: 1T, input_capacitance_diff: 0,
               input_capacitance_cm: 0, bias_current: 0, offset_current: 0, offset_voltage: 0}
    rails:
      VCC: {voltage: 5 V}
      VREF: {voltage: 2.5 V}
    components:
      RT1: {kind: ntc, r25: 10k, beta: 3950 K, temperature: [0 °C, 50 °C], pins: {1: VCC, 2: PROBE}}
      R1: {kind: resistor, value: 10k, pins: {1: PROBE, 2: AGND}}
      U1: {kind: opamp, part: GP-AMP, pins: {in+: PROBE, in-: OUT, out: OUT, v+: VCC, v-: AGND}}
      V1: {kind: vsource, value: 2.5 V, pins: {p: VREF, n: AGND}}
      R2: {kind: resistor, value: 1k, pins: {1: VREF, 2: SENSE}}
    signals:
      SENSE: {dc: [0, 1 V], ac_amplitude: 0.1 V, source_resistance: 1k}
    loads:
      OUT: {resistance: 10k, capacitance: 100 pF, reference: VREF}
""")


@pytest.fixture()
def soil(tmp_path):
    from afecheck.model.load import load_design

    path = tmp_path / "soil.yaml"
    path.write_text(DESIGN, encoding="utf-8")
    return load_design(path)


def test_netlist_from_design(soil) -> None:
    nl = netlist_from_design(soil, options=NetlistOptions(temperature_c=25.0))
    names = {e.name for e in nl.elements}
    assert "VCC#rail" in names
    assert "VREF#rail" not in names  # V1 already holds VREF: a second ideal source would close a loop
    assert {"SENSE#signal", "SENSE#signal.rs", "OUT#load.r", "OUT#load.c"} <= names
    assert nl.element("RT1").value == pytest.approx(10e3)  # [IEC60539] Beta model at 25 °C = R25
    sol = solve_dc(nl)
    # common practice: divider 5 V · 10k/(10k + 10k) buffered by a follower (A0 1e5)
    assert sol.voltage("OUT") == pytest.approx(2.5 * 1e5 / (1 + 1e5), rel=1e-4)
    # signal 0.5 V (mid-range) through 1k into R2 (1k) to VREF 2.5 V: node at 1.5 V
    assert sol.voltage("SENSE") == pytest.approx(1.5, rel=1e-12)
    assert nl.opamps["U1"].assumed == ()


def test_netlist_subset_and_options(soil) -> None:
    nl = netlist_from_design(soil, ["R2"], NetlistOptions(signal_point=1.0, include_rails=False))
    assert {e.name for e in nl.elements} == {"R2", "SENSE#signal", "SENSE#signal.rs"}
    assert nl.element("SENSE#signal").dc == 1.0
    nl = netlist_from_design(soil, ["RT1", "R1"], NetlistOptions(ntc_temperature_c={"RT1": 0.0}))
    assert nl.element("RT1").value == pytest.approx(33620.6, abs=0.1)  # [DER] RULES-REFERENCE R5o, 0 °C
    assert "VCC#rail" in {e.name for e in nl.elements}
    with pytest.raises(InputError, match="R99"):
        netlist_from_design(soil, ["R99"])


def test_unknown_part_is_input_error(tmp_path) -> None:
    from afecheck.model.load import load_design

    path = tmp_path / "bad.yaml"
    path.write_text(DESIGN.replace("part: GP-AMP", "part: NO-SUCH-AMP"), encoding="utf-8")
    with pytest.raises(InputError, match="NO-SUCH-AMP"):
        netlist_from_design(load_design(path))


def test_assumed_parameters_listed() -> None:
    from afecheck.analysis.macromodel import opamp_macromodel
    from afecheck.parts.model import OpAmpModel

    mm = opamp_macromodel("U9", "a", "b", "c", OpAmpModel(gbw=1e6, min_stable_gain=5))
    assert "second_pole" in mm.instance.assumed and "open_loop_gain" in mm.instance.assumed
    # [DER] RULES-REFERENCE R2: f2 = GBW/(√2·Gmin)
    assert mm.instance.pole2_hz == pytest.approx(1e6 / (math.sqrt(2) * 5))
    assert mm.instance.loop_element == "U9#gain"


def test_reduced_solve_equals_full_matrix_solve() -> None:
    # the solver eliminates grounded-source nodes and op-amp core outputs; a plain solve of the whole
    # matrix (numpy, no elimination) must give the same vector, branch currents included
    e1, i1 = opamp_elements("U1", "s", "m", "o1", a0=3e5, gbw=2e6, f2=5e6, ro=60.0, vos=1e-3, ib=2e-9, ccm=3e-12)
    e2, i2 = opamp_elements("U2", "o1", "o2", "o2", a0=1e5, gbw=1e7, f2=3e7, ro=0.0)
    nl = Netlist((VoltageSource("V1", "s", "0", dc=0.2, ac=1.0), VoltageSource("V2", "0", "r", dc=1.5, ac=0.3j),
                  Resistor("Rg", "m", "r", 2e3), Resistor("Rf", "m", "o2", 8e3), Capacitor("Cf", "m", "o2", 5e-12),
                  CurrentSource("I1", "o1", "0", dc=1e-4, ac=1e-3), Resistor("RL", "o2", "0", 2e3))
                 + e1 + e2, {"U1": i1, "U2": i2})
    system = assemble(nl)
    assert system.reduction.keep.size < system.size - 4
    f = np.array([0.0, 10.0, 1e4, 3e6])
    full = np.linalg.solve(system.admittance(f), np.broadcast_to(system.b_ac[:, None], (f.size, system.size, 1)))
    assert np.allclose(system.solve_freqs(f), full[..., 0], rtol=1e-8, atol=1e-15)  # rounding differs
    dc = np.linalg.solve(system.g, system.b_dc)
    assert np.allclose(system.solve_dc_vector(), dc, rtol=1e-8, atol=1e-15)


def test_small_systems_in_closed_form_match_numpy() -> None:
    # one and two unknowns are solved in closed form; badly scaled but regular matrices must not be refused
    from afecheck.analysis.mna import _solve_small

    rng = np.random.default_rng(7)
    for m in (1, 2, 3):
        y = rng.normal(size=(5, m, m)) + 1j * rng.normal(size=(5, m, m))
        y[:, 0, :] *= 1e-12
        rhs = rng.normal(size=(5, m)) + 0j
        assert np.allclose(_solve_small(y, rhs), np.linalg.solve(y, rhs[..., None])[..., 0], rtol=1e-9)
    with pytest.raises(SingularCircuitError):
        _solve_small(np.zeros((1, 2, 2)), np.ones((1, 2)))


def test_subset_brings_the_load_reference_rail(soil) -> None:
    # U1 alone: its output load returns to VREF, so VREF gets its rail source (V1 is not in the subset)
    nl = netlist_from_design(soil, ["U1"])
    names = {e.name for e in nl.elements}
    assert {"OUT#load.r", "OUT#load.c", "VREF#rail", "VCC#rail"} <= names
    assert "SENSE#signal" not in names
    assert nl.element("OUT#load.r").b == "VREF"


def test_ntc_at_absolute_zero_is_input_error(tmp_path) -> None:
    from afecheck.model.load import load_design

    path = tmp_path / "cold.yaml"
    path.write_text(DESIGN.replace("temperature: [0 °C, 50 °C]", "temperature: [-273.15 °C, -273.15 °C]"),
                    encoding="utf-8")
    with pytest.raises(InputError, match="RT1"):
        netlist_from_design(load_design(path))
