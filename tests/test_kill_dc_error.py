"""DC error terms by hand: assumed tolerances, a reference's tolerance, the drift span, the offset's split point."""

from __future__ import annotations

import pytest

from afecheck.analysis.dc_error import analyse_dc_error
from afecheck.model.load import load_design

# A non-inverting stage of gain 1 + RF/RG = 10 with A0 = 1e5: each term is the closed-loop formula G = 1 + RF/RG
# (S. Franco, "Design with Operational Amplifiers and Analog Integrated Circuits", 4th ed., ch. 1, from memory)
# scaled by 1/(1 + G/A0) = 1 − 1e-4, hence the relative tolerance 1e-3 below. Outputs stay within ±7.5 V.
STAGE = """
afecheck: 1
name: dc error by hand
{temperature}
parts:
  P:
    gbw: 1 MHz
    open_loop_gain: 1e5
    output_resistance: 0
    input_resistance_diff: 1e15
    input_resistance_cm: 1e15
    offset_voltage: {vos}
    offset_drift: 2 uV/K
    bias_current: {ib}
    offset_current: {ios}
rails: {{VP: {{voltage: 15 V}}, VN: {{voltage: -15 V}}}}
signals:
  IN: {{dc: [{lo}, {hi}]}}
components:
  U1: {{kind: opamp, part: P, pins: {{in+: IN, in-: FB, out: OUT, v+: VP, v-: VN}}}}
  RF: {{kind: resistor, value: 9k, {rf_tol}pins: {{1: OUT, 2: FB}}}}
  RG: {{kind: resistor, value: 1k, tolerance: 0, pins: {{1: FB, 2: GND}}}}
"""


def _stage(tmp_path, *, lo="0 V", hi="1 V", vos="0", rf_tol="tolerance: 1%, ",
           temperature="operating_temperature: [-15 °C, 65 °C]", ib="0", ios="0"):
    path = tmp_path / "d.yaml"
    path.write_text(STAGE.format(lo=lo, hi=hi, vos=vos, rf_tol=rf_tol, temperature=temperature, ib=ib, ios=ios),
                    encoding="utf-8")
    return analyse_dc_error(load_design(path), ["OUT"], nonlinearity=False).nets["OUT"]


def test_a_resistor_with_no_tolerance_is_taken_at_one_percent_and_said_so(tmp_path):
    # No tolerance declared on RF: the analysis assumes ±1 % (the common chip-resistor grade: common practice) and
    # lists RF.tolerance among its assumptions. RF × 1.01 moves the gain by 9 × 0.01 = 0.09 of the input: a gain
    # error of 0.09/10 = 0.9 % of the ideal span (hand calculation from G = 1 + RF/RG).
    res = _stage(tmp_path, rf_tol="")
    terms = {t.name: t for t in res.terms}
    assert terms["RF tolerance"].limit == pytest.approx(0.01)
    assert "RF.tolerance" in res.assumed
    assert terms["RF tolerance"].gain_error == pytest.approx(0.009, rel=1e-3)
    # a declared 0 % is no term at all (nothing moves), and nothing is assumed
    exact = _stage(tmp_path, rf_tol="tolerance: 0, ")
    assert "RF tolerance" not in {t.name for t in exact.terms} and "RF.tolerance" not in exact.assumed


@pytest.mark.parametrize(("lo", "hi", "offset"), [
    # The offset is the term's error where the ideal output crosses 0 V when the range holds that point, else at
    # mid-scale (afecheck.analysis.dc_error). RF +1 % gives an error of 0.09·Vin (hand calculation above):
    ("0 V", "0.5 V", 0.0),         # zero at the low end (exact boundary): 0.09 × 0 = 0
    ("-0.5 V", "0 V", 0.0),        # zero at the high end (exact boundary): 0
    ("-0.5 V", "0.5 V", 0.0),      # zero inside: 0
    ("0.25 V", "0.75 V", 0.045),   # no zero in range: at mid-scale, 0.09 × 0.5 V = 0.045 V
    ("-0.75 V", "-0.25 V", -0.045),  # likewise below zero: 0.09 × (−0.5 V)
])
def test_the_offset_is_read_at_zero_scale_or_else_at_mid_scale(tmp_path, lo, hi, offset):
    res = _stage(tmp_path, lo=lo, hi=hi)
    rf = {t.name: t for t in res.terms}["RF tolerance"]
    assert rf.offset == pytest.approx(offset, abs=1e-5)
    assert rf.gain_error == pytest.approx(0.009, rel=1e-3)


def test_a_zero_span_gives_the_larger_end_error_and_no_gain_error(tmp_path):
    # A signal fixed at 0.5 V has no span, so no gain error can be split off: the offset is the term's error there,
    # 0.09 × 0.5 V = 0.045 V for RF +1 % (hand calculation above), and no gain-error total exists.
    res = _stage(tmp_path, lo="0.5 V", hi="0.5 V")
    rf = {t.name: t for t in res.terms}["RF tolerance"]
    assert rf.offset == pytest.approx(0.045, rel=1e-3)
    assert rf.gain_error is None
    assert res.gain_error_worst is None and res.gain_error_rss is None


@pytest.mark.parametrize(("temperature", "delta_t"), [
    ("operating_temperature: [-40 °C, 70 °C]", 65.0),   # 25 − (−40) = 65 K beats 70 − 25 = 45 K
    ("operating_temperature: [0 °C, 105 °C]", 80.0),    # 105 − 25 = 80 K beats 25 − 0 = 25 K
    ("operating_temperature: [30 °C, 50 °C]", 25.0),    # both above 25 °C: the further end, 25 K
])
def test_drift_runs_from_25_c_to_the_further_end_of_the_operating_range(tmp_path, temperature, delta_t):
    # Offset drift 2 µV/K over ΔT from 25 °C (where part data are stated: common practice) to the further end of
    # the range, times the noise gain 10 (Franco, as above): 2e-6 × ΔT × 10 at the output (hand calculation).
    res = _stage(tmp_path, temperature=temperature)
    drift = {t.name: t for t in res.drift_terms}
    assert drift["U1 offset drift"].limit == pytest.approx(2e-6 * delta_t)
    assert drift["U1 offset drift"].offset == pytest.approx(2e-6 * delta_t * 10, rel=1e-3)
    assert res.drift_worst == pytest.approx(2e-6 * delta_t * 10, rel=1e-3)


def test_no_operating_range_means_no_drift(tmp_path):
    # Without an operating range there is no temperature span, so every drift term is zero and none is listed.
    res = _stage(tmp_path, temperature="")
    assert res.drift_terms == () and res.drift_worst == 0.0 and res.temperature_range is None


def test_totals_are_the_linear_sum_and_the_root_sum_square(tmp_path):
    # Input 0.25..0.75 V (no zero in range, so offsets are read at mid-scale, 0.5 V). Vos = 1 mV gives 10 mV at the
    # output (noise gain 10); RF +1 % gives 0.09 × 0.5 V = 45 mV; finite A0 = 1e5 gives −G/A0 × 5 V = −0.5 mV.
    # Worst case 10 + 45 + 0.5 = 55.5 mV; RSS √(10² + 45² + 0.5²) = 46.10 mV (hand calculation; the linear sum and
    # the root-sum-square of a tolerance budget: common practice).
    res = _stage(tmp_path, lo="0.25 V", hi="0.75 V", vos="1 mV")
    assert res.offset_worst == pytest.approx(0.0555, rel=1e-3)
    assert res.offset_rss == pytest.approx((0.010**2 + 0.045**2 + 0.0005**2) ** 0.5, rel=1e-3)
    # gain errors: RF +0.9 % and finite A0 −G/A0 = −0.01 %: worst 0.91 %, RSS √(0.9² + 0.01²) %
    assert res.gain_error_worst == pytest.approx(0.0091, rel=1e-3)
    assert res.gain_error_rss == pytest.approx((0.009**2 + 0.0001**2) ** 0.5, rel=1e-3)
    # the exact corners, the extremes over both ends against the ideal amplifier: at 0.75 V, RF ±1 % and Vos ±1 mV
    # together give ±(0.09 × 0.75 + 0.010) = ±0.0775 V, shifted by the finite gain's −G/A0 × 7.5 V = −0.75 mV
    assert res.corner_high == pytest.approx(0.0775 - 0.00075, rel=2e-3)
    assert res.corner_low == pytest.approx(-0.0775 - 0.00075, rel=2e-3)


def test_bias_and_offset_currents_at_the_inverting_input(tmp_path):
    # in+ sits on the 0 Ω signal, so only the current into in− matters: it is drawn through RF from OUT (RG's
    # current is set by V(FB) = Vin), so Vout moves by +Ib·RF = 10 nA × 9 kΩ = +90 µV (Kirchhoff, hand calculation);
    # the offset current enters in− as −Ios/2 (Ib− = Ib − Ios/2, Franco as above, ch. 5), −1 nA × 9 kΩ = −9 µV
    res = _stage(tmp_path, ib="10 nA", ios="2 nA")
    terms = {t.name: t for t in res.terms}
    assert terms["U1 bias current"].limit == pytest.approx(10e-9)
    assert terms["U1 bias current"].offset == pytest.approx(90e-6, rel=1e-3)
    assert terms["U1 offset current"].limit == pytest.approx(1e-9)
    assert terms["U1 offset current"].offset == pytest.approx(-9e-6, rel=1e-3)


@pytest.mark.parametrize("a0", [1e5, 1e6, 1e7])
def test_the_finite_gain_term_keeps_its_sign_and_size_for_high_gain_parts(tmp_path, a0):
    # Closed-loop output G·Vin/(1 + G/A0) (Franco, as above): the finite gain moves the 7.5 V end by
    # −7.5 × (G/A0)/(1 + G/A0) with G = 10, i.e. −0.75 mV, −75 µV and −7.5 µV. A single solve at A0 × 1e6 as the
    # ideal reference lost those digits (at A0 = 1e7: +0.44 mV, the wrong sign); 1 % covers the solver's rounding
    # at A0 = 1e7, where the whole term is one part in a million of the output.
    path = tmp_path / "d.yaml"
    path.write_text(STAGE.replace("open_loop_gain: 1e5", f"open_loop_gain: {a0:g}").format(
        lo="0 V", hi="0.75 V", vos="0", rf_tol="tolerance: 0, ", temperature="", ib="0", ios="0"), encoding="utf-8")
    res = analyse_dc_error(load_design(path), ["OUT"], nonlinearity=False).nets["OUT"]
    term = {t.name: t for t in res.terms}["U1 finite open-loop gain"]
    g = 10.0
    assert term.error_high == pytest.approx(-7.5 * (g / a0) / (1 + g / a0), rel=1e-2)
    assert term.gain_error == pytest.approx(-(g / a0) / (1 + g / a0), rel=1e-2)
