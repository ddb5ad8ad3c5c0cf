"""Declared sensors in circuits: what afecheck derives against ngspice, the standards' tables and arithmetic.

Bridge: afecheck's corner extremes of a loaded full bridge against ngspice operating points of a hand-written deck
(not afecheck's exporter), arm values from the Wheatstone arrangement (K. Hoffmann, "An Introduction to
Measurements using Strain Gages", HBM, 1989). RTD: a divider's range against the IEC 60751:2022 table values.
Thermocouple: the channel's input range against the NIST Monograph 175 (ITS-90) table values.
"""

from __future__ import annotations

import math
import re
import subprocess
import sys
from pathlib import Path

import pytest
from ngspice_harness import needs_ngspice, run_ngspice

from afecheck.analysis import analyse
from afecheck.model.load import load_design
from afecheck.sensors.expand import bridge_view, divider_self_heating_c, thermocouple_view

SAMPLES = Path(__file__).resolve().parent.parent / "sample_designs"
# an op-amp with no offsets and a gain of 1e6, as the deck has (1e9 loses digits to rounding in ngspice)
IDEAL = ("  IDEAL: {gbw: 1 MHz, open_loop_gain: 1e6, output_resistance: 0, input_resistance_diff: 1T, "
         "input_resistance_cm: 1T, bias_current: 0, offset_current: 0, offset_voltage: 0}\n")


def _design(tmp_path: Path, rails: str, components: str) -> Path:
    path = tmp_path / "d.yaml"
    path.write_text(f"afecheck: 1\nname: t\nparts:\n{IDEAL}rails:\n{rails}components:\n{components}", encoding="utf-8")
    return path


BRIDGE_RAILS = "  VEXC: {voltage: 5 V, tolerance: 2%}\n  VCC: {voltage: 12 V}\n  VEE: {voltage: -12 V}\n"
BRIDGE_PARTS = """  B1: {kind: bridge, arrangement: full, resistance: 350, sensitivity: 2 mV/V, measurand: [0, 50],
       unit: kg, span: 50, pins: {exc+: VEXC, exc-: GND, out+: SP, out-: SN}}
  R1: {kind: resistor, value: 1k, pins: {1: SP, 2: P}}
  R2: {kind: resistor, value: 10k, pins: {1: P, 2: GND}}
  R3: {kind: resistor, value: 1k, pins: {1: SN, 2: M}}
  R4: {kind: resistor, value: 10k, pins: {1: M, 2: OUT}}
  U1: {kind: opamp, part: IDEAL, pins: {in+: P, in-: M, out: OUT, v+: VCC, v-: VEE}}
"""


def _bridge_deck(corners: list[tuple[float, float]]) -> str:
    """One copy of the loaded bridge and difference amplifier per (excitation, x) corner, arms written out:
    full bridge, top-left R(1−x), bottom-left R(1+x), top-right R(1+x), bottom-right R(1−x)."""
    lines = ["* full bridge into a difference amplifier, one copy per corner"]
    for i, (v, x) in enumerate(corners):
        lines += [f"V{i} e{i} 0 {v!r}", f"Rtl{i} e{i} sp{i} {350 * (1 - x)!r}", f"Rbl{i} sp{i} 0 {350 * (1 + x)!r}",
                  f"Rtr{i} e{i} sn{i} {350 * (1 + x)!r}", f"Rbr{i} sn{i} 0 {350 * (1 - x)!r}",
                  f"R1_{i} sp{i} p{i} 1k", f"R2_{i} p{i} 0 10k", f"R3_{i} sn{i} m{i} 1k", f"R4_{i} m{i} out{i} 10k",
                  f"E{i} out{i} 0 p{i} m{i} 1e6"]
    prints = " ".join(f"v(out{i}) v(sp{i})" for i in range(len(corners)))
    return "\n".join(lines) + f"\n.control\nset numdgt=15\nop\nprint {prints}\nquit 0\n.endc\n.end\n"


@pytest.mark.ngspice
@needs_ngspice
def test_bridge_corner_extremes_match_ngspice_with_the_excitation_shared_by_both_halves(tmp_path: Path) -> None:
    result = analyse(load_design(_design(tmp_path, BRIDGE_RAILS, BRIDGE_PARTS)))
    corners = [(v, x) for v in (4.9, 5.1) for x in (0.0, 0.002)]  # 2 mV/V full bridge: x = 2e-3 at full scale
    text, _ = run_ngspice(_bridge_deck(corners), tmp_path)
    values = {k.lower(): float(v) for k, v in re.findall(r"^\s*(v\(\w+\))\s*=\s*([-+0-9.eE]+)", text, re.M)}
    outs = [values[f"v(out{i})"] for i in range(len(corners))]
    sps = [values[f"v(sp{i})"] for i in range(len(corners))]
    out, sp = result.nets["OUT"], result.nets["SP"]
    assert out.dc_min == pytest.approx(min(outs), rel=1e-6, abs=1e-9)
    assert out.dc_max == pytest.approx(max(outs), rel=1e-6, abs=1e-9)
    assert sp.dc_min == pytest.approx(min(sps), rel=1e-6, abs=1e-9)
    assert sp.dc_max == pytest.approx(max(sps), rel=1e-6, abs=1e-9)
    # ratiometric: at zero load the output is zero at either excitation, so the lowest output is 0, not a
    # difference of two halves taken at opposite rail ends
    assert abs(out.dc_min) < 1e-9


def test_bridge_view_states_range_output_resistance_and_slope_per_kilogram() -> None:
    loaded_bridge = load_design(SAMPLES / "load_cell_scale.yaml").sensors["LC1"]
    view = bridge_view("LC1", loaded_bridge, 3.3)
    # zero offset 0.1 mV/V, span 2 mV/V over 50 kg at 3.3 V: 0.33 mV .. 6.93 mV; 3.3 V·2 mV/V / 50 kg = 132 µV/kg
    assert view.range_v[0] == pytest.approx(0.33e-3, rel=1e-3)
    assert view.range_v[1] == pytest.approx(6.93e-3, rel=1e-3)
    assert view.slope_v_per_unit == pytest.approx(132e-6, rel=1e-3)
    assert view.in_units(13.2e-6) == pytest.approx(0.1, rel=1e-3)  # 13.2 µV at the input equals 0.1 kg
    # each mid-point sees two 350 Ω arms in parallel; the output resistance is the two halves in series (the
    # zero offset's arm moves it by 0.01 %)
    assert view.rth[0] == pytest.approx(350.0, rel=2e-4) and view.common_mode_v == pytest.approx(1.65)


@pytest.mark.parametrize(("wiring", "lead"), [("4-wire", 0.0), ("2-wire", 2 * 1.5), ("3-wire", 1.5)])
def test_rtd_divider_range_matches_iec_60751_table(tmp_path: Path, wiring: str, lead: float) -> None:
    rails = "  VREF: {voltage: 2.5 V}\n  VCC: {voltage: 12 V}\n  VEE: {voltage: -12 V}\n"
    parts = (f"  R1: {{kind: resistor, value: 1k, pins: {{1: VREF, 2: T}}}}\n"
             f"  RT1: {{kind: rtd, r0: 100, temperature: [-50, 150], class: A, wiring: {wiring}, "
             f"lead_resistance: 1.5, pins: {{1: T, 2: GND}}}}\n"
             "  U1: {kind: opamp, part: IDEAL, pins: {in+: T, in-: OUT, out: OUT, v+: VCC, v-: VEE}}\n")
    result = analyse(load_design(_design(tmp_path, rails, parts)))
    # IEC 60751 table, Pt100: 80.31 Ω at -50 °C, 157.33 Ω at 150 °C (0.01 Ω resolution: ±0.005 Ω)
    lo, hi = (2.5 * (r + lead) / (1000.0 + r + lead) for r in (80.31, 157.33))
    tol = 2.5 * 1000.0 / 1080.0 ** 2 * 0.005
    assert result.nets["OUT"].dc_min == pytest.approx(lo, abs=tol)
    assert result.nets["OUT"].dc_max == pytest.approx(hi, abs=tol)


def test_thermocouple_channel_input_is_e_hot_minus_e_cold_over_both_ranges() -> None:
    loaded = load_design(SAMPLES / "kiln_thermocouple.yaml")
    result = analyse(loaded)
    (source,) = [i.source for s in result.stages for i in s.inputs if i.source.net == "TCP"]
    # NIST Monograph 175, type K: 20 °C 0.798 mV, 45 °C 1.817 mV, 10 °C 0.397 mV, 1200 °C 48.838 mV
    assert source.v_min == pytest.approx((0.798 - 1.817) * 1e-3, abs=1e-6)
    assert source.v_max == pytest.approx((48.838 - 0.397) * 1e-3, abs=1e-6)
    assert source.r_min == pytest.approx(40.0)
    view = thermocouple_view("TC1", loaded.sensors["TC1"])
    # Seebeck coefficient of type K at mid-range (610 °C) against the table's chord 500..700 °C (20.644 mV,
    # 29.129 mV): the chord differs from the tangent by the curvature, well under 1 %
    assert view.slope_v_per_unit == pytest.approx((29.129e-3 - 20.644e-3) / 200.0, rel=1e-2)


def test_self_heating_of_a_divider_sensor_by_arithmetic() -> None:
    # Pt1000 below 4.99 kΩ from 2.5 V at 300 °C (2120.5 Ω by IEC 60751): I = 2.5/7110.5 Ω = 351.6 µA,
    # P = I²·R = 262.1 µW; with 2 mW/K, ΔT = 0.131 °C. Over 0..300 °C the largest power is at the top end.
    rise = divider_self_heating_c(2.5, 4990.0, (1000.0, 2120.5), 2e-3)
    assert rise == pytest.approx((2.5 / 7110.5) ** 2 * 2120.5 / 2e-3, rel=1e-9)
    assert rise == pytest.approx(0.131, abs=5e-4)
    # the power peaks where the sensor matches the top resistor: inside the range it is V²/(4R)
    assert divider_self_heating_c(2.0, 1000.0, (500.0, 2000.0), 1e-3) == pytest.approx(1.0 / 1000.0 / 1e-3)


def _divider_out(tmp_path: Path, sensor: str) -> tuple[float, float]:
    rails = "  VREF: {voltage: 2.5 V}\n  VCC: {voltage: 12 V}\n  VEE: {voltage: -12 V}\n"
    parts = ("  R1: {kind: resistor, value: 10k, pins: {1: VREF, 2: T}}\n"
             f"  RT1: {{{sensor}, pins: {{1: T, 2: GND}}}}\n"
             "  U1: {kind: opamp, part: IDEAL, pins: {in+: T, in-: OUT, out: OUT, v+: VCC, v-: VEE}}\n")
    out = analyse(load_design(_design(tmp_path, rails, parts))).nets["OUT"]
    return out.dc_min, out.dc_max


def test_ntc_from_three_points_reproduces_them_in_a_divider(tmp_path: Path) -> None:
    # three points of a 10 kΩ, B 3950 K part by the Beta model (IEC 60539-1): the Steinhart-Hart curve passes
    # through them exactly (Steinhart & Hart 1968), so the divider ends equal V·R/(10k + R) at 0 °C and 50 °C
    r = {t: 10e3 * math.exp(3950.0 * (1 / (t + 273.15) - 1 / 298.15)) for t in (0.0, 25.0, 50.0)}
    pts = ", ".join(f"[{t}, {v!r}]" for t, v in r.items())
    lo, hi = _divider_out(tmp_path, f"kind: ntc, points: [{pts}], temperature: [0, 50]")
    # (the follower's gain of 1e6 leaves 1e-6 relative)
    assert lo == pytest.approx(2.5 * r[50.0] / (10e3 + r[50.0]), rel=3e-6)
    assert hi == pytest.approx(2.5 * r[0.0] / (10e3 + r[0.0]), rel=3e-6)
    beta_lo, beta_hi = _divider_out(tmp_path, "kind: ntc, r25: 10k, beta: 3950, temperature: [0, 50]")
    assert (lo, hi) == pytest.approx((beta_lo, beta_hi), rel=1e-6)


def test_ntc_with_two_models_is_refused_with_exit_status_2(tmp_path: Path) -> None:
    path = _design(tmp_path, "  VREF: {voltage: 2.5 V}\n",
                   "  RT1: {kind: ntc, r25: 10k, beta: 3950, steinhart_hart: [1e-3, 2e-4, 1e-7], "
                   "pins: {1: VREF, 2: GND}}\n")
    proc = subprocess.run([sys.executable, "-m", "afecheck", "check", str(path)], capture_output=True, text=True)
    assert proc.returncode == 2
    assert "exactly one model" in proc.stderr + proc.stdout and "Traceback" not in proc.stderr
