"""Thevenin equivalents of what drives a stage: dividers, NTC dividers over temperature, declared sources."""

from __future__ import annotations

from pathlib import Path

import pytest

from afecheck.analysis.sources import boundary_source, find_dividers, rail_range
from afecheck.graph.build import build_circuit
from afecheck.model.load import load_design

FIXTURES = Path(__file__).parent / "fixtures" / "stages"


def _circuit(tmp_path: Path, body: str):
    path = tmp_path / "d.yaml"
    path.write_text("afecheck: 1\nparts: {P: {gbw: 1 MHz}}\n" + body, encoding="utf-8")
    return build_circuit(load_design(path))


def _divider(circuit, net: str):
    return find_dividers(circuit, [net], frozenset(circuit.kinds))[net]


def test_resistor_divider_thevenin(tmp_path):
    c = _circuit(tmp_path, """rails: {VCC: {voltage: 5 V}}
components:
  RT: {kind: resistor, value: 100k, pins: {1: VCC, 2: MID}}
  RB: {kind: resistor, value: 100k, pins: {1: MID, 2: GND}}
  U1: {kind: opamp, part: P, pins: {in+: MID, in-: O, out: O, v+: VCC, v-: GND}}
loads: {O: {resistance: 10k}}
""")
    d = _divider(c, "MID")
    eq = d.equivalent()
    assert eq.kind == "divider" and eq.refs == ("RB", "RT")
    # Vth = Vref·Rbot/(Rtop + Rbot), Rs = Rtop || Rbot [FR] RULES-REFERENCE R1; 5 V, 100k/100k -> 50 kΩ R5n
    assert eq.v_min == pytest.approx(2.5) and eq.v_max == pytest.approx(2.5)
    assert eq.r_min == pytest.approx(50e3) and eq.r_max == pytest.approx(50e3)


def test_rail_tolerance_widens_the_divider(tmp_path):
    c = _circuit(tmp_path, """rails: {VREF: {voltage: 1 V, tolerance: 1%}}
components:
  RT: {kind: resistor, value: 10k, pins: {1: VREF, 2: MID}}
  RB: {kind: resistor, value: 10k, pins: {1: MID, 2: GND}}
  U1: {kind: opamp, part: P, pins: {in+: MID, in-: O, out: O, v+: VREF, v-: GND}}
loads: {O: {resistance: 10k}}
""")
    eq = _divider(c, "MID").equivalent()
    assert (eq.v_min, eq.v_max) == (pytest.approx(0.495), pytest.approx(0.505))  # 0.5 V · (1 ± 1 %) [DER]
    assert rail_range(c, "VREF") == (pytest.approx(0.99), pytest.approx(1.01))


def test_ntc_divider_over_temperature(tmp_path):
    c = _circuit(tmp_path, """rails: {VREF: {voltage: 1 V}}
components:
  R1: {kind: resistor, value: 10k, pins: {1: VREF, 2: TH}}
  RT1: {kind: ntc, r25: 10k, beta: 3950 K, temperature: [0 °C, 50 °C], pins: {1: TH, 2: GND}}
  U1: {kind: opamp, part: P, pins: {in+: TH, in-: O, out: O, v+: VREF, v-: GND}}
loads: {O: {resistance: 10k}}
""")
    d = _divider(c, "TH")
    assert d.has_ntc
    temps = d.temperatures_c[0]
    assert temps[0] == 0.0 and temps[-1] == 50.0 and temps[d.nominal_index] == 25.0
    # Beta model [IEC60539], RULES-REFERENCE R5o: 33 620.6 Ω at 0 °C, 10 kΩ at 25 °C, 3 588.18 Ω at 50 °C
    for t_index, r_ntc in ((0, 33620.6), (d.nominal_index, 10e3), (-1, 3588.18)):
        assert d.rth[t_index] == pytest.approx(1 / (1 / 10e3 + 1 / r_ntc), rel=2e-5)
        assert d.vth_min[t_index] == pytest.approx(r_ntc / (10e3 + r_ntc), rel=2e-5)
    eq = d.equivalent()
    assert eq.kind == "ntc-divider"
    # extremes over the grid: the worked case (common practice) at 25 °C is 0.5 V with 5 kΩ
    assert d.vth_min[d.nominal_index] == pytest.approx(0.5) and d.rth[d.nominal_index] == pytest.approx(5000.0)
    assert eq.v_max == pytest.approx(33620.6 / 43620.6, rel=2e-5)
    assert eq.v_min == pytest.approx(3588.18 / 13588.18, rel=2e-5)


def test_same_rail_twice_is_not_a_divider(tmp_path):
    c = _circuit(tmp_path, """rails: {VCC: {voltage: 5 V}}
components:
  RA: {kind: resistor, value: 10k, pins: {1: GND, 2: X}}
  RB: {kind: resistor, value: 10k, pins: {1: X, 2: GND}}
  U1: {kind: opamp, part: P, pins: {in+: X, in-: O, out: O, v+: VCC, v-: GND}}
loads: {O: {resistance: 10k}}
""")
    assert find_dividers(c, ["X"], frozenset(c.kinds)) == {}


def test_declared_sources(tmp_path):
    c = _circuit(tmp_path, """rails: {VCC: {voltage: 5 V, tolerance: 2%}}
components:
  S1: {kind: signal_source, dc: [0.2 V, 0.8 V], ac_amplitude: 5 mV, band: [1 Hz, 2 kHz], source_resistance: 2k,
       pins: {p: PROBE, n: GND}}
  V1: {kind: vsource, value: 1.25 V, pins: {p: REF, n: GND}}
  R1: {kind: resistor, value: 10k, pins: {1: PROBE, 2: IN}}
  R2: {kind: resistor, value: 10k, pins: {1: REF, 2: IN}}
  U1: {kind: opamp, part: P, pins: {in+: IN, in-: O, out: O, v+: VCC, v-: GND}}
  R3: {kind: resistor, value: 10k, pins: {1: EXT, 2: IN}}
signals: {EXT: {dc: [-1 V, 1 V], source_resistance: 50, band: [0, 10 kHz]}}
loads: {O: {resistance: 10k}}
""")
    s = boundary_source(c, "PROBE")
    assert (s.kind, s.refs, s.v_min, s.v_max, s.r_max, s.ac_amplitude, s.f_max) == (
        "signal-source", ("S1",), 0.2, 0.8, 2000.0, 0.005, 2000.0)
    e = boundary_source(c, "EXT")
    assert (e.kind, e.v_min, e.v_max, e.r_min, e.f_max) == ("signal", -1.0, 1.0, 50.0, 10e3)
    v = boundary_source(c, "REF")
    assert (v.kind, v.refs, v.v_min, v.r_max) == ("vsource", ("V1",), 1.25, 0.0)
    r = boundary_source(c, "VCC")
    assert (r.kind, r.v_min, r.v_max) == ("rail", pytest.approx(4.9), pytest.approx(5.1))
    assert boundary_source(c, "GND") is None
    # an op-amp output with no upstream result yet is reported as unknown, never guessed
    assert boundary_source(c, "O").kind == "unknown"
