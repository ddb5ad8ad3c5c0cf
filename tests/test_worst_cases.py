"""Worst cases over the joint corner space (issue: exact worst cases), one named test per described failure.

Every expected number here is computed in the test itself from the circuit's closed-form ideal-op-amp equations
(Ohm and Kirchhoff; the Beta model of an NTC per IEC 60539) over a dense brute-force sweep of every corner,
never from afecheck's own corner list. Parts have A0 = 1e9 so the finite-gain error is below 1e-8 relative.
"""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest

from afecheck.analysis import analyse
from afecheck.model.load import load_design

T25 = 298.15


def ideal_part(vos: str = "0", ib: str = "0", ios: str = "0", extra: str = "") -> str:
    return ("{gbw: 10 MHz, open_loop_gain: 1e9, second_pole: 100 MHz, output_resistance: 0.001, "
            "input_resistance_diff: 1e18, input_resistance_cm: 1e18, input_capacitance_diff: 0, "
            f"input_capacitance_cm: 0, bias_current: {ib}, offset_current: {ios}, offset_voltage: {vos}{extra}}}")


def load(tmp_path, text: str, name: str = "d.yaml"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return load_design(path)


def ntc(r25: float, beta: float, t_c: np.ndarray) -> np.ndarray:
    """Beta model R(T) = R25·exp(B·(1/T − 1/298.15 K)) (IEC 60539)."""
    return r25 * np.exp(beta * (1.0 / (t_c + 273.15) - 1.0 / T25))


def ntc_divider(v: float, r25: float, beta: float, t_lo: float, t_hi: float, r_low: float):
    """An NTC from a rail over a fixed resistor to ground, on a dense temperature grid: (T, Vth, Rth)."""
    t = np.linspace(t_lo, t_hi, 20001)
    r_t = ntc(r25, beta, t)
    return t, v * r_low / (r_low + r_t), r_t * r_low / (r_t + r_low)


def follower(part: str, signal: str) -> str:
    """A follower on ±5 V rails reading the signal IN."""
    return f"""afecheck: 1
parts: {{P: {part}}}
rails:
  VP: {{voltage: 5 V}}
  VN: {{voltage: -5 V}}
components:
  U1: {{kind: opamp, part: P, pins: {{in+: IN, in-: OUT, out: OUT, v+: VP, v-: VN}}}}
signals:
  IN: {{{signal}}}
"""


def sensor_stage(net: str, rf: str, cf: str, signal: str) -> str:
    """A sensor on the inverting input of an op-amp with Rf || Cf feedback, in+ on ground, ±5 V rails."""
    return f"""afecheck: 1
parts: {{P: {ideal_part()}}}
rails:
  VP: {{voltage: 5 V}}
  VN: {{voltage: -5 V}}
components:
  R1: {{kind: resistor, value: {rf}, pins: {{1: {net}, 2: OUT}}}}
  C1: {{kind: capacitor, value: {cf}, pins: {{1: {net}, 2: OUT}}}}
  U1: {{kind: opamp, part: P, pins: {{in+: GND, in-: {net}, out: OUT, v+: VP, v-: VN}}}}
signals:
  {net}: {{{signal}}}
"""


def stage_of(a, ref):
    return next(s for s in a.stages if s.opamp == ref)


def test_reference_gain_that_moves_with_the_thermistor_is_swept_jointly(tmp_path) -> None:
    """Description 1: a thermistor divider feeds in- through R2 while a reference feeds in+; the reference's gain
    1 + R3/(R2 + Rth) moves with temperature too, so the output range comes from sweeping both together."""
    text = f"""afecheck: 1
parts: {{P: {ideal_part()}}}
rails:
  VCC: {{voltage: 5 V}}
  VREF: {{voltage: 1.25 V}}
components:
  RT1: {{kind: ntc, r25: 10k, beta: 3950 K, temperature: [-20 °C, 60 °C], pins: {{1: VCC, 2: TH}}}}
  R1: {{kind: resistor, value: 10k, pins: {{1: TH, 2: GND}}}}
  R2: {{kind: resistor, value: 4.7k, pins: {{1: TH, 2: FB}}}}
  R3: {{kind: resistor, value: 10k, pins: {{1: FB, 2: OUT}}}}
  U1: {{kind: opamp, part: P, pins: {{in+: VREF, in-: FB, out: OUT, v+: VCC, v-: GND}}}}
"""
    a = analyse(load(tmp_path, text))
    t, vth, rth = ntc_divider(5.0, 10e3, 3950.0, -20.0, 60.0, 10e3)
    g_ref = 1.0 + 10e3 / (4.7e3 + rth)  # gain from the reference, moving with temperature
    out = 1.25 * g_ref - vth * 10e3 / (4.7e3 + rth)
    u1 = stage_of(a, "U1")
    assert u1.vout_min == pytest.approx(out.min(), rel=1e-6)
    assert u1.vout_max == pytest.approx(out.max(), rel=1e-6)
    # the old way (only the thermistor input re-solved, the reference gain frozen at mid temperature) misses by
    # more than a tenth of a volt at an end
    mid = len(t) // 2
    frozen = 1.25 * g_ref[mid] - vth * 10e3 / (4.7e3 + rth)
    assert max(abs(frozen.min() - out.min()), abs(frozen.max() - out.max())) > 0.1


def test_bias_current_through_an_ntc_divider_uses_the_thevenin_resistance_at_each_temperature(tmp_path) -> None:
    """Description 1 (second part): Ib through the divider's Thevenin resistance, taken at each temperature."""
    text = f"""afecheck: 1
parts: {{P: {ideal_part(ib="200 nA", ios="40 nA")}}}
rails:
  VCC: {{voltage: 5 V}}
components:
  RT1: {{kind: ntc, r25: 100k, beta: 4250 K, temperature: [-40 °C, 85 °C], pins: {{1: VCC, 2: TH}}}}
  R1: {{kind: resistor, value: 100k, pins: {{1: TH, 2: GND}}}}
  U1: {{kind: opamp, part: P, pins: {{in+: TH, in-: OUT, out: OUT, v+: VCC, v-: GND}}}}
"""
    a = analyse(load(tmp_path, text))
    t, vth, rth = ntc_divider(5.0, 100e3, 4250.0, -40.0, 85.0, 100e3)
    ib_plus = 200e-9 + 40e-9 / 2  # Ib + Ios/2 into in+, either sign
    u1 = stage_of(a, "U1")
    assert u1.vout_min == pytest.approx((vth - rth * ib_plus).min(), rel=1e-6)
    assert u1.vout_max == pytest.approx((vth + rth * ib_plus).max(), rel=1e-6)
    # mid-temperature Rth would be off at the cold end by more than 3 % of the offset
    cold_offset = rth[0] * ib_plus
    mid_offset = rth[len(t) // 2] * ib_plus
    assert abs(cold_offset - mid_offset) / cold_offset > 0.03


def test_offset_voltage_acts_with_both_signs(tmp_path) -> None:
    """Description 2: a follower with 1 mV offset on a ±1 V input spans -1.001..1.001 V."""
    u1 = stage_of(analyse(load(tmp_path, follower(ideal_part(vos="1 mV"), "dc: [-1 V, 1 V]"))), "U1")
    assert (u1.vout_min, u1.vout_max) == (pytest.approx(-1.001, rel=1e-7), pytest.approx(1.001, rel=1e-7))


def test_bias_and_offset_currents_act_with_both_signs(tmp_path) -> None:
    """Description 2: Ib and Ios through a 1 MΩ source resistance on a follower, both polarities."""
    a = analyse(load(tmp_path, follower(ideal_part(ib="10 nA", ios="2 nA"), "dc: [0 V, 0 V], source_resistance: 1M")))
    u1 = stage_of(a, "U1")
    assert (u1.vout_min, u1.vout_max) == (pytest.approx(-11e-3, rel=1e-6), pytest.approx(11e-3, rel=1e-6))
    form = a.forms["OUT"].at()
    assert form.contribution("ib:U1") == (pytest.approx(-10e-3, rel=1e-6), pytest.approx(10e-3, rel=1e-6))
    assert form.contribution("ios:U1") == (pytest.approx(-1e-3, rel=1e-6), pytest.approx(1e-3, rel=1e-6))


def test_a_ratiometric_bridge_moves_with_its_rail(tmp_path) -> None:
    """Description 3: one rail is one value per corner: a bridge and its in-amp stay within a 5 V design."""
    text = f"""afecheck: 1
parts: {{P: {ideal_part()}}}
rails:
  VCC: {{voltage: 5 V, tolerance: 10%}}
components:
  RA1: {{kind: resistor, value: 10k, pins: {{1: VCC, 2: A}}}}
  RA2: {{kind: resistor, value: 10k, pins: {{1: A, 2: GND}}}}
  RB1: {{kind: resistor, value: 10k, pins: {{1: VCC, 2: B}}}}
  RT1: {{kind: ntc, r25: 10k, beta: 3450 K, temperature: [24 °C, 26 °C], pins: {{1: B, 2: GND}}}}
  R1: {{kind: resistor, value: 1k, pins: {{1: A, 2: M}}}}
  R2: {{kind: resistor, value: 100k, pins: {{1: M, 2: OUT}}}}
  R3: {{kind: resistor, value: 1k, pins: {{1: B, 2: P}}}}
  R4: {{kind: resistor, value: 100k, pins: {{1: P, 2: GND}}}}
  U1: {{kind: opamp, part: P, pins: {{in+: P, in-: M, out: OUT, v+: VCC, v-: GND}}}}
"""
    a = analyse(load(tmp_path, text))
    # brute force: every rail value and temperature; the whole network solved by Kirchhoff with an ideal op-amp
    outs, apart = [], []
    for vcc, t in itertools.product(np.linspace(4.5, 5.5, 11), np.linspace(24.0, 26.0, 401)):
        r_t = float(ntc(10e3, 3450.0, np.array([t]))[0])
        # B: RB1 from VCC, RT1 to ground, R3+R4 to ground; in+ = B·R4/(R3+R4)
        g_b = 1 / 10e3 + 1 / r_t + 1 / 101e3
        vb = (vcc / 10e3) / g_b
        vp = vb * 100e3 / 101e3
        # A: RA1 from VCC, RA2 to ground, R1 to M (= vp): KCL at A, then the feedback current through R2
        va = (vcc / 10e3 + vp / 1e3) / (2 / 10e3 + 1 / 1e3)
        outs.append(vp - (va - vp) / 1e3 * 100e3)
        # the same with leg A fed from the rail's other end: what independent rails would have allowed
        va_apart = ((10.0 - vcc) / 10e3 + vp / 1e3) / (2 / 10e3 + 1 / 1e3)
        apart.append(vp - (va_apart - vp) / 1e3 * 100e3)
    outs = np.array(outs)
    u1 = stage_of(a, "U1")
    assert u1.vout_min == pytest.approx(outs.min(), rel=1e-5, abs=1e-7)
    assert u1.vout_max == pytest.approx(outs.max(), rel=1e-5, abs=1e-7)
    assert -1.5 < u1.vout_min and u1.vout_max < 1.5
    assert max(np.abs(apart)) > 5.0  # independent rails would have asked for well beyond the 5 V supply
    assert "rail:VCC" in a.forms["OUT"].keys


def test_common_mode_on_ground_is_evaluated(tmp_path) -> None:
    """Description 6: a single 12 V supply, in+ on ground, a part whose common mode stops 1.5 V above V-."""
    from afecheck.api import check_design  # noqa: PLC0415 - the whole check, as a user runs it

    part = ideal_part(extra=", input_cm_low: 1.5 V, input_cm_high: 1.5 V")
    text = f"""afecheck: 1
parts: {{P: {part}}}
rails:
  VCC: {{voltage: 12 V}}
components:
  R1: {{kind: resistor, value: 10k, pins: {{1: IN, 2: M}}}}
  R2: {{kind: resistor, value: 100k, pins: {{1: M, 2: OUT}}}}
  U1: {{kind: opamp, part: P, pins: {{in+: GND, in-: M, out: OUT, v+: VCC, v-: GND}}}}
signals:
  IN: {{dc: [-50 mV, 0 V]}}
"""
    loaded = load(tmp_path, text)
    u1 = stage_of(analyse(loaded), "U1")
    assert (u1.vcm_min, u1.vcm_max) == (0.0, 0.0)
    report = check_design(loaded)
    cm = [f for f in report.findings if f.rule == "headroom.input-common-mode"]
    assert cm and cm[0].ctx["value"] == 0.0 and cm[0].ctx["margin"] == pytest.approx(-1.5)
    assert not [f for f in report.findings if f.rule == "coverage.not-evaluated" and "common mode" in f.message]


def test_common_mode_on_a_rail_is_the_rail_range(tmp_path) -> None:
    """Description 6: in+ tied to a toleranced reference rail: the common mode is that rail's range."""
    text = f"""afecheck: 1
parts: {{P: {ideal_part()}}}
rails:
  VCC: {{voltage: 5 V}}
  VMID: {{voltage: 2.5 V, tolerance: 2%}}
components:
  R1: {{kind: resistor, value: 10k, pins: {{1: IN, 2: M}}}}
  R2: {{kind: resistor, value: 10k, pins: {{1: M, 2: OUT}}}}
  U1: {{kind: opamp, part: P, pins: {{in+: VMID, in-: M, out: OUT, v+: VCC, v-: GND}}}}
signals:
  IN: {{dc: [2 V, 3 V]}}
"""
    u1 = stage_of(analyse(load(tmp_path, text)), "U1")
    assert (u1.vcm_min, u1.vcm_max) == (pytest.approx(2.45), pytest.approx(2.55))
    # out = 2·VMID − IN, both moving: 2·2.45 − 3 .. 2·2.55 − 2
    assert (u1.vout_min, u1.vout_max) == (pytest.approx(1.9, rel=1e-7), pytest.approx(3.1, rel=1e-7))


def test_affine_form_extremes_are_each_term_at_its_own_extreme() -> None:
    from afecheck.analysis.affine import AffineForm, Term

    f = AffineForm(1.0, {"rail:A": Term(2.0, -0.1, 0.1), "vos:U1": Term(-1000.0, -1e-3, 1e-3)})
    # 1 ± 0.2 ± 1: brute force over the four corners
    corners = [1.0 + 2.0 * a - 1000.0 * b for a in (-0.1, 0.1) for b in (-1e-3, 1e-3)]
    assert f.extremes() == (pytest.approx(min(corners)), pytest.approx(max(corners)))
    assert f.worst_case() == pytest.approx(1.2)
    assert math.isclose(f.contribution("rail:A")[1], 0.2)


def test_a_photodiode_is_a_current_source_into_a_transimpedance_stage(tmp_path) -> None:
    """Description 7: a photodiode declared as what it is; the stage reports its gain in V/A and no loading."""
    from afecheck.api import check_design  # noqa: PLC0415

    text = sensor_stage("PD", "100k", "10p", "kind: current, current: [0 A, 20 uA], ac_current: 1 uA, "
                        "band: [10 Hz, 10 kHz], capacitance: 50p, shunt_resistance: 1G")
    loaded = load(tmp_path, text)
    a = analyse(loaded)
    u1 = stage_of(a, "U1")
    (pd,) = u1.inputs
    assert u1.topology == "transimpedance" and pd.gain_unit == "V/A" and pd.source.kind == "current"
    # Kirchhoff at the virtual ground: Vout = -I·Rf (common practice; the shunt sees 0 V so it takes nothing)
    assert pd.gain == pytest.approx(-100e3, rel=1e-6)
    assert (u1.vout_min, u1.vout_max) == (pytest.approx(-2.0, rel=1e-6), pytest.approx(0.0, abs=1e-6))
    # in band the feedback is Rf || Cf: |Z| = Rf/sqrt(1 + (2π f Rf Cf)²), largest at the low edge
    assert pd.band_gain == pytest.approx(100e3 / math.sqrt(1 + (2 * math.pi * 10 * 100e3 * 10e-12) ** 2), rel=1e-5)
    report = check_design(loaded)
    loading = ("loading.inverting-input", "loading.input-divider", "dc-accuracy.bias-offset")
    assert not [f for f in report.findings if f.rule in loading]


def test_a_charge_amplifier_reports_volts_per_coulomb(tmp_path) -> None:
    """Description 7: a piezo (charge) sensor into a charge amplifier: gain -1/Cf in V/C in band."""
    text = sensor_stage("Q", "1G", "100p", "kind: charge, charge: 10 pC, capacitance: 1n, leakage_resistance: 10G, "
                        "band: [10 Hz, 1 kHz]")
    a = analyse(load(tmp_path, text))
    u1 = stage_of(a, "U1")
    (q,) = u1.inputs
    assert u1.topology == "charge-amplifier" and q.gain_unit == "V/C"
    # Vout/q = Zf·jω at the virtual ground: |.| = 1/Cf · 1/sqrt(1 + 1/(ωRfCf)²), largest at the band top
    w = 2 * math.pi * 1e3
    expected = 1 / 100e-12 / math.sqrt(1 + 1 / (w * 1e9 * 100e-12) ** 2)
    assert q.band_gain == pytest.approx(expected, rel=1e-5)
    assert a.nets["OUT"].ac_amplitude == pytest.approx(10e-12 * expected, rel=1e-5)


def test_signal_fields_of_another_kind_are_refused(tmp_path) -> None:
    from afecheck.errors import InputError

    text = """afecheck: 1
signals:
  PD: {kind: current, dc: [0 V, 1 V]}
"""
    with pytest.raises(InputError) as err:
        load(tmp_path, text)
    assert "a current signal takes no dc" in str(err.value.problems[0].message)


def test_swept_form_refines_an_interior_extreme_between_grid_points() -> None:
    """A value that peaks between temperature grid points: the parabola through the three points around the
    largest sample gives the true peak of a quadratic exactly (common practice: three-point vertex formula)."""
    from afecheck.analysis.affine import BASE_POINTS, SweptForm

    x = np.linspace(0.0, 1.0, BASE_POINTS)
    nominal = 2.0 - 5.0 * (x - 0.51) ** 2  # peak 2.0 at 0.51, off the grid
    gains = np.ones((BASE_POINTS, 1)) * 0.1
    form = SweptForm(("rail:A",), np.array([-1.0]), np.array([1.0]), ("RT1",), 1, nominal, gains)
    lo, hi = form.extremes()
    assert hi == pytest.approx(2.1, rel=1e-12)
    assert lo == pytest.approx(min(nominal) - 0.1, rel=1e-12)
    assert form.at().nominal == pytest.approx(2.0 - 5.0 * 0.01 ** 2)
    assert form.at().terms["rail:A"].gain == pytest.approx(0.1)
