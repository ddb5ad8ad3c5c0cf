"""Sensor self-heating: the power the excitation puts into an NTC or RTD, against hand calculation.

ΔT = P/δ with δ the dissipation constant (IEC 60751:2022 for platinum sensors, IEC 60539-1 for thermistors);
the current by Ohm's law on the divider or from the excitation current; RTD tolerance classes ±(a + b·|t|) °C and
resistances from IEC 60751 (Callendar-Van Dusen, A = 3.9083e-3, B = -5.775e-7); the NTC's slope from the Beta
model, dlnR/dT = −B/T².
"""

from __future__ import annotations

from pathlib import Path

import pytest
from ngspice_harness import needs_ngspice, parse_print, run_ngspice

from afecheck.api import check_file
from afecheck.model.load import load_design
from afecheck.sensors.expand import divider_self_heating_c
from afecheck.sensors.self_heating import self_heating

SAMPLES = Path(__file__).resolve().parent.parent / "sample_designs"
RULE = "dc-accuracy.sensor-self-heating"


def _design(tmp_path: Path, rails: str, components: str, extra: str = "") -> Path:
    path = tmp_path / "d.yaml"
    rails = f"rails:\n{rails}" if rails else "rails: {}\n"
    path.write_text(f"afecheck: 1\nname: t\n{rails}components:\n{components}{extra}", encoding="utf-8")
    return path


def _cvd(r0: float, t: float) -> float:
    """IEC 60751 Callendar-Van Dusen above 0 °C, written out here."""
    return r0 * (1 + 3.9083e-3 * t - 5.775e-7 * t * t)


def test_pt1000_sample_by_ohms_law_at_the_reference_high_corner() -> None:
    h = self_heating(load_design(SAMPLES / "pt1000_process_probe.yaml"), "RT1")
    # worst share of class B (±(0.3 + 0.005|t|) °C) is at 0 °C: 1000 Ω element plus one 2 Ω lead (3-wire) below
    # 4.99 kΩ from 2.5 V + 0.1 %
    i = 2.5 * 1.001 / (4990.0 + 1000.0 + 2.0)
    assert h.temperature_c == 0.0 and h.accuracy_k == pytest.approx(0.3, abs=1e-12)
    # (to 1e-8: the op-amp's common-mode input resistance sits beside the sensor)
    assert h.current_a == pytest.approx(i, rel=1e-8)
    assert h.power_w == pytest.approx(i * i * 1000.0, rel=2e-8)  # the lead carries the current, it is not the element
    assert h.rise_k == pytest.approx(i * i * 1000.0 / 2e-3, rel=2e-8)


def test_general_method_equals_the_divider_formula(tmp_path: Path) -> None:
    # no tolerance class: the largest rise is reported, which for a divider is at R = R_top (maximum power transfer)
    path = _design(tmp_path, "  VREF: {voltage: 2.5 V}\n",
                   "  R1: {kind: resistor, value: 1.5k, pins: {1: VREF, 2: RTD}}\n"
                   "  RT1: {kind: rtd, r0: 1000, temperature: [0 °C, 300 °C], dissipation: 2 mW/K, "
                   "pins: {1: RTD, 2: GND}}\n", "loads:\n  RTD: {resistance: 1G}\n")
    h = self_heating(load_design(path), "RT1")
    assert h.accuracy_k is None
    # the 1 GΩ load sits in parallel with the sensor; the divider formula with the top resistor alone agrees to 1e-6
    expected = divider_self_heating_c(2.5, 1500.0, (_cvd(1000, 0), _cvd(1000, 300)), 2e-3)
    assert h.rise_k == pytest.approx(expected, rel=2e-4)  # the grid's 1.5 °C step near the peak at R = 1.5 kΩ
    assert h.rise_k <= expected * (1 + 1e-6)


def test_current_source_excitation_heats_by_i_squared_r_at_the_top_of_the_range(tmp_path: Path) -> None:
    # a Pt100, class A, fed 1 mA ± 10 % from a current source (a declared current signal into its node)
    path = _design(tmp_path, "",
                   "  RT1: {kind: rtd, r0: 100, temperature: [-50 °C, 400 °C], class: A, dissipation: 5 mW/K, "
                   "pins: {1: RTD, 2: GND}}\n",
                   "signals:\n  RTD: {kind: current, current: [0.9 mA, 1.1 mA]}\nloads:\n  RTD: {resistance: 1G}\n")
    h = self_heating(load_design(path), "RT1")
    assert h.norton_conductance_s == pytest.approx(1e-9, rel=1e-6)  # only the 1 GΩ load beside the ideal source
    # share = (1.1 mA)²·R(t)/δ / (0.15 + 0.002|t|): the arithmetic at the point the method picked, and no other
    # point of the range beats it
    t = h.temperature_c
    r = _cvd(100.0, t) if t >= 0 else h.resistance_ohm
    i = 1.1e-3 / (1 + 1e-9 * r)
    assert h.rise_k == pytest.approx(i * i * r / 5e-3, rel=1e-9)
    assert h.accuracy_k == pytest.approx(0.15 + 0.002 * abs(t), rel=1e-12)
    shares = [(1.1e-3) ** 2 * _cvd(100.0, x) / 5e-3 / (0.15 + 0.002 * x) for x in (0.0, 100.0, 200.0, 400.0)]
    assert h.rise_k / h.accuracy_k >= max(shares) * (1 - 1e-6)


def test_ntc_tolerance_becomes_degrees_by_the_beta_slope(tmp_path: Path) -> None:
    path = _design(tmp_path, "  VREF: {voltage: 2.5 V}\n",
                   "  R1: {kind: resistor, value: 10k, pins: {1: VREF, 2: TH}}\n"
                   "  RT1: {kind: ntc, r25: 10k, beta: 3950 K, tolerance: 1%, temperature: [25 °C, 25 °C], "
                   "dissipation: 1 mW/K, pins: {1: TH, 2: GND}}\n", "loads:\n  TH: {resistance: 1T}\n")
    h = self_heating(load_design(path), "RT1")
    assert h.accuracy_k == pytest.approx(0.01 / (3950.0 / 298.15 ** 2), rel=1e-6)  # about 0.225 °C
    assert h.rise_k == pytest.approx((1.25 ** 2 / 10e3) / 1e-3, rel=1e-6)  # half the reference across 10 kΩ


def _rtd_case(tmp_path: Path, dissipation_mw: float) -> list:
    path = _design(tmp_path, "  VREF: {voltage: 2.5 V}\n",
                   "  R1: {kind: resistor, value: 4.99k, pins: {1: VREF, 2: RTD}}\n"
                   f"  RT1: {{kind: rtd, r0: 1000, temperature: [0 °C, 0 °C], class: B, "
                   f"dissipation: {dissipation_mw} mW/K, pins: {{1: RTD, 2: GND}}}}\n",
                   "loads:\n  RTD: {resistance: 1T}\n")
    return [f for f in check_file(path).findings if f.rule == RULE]


def test_both_sides_of_each_threshold(tmp_path: Path) -> None:
    # 2.5 V across 5.99 kΩ: P = 1000·(2.5/5990)² = 174.2 µW; class B at 0 °C is ±0.30 °C, so the warning share 25 %
    # (0.075 °C) is crossed at δ = 2.322 mW/K and the error share 100 % (0.30 °C) at δ = 0.5806 mW/K
    p = 1000.0 * (2.5 / 5990.0) ** 2
    assert _rtd_case(tmp_path, p / 0.075 * 1e3 * 1.01) == []
    (warn,) = _rtd_case(tmp_path, p / 0.075 * 1e3 * 0.99)
    assert warn.severity.label == "warning" and warn.ctx["limit"] == pytest.approx(0.075)
    (warn,) = _rtd_case(tmp_path, p / 0.30 * 1e3 * 1.01)
    assert warn.severity.label == "warning"
    (err,) = _rtd_case(tmp_path, p / 0.30 * 1e3 * 0.99)
    assert err.severity.label == "error" and err.ctx["value"] == pytest.approx(p / (p / 0.30 * 0.99), rel=1e-8)
    assert "°C above what it measures" in err.message and "class B (IEC 60751)" in err.message


def test_no_class_or_tolerance_is_not_evaluated_with_the_rise_stated(tmp_path: Path) -> None:
    path = _design(tmp_path, "  VREF: {voltage: 2.5 V}\n",
                   "  R1: {kind: resistor, value: 4.99k, pins: {1: VREF, 2: RTD}}\n"
                   "  RT1: {kind: rtd, r0: 1000, temperature: [0 °C, 0 °C], dissipation: 2 mW/K, "
                   "pins: {1: RTD, 2: GND}}\n", "loads:\n  RTD: {resistance: 1T}\n")
    (f,) = [f for f in check_file(path).findings if f.rule == RULE]
    assert f.confidence == "not-evaluated" and "0.0871 °C" in f.message  # 174.2 µW / 2 mW/K


def _corner_deck(corners: list[tuple[float, float]], r_sensor: float) -> str:
    """The sensor's network, written by hand, one copy per (VCC, VNEG) corner; the sensor current is read from a
    0 V source in series with it."""
    lines = ["* sensor between two rails through a resistor network, one copy per rail corner"]
    for i, (vp, vn) in enumerate(corners):
        lines += [f"VP{i} p{i} 0 {vp!r}", f"VN{i} n{i} 0 {vn!r}", f"R1_{i} p{i} t{i} 2k", f"R3_{i} t{i} n{i} 3k",
                  f"VS{i} t{i} s{i} 0", f"RS{i} s{i} m{i} {r_sensor!r}", f"R2_{i} m{i} 0 1k", f"R4_{i} m{i} p{i} 10k"]
    prints = " ".join(f"i(vs{i})" for i in range(len(corners)))
    return "\n".join(lines) + f"\n.control\nset numdgt=15\nop\nprint {prints}\nquit 0\n.endc\n.end\n"


@pytest.mark.ngspice
@needs_ngspice
def test_worst_corner_current_matches_ngspice_over_every_rail_corner(tmp_path: Path) -> None:
    # a Pt1000 at 100 °C (1385.055 Ω, IEC 60751) fed from +5 V ± 5 % and -5 V ± 2 % through a resistor network:
    # the method's exact worst case must equal the largest current of the four rail corners ngspice solves
    path = _design(tmp_path, "  VCC: {voltage: 5 V, tolerance: 5%}\n  VNEG: {voltage: -5 V, tolerance: 2%}\n",
                   "  R1: {kind: resistor, value: 2k, pins: {1: VCC, 2: T}}\n"
                   "  R3: {kind: resistor, value: 3k, pins: {1: T, 2: VNEG}}\n"
                   "  RT1: {kind: rtd, r0: 1000, temperature: [100 °C, 100 °C], class: A, dissipation: 1 mW/K, "
                   "pins: {1: T, 2: M}}\n"
                   "  R2: {kind: resistor, value: 1k, pins: {1: M, 2: GND}}\n"
                   "  R4: {kind: resistor, value: 10k, pins: {1: M, 2: VCC}}\n",
                   "loads:\n  T: {resistance: 1T}\n  M: {resistance: 1T}\n")
    h = self_heating(load_design(path), "RT1")
    corners = [(vp, vn) for vp in (4.75, 5.25) for vn in (-4.9, -5.1)]
    text, _ = run_ngspice(_corner_deck(corners, _cvd(1000.0, 100.0)), tmp_path)
    currents = [abs(v) for v in parse_print(text).values()]
    assert len(currents) == 4
    assert abs(h.current_a) == pytest.approx(max(currents), rel=1e-6)
    assert h.power_w == pytest.approx(max(currents) ** 2 * _cvd(1000.0, 100.0), rel=2e-6)
