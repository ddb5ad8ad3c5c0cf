"""Thevenin equivalents of what drives a stage, by hand: resistive and thermistor dividers, what is not a divider,
rail ranges of either sign, and the equivalent of every kind of boundary net."""

from __future__ import annotations

import math

import pytest

from afecheck.analysis.sources import boundary_source, find_dividers, rail_range
from afecheck.graph.build import circuit_of
from afecheck.model.load import load_design

DESIGN = """
afecheck: 1
name: sources by hand
parts:
  P: {gbw: 1 MHz, open_loop_gain: 1e5}
rails: {VCC: {voltage: 5 V, tolerance: 5%}, VEE: {voltage: -12 V, tolerance: 10%}, VREF: {voltage: 2.5 V}}
signals:
  IN: {dc: [0.2 V, 1 V], ac_amplitude: 50 mV, band: [10 Hz, 2 kHz], source_resistance: 600}
  PD: {kind: current, current: [0 A, 1 uA], ac_current: 100 nA, band: [1 Hz, 5 kHz], capacitance: 10p,
       shunt_resistance: 1G}
  PZ: {kind: charge, charge: 10 pC, capacitance: 1n}
components:
  VR1: {kind: vsource, value: 1.25 V, pins: {p: HELD, n: GND}}
  R1: {kind: resistor, value: 30k, pins: {1: VCC, 2: MID}}
  R2: {kind: resistor, value: 10k, pins: {1: MID, 2: GND}}
  R3: {kind: resistor, value: 10k, pins: {1: VREF, 2: TH}}
  RT1: {kind: ntc, r25: 10k, beta: 3950 K, temperature: [0 °C, 50 °C], pins: {1: TH, 2: GND}}
  R4: {kind: resistor, value: 10k, pins: {1: VCC, 2: TWICE}}
  R5: {kind: resistor, value: 10k, pins: {1: VCC, 2: TWICE}}
  U1: {kind: opamp, part: P, pins: {in+: MID, in-: O1, out: O1, v+: VCC, v-: VEE}}
  U2: {kind: opamp, part: P, pins: {in+: TH, in-: O2, out: O2, v+: VCC, v-: VEE}}
  U3: {kind: opamp, part: P, pins: {in+: TWICE, in-: O3, out: O3, v+: VCC, v-: VEE}}
  U4: {kind: opamp, part: P, pins: {in+: IN, in-: O4, out: O4, v+: VCC, v-: VEE}}
  U5: {kind: opamp, part: P, pins: {in+: GND, in-: PD, out: PD, v+: VCC, v-: VEE}}
  U6: {kind: opamp, part: P, pins: {in+: GND, in-: PZ, out: PZ, v+: VCC, v-: VEE}}
  U7: {kind: opamp, part: P, pins: {in+: HELD, in-: O7, out: O7, v+: VCC, v-: VEE}}
"""

ALL = frozenset({"R1", "R2", "R3", "RT1", "R4", "R5"})


@pytest.fixture(scope="module")
def circuit(tmp_path_factory):
    path = tmp_path_factory.mktemp("sources") / "d.yaml"
    path.write_text(DESIGN, encoding="utf-8")
    return circuit_of(load_design(path))


def test_resistive_divider_thevenin(circuit):
    # R1 = 30 kΩ to VCC (5 V ± 5 %), R2 = 10 kΩ to ground: Vth = VCC·10/40 = 1.1875..1.3125 V, Rth = 30k‖10k =
    # 7.5 kΩ (Thevenin; hand calculation)
    dv = find_dividers(circuit, ["MID"], ALL)["MID"]
    assert dv.legs == ("R1", "R2") and not dv.has_ntc
    eq = dv.equivalent()
    assert eq.kind == "divider"
    assert (eq.v_min, eq.v_max) == (pytest.approx(1.1875), pytest.approx(1.3125))
    assert (eq.r_min, eq.r_max) == (pytest.approx(7.5e3), pytest.approx(7.5e3))


def test_thermistor_divider_over_its_range(circuit):
    # 10 kΩ from the 2.5 V reference over an NTC (Beta model, IEC 60539-1) on 0..50 °C, at 9 evenly spaced points:
    # the middle point is 25 °C, where R = R25 = 10 kΩ: Vth = 1.25 V, Rth = 5 kΩ; at 0 °C R = 10k·exp(3950·(1/273.15
    # − 1/298.15)) and Vth = 2.5·R/(10k + R) (hand calculation)
    dv = find_dividers(circuit, ["TH"], ALL)["TH"]
    assert dv.has_ntc and dv.equivalent().kind == "ntc-divider"
    assert dv.temperatures_c == (pytest.approx([0.0, 6.25, 12.5, 18.75, 25.0, 31.25, 37.5, 43.75, 50.0]),)
    assert dv.nominal_index == 4
    assert dv.vth_min[4] == pytest.approx(1.25) and dv.rth[4] == pytest.approx(5e3)
    r0 = 10e3 * math.exp(3950 * (1 / 273.15 - 1 / 298.15))
    assert dv.vth_max[0] == pytest.approx(2.5 * r0 / (10e3 + r0))
    assert dv.rth[0] == pytest.approx(1 / (1 / 10e3 + 1 / r0))
    eq = dv.equivalent()
    assert eq.v_max == pytest.approx(2.5 * r0 / (10e3 + r0)) and eq.r_max == pytest.approx(1 / (1 / 10e3 + 1 / r0))


def test_two_legs_to_one_rail_are_not_a_divider(circuit):
    # both legs end on VCC: a single source through 5 kΩ, not a divider between two fixed voltages; legs outside
    # the allowed parts do not count either
    assert find_dividers(circuit, ["TWICE"], ALL) == {}
    assert find_dividers(circuit, ["MID"], frozenset({"R1"})) == {}
    memo: dict = {}
    first = find_dividers(circuit, ["MID"], ALL, memo)["MID"]
    assert find_dividers(circuit, ["MID"], ALL, memo)["MID"] is first


def test_rail_ranges(circuit):
    # V·(1 ± tolerance), ordered low to high whatever the sign (hand calculation); a source-held net is exact
    assert rail_range(circuit, "VCC") == (pytest.approx(4.75), pytest.approx(5.25))
    assert rail_range(circuit, "VEE") == (pytest.approx(-13.2), pytest.approx(-10.8))
    assert rail_range(circuit, "HELD") == (pytest.approx(1.25), pytest.approx(1.25))
    assert rail_range(circuit, "MID") is None


def test_boundary_sources_of_every_kind(circuit):
    assert boundary_source(circuit, "GND") is None
    sig = boundary_source(circuit, "IN")
    assert (sig.kind, sig.v_min, sig.v_max, sig.r_min, sig.ac_amplitude, sig.f_max) == (
        "signal", 0.2, 1.0, 600.0, pytest.approx(0.05), 2e3)
    pd = boundary_source(circuit, "PD")
    assert (pd.kind, pd.r_min, pd.r_max, pd.f_max) == ("current", 1e9, 1e9, 5e3)
    assert (pd.v_min, pd.v_max) == (0.0, pytest.approx(1e-6))
    pz = boundary_source(circuit, "PZ")
    assert (pz.kind, pz.r_min, pz.f_max) == ("charge", math.inf, 0.0)  # no leakage declared: ideal, no band
    rail = boundary_source(circuit, "VEE")
    assert (rail.kind, rail.refs, rail.v_min, rail.v_max, rail.r_min) == (
        "rail", (), pytest.approx(-13.2), pytest.approx(-10.8), 0.0)
    held = boundary_source(circuit, "HELD")
    assert (held.kind, held.refs, held.v_min) == ("vsource", ("VR1",), pytest.approx(1.25))
    out = boundary_source(circuit, "O1")
    assert (out.kind, out.refs) == ("unknown", ("U1",))
