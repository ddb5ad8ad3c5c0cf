"""Distortion rules on StageResult objects and small designs, checked against
RULES-REFERENCE R3/R4 check values with thresholds on both sides."""

from __future__ import annotations

import math

import pytest
from fixtures.rules.kit import design, net, run, source, stage, stage_input

from afecheck.checks.distortion import (
    class2_ceramic,
    common_mode_swing,
    input_impedance_imbalance,
    loop_gain_at_fmax,
    slew_rate,
    transition_region,
)
from afecheck.checks.distortion.class2_ceramic import rc_fraction
from afecheck.checks.distortion.loop_gain_at_fmax import amplitude_error
from afecheck.checks.distortion.transition_region import transition_window
from afecheck.engine.finding import Severity

RRIO = {"input_stage": "rail-to-rail-complementary", "input_cm_low": -0.1, "input_cm_high": -0.1,
        "transition_below_vplus": 1.3, "transition_width": 0.4, "transition_offset_step": 0.5e-3}


def test_transition_window_defaults_on_5_v() -> None:
    assert transition_window(5.0, 1.3, 0.4) == pytest.approx((3.3, 4.1))  # [DER] R3 check value


def test_follower_swinging_through_the_transition_is_flagged_and_inverting_is_not() -> None:
    # common practice worked pair (issue); [DER] R3: follower 0..4 V crosses [3.3, 4.1] V, dVos 0.5 mV over 2 V peak
    loaded = design(part=RRIO)
    [f] = run(transition_region, loaded, [stage(topology="follower", vcm_min=0.0, vcm_max=4.0)])
    assert f.severity == Severity.WARNING and f.ctx["distortion"] == pytest.approx(2.5e-4)
    assert "-72 dB" in f.message and "3.30 V..4.10 V" in f.message
    inverting = stage(topology="inverting", in_plus="REF", vcm_min=3.7, vcm_max=3.7, vout_min=0.5, vout_max=4.5)
    assert run(transition_region, loaded, [inverting]) == []


@pytest.mark.parametrize(("lo", "hi", "hit"), [(1.0, 3.29, False), (1.0, 3.31, True), (4.11, 4.9, False),
                                               (4.09, 4.9, True)])
def test_transition_window_edges(lo: float, hi: float, hit: bool) -> None:
    assert bool(run(transition_region, design(part=RRIO), [stage(vcm_min=lo, vcm_max=hi)])) is hit


def test_single_pair_input_has_no_transition() -> None:
    assert run(transition_region, design(), [stage(vcm_min=0.0, vcm_max=4.0)]) == []


def test_common_mode_swing_through_80_db_cmrr() -> None:
    # [DER] R4a: CMRR 80 dB, 2 Vpp CM -> 200 µVpp input-referred; follower, budget 0.5 mV -> 25 % = 125 µV
    loaded = design(part={"cmrr": 1e4}, budgets={"OUT": {"offset": 0.5e-3}})
    s = stage(topology="follower", vcm_min=1.0, vcm_max=3.0)
    [f] = run(common_mode_swing, loaded, [s])
    assert f.ctx["input_error"] == pytest.approx(200e-6) and f.ctx["limit"] == pytest.approx(125e-6)
    roomy = design(part={"cmrr": 1e4}, budgets={"OUT": {"offset": 1e-3}})
    assert run(common_mode_swing, roomy, [s]) == []  # 200 µV < 250 µV


def test_common_mode_swing_against_half_an_adc_lsb() -> None:
    # [DER] R5c: 12-bit 3.3 V ADC LSB 0.8057 mV -> half LSB 402.8 µV
    adc = {"OUT": {"adc": {"full_scale": 3.3, "bits": 12, "sample_rate": 1e5}}}
    s = stage(topology="non-inverting", noise_gain_dc=2.0, vcm_min=0.5, vcm_max=1.5)
    [f] = run(common_mode_swing, design(part={"cmrr": 10 ** 3.6}, loads=adc), [s])  # 72 dB: 2·1 V/3981 = 502 µV
    assert f.ctx["limit"] == pytest.approx(0.5 * 3.3 / 4096)
    assert run(common_mode_swing, design(part={"cmrr": 1e4}, loads=adc), [s]) == []  # 200 µV
    assert run(common_mode_swing, design(part={"cmrr": 1e3}), [s]) == []  # no budget, no ADC: nothing to judge


@pytest.mark.parametrize(("gbw", "ng", "f", "t_db", "ae", "expected"), [
    (1e6, 10, 20e3, 13.98, 1.942e-2, Severity.ERROR),     # [DER] R4c table row 1
    (10e6, 2, 20e3, 47.96, 8e-6, None),                   # [DER] R4c table row 2
    (10e6, 11, 100e3, 19.17, 0.60e-2, Severity.ERROR),    # [DER] R4c table row 3
])
def test_loop_gain_at_fmax_published_rows(gbw: float, ng: float, f: float, t_db: float, ae: float,
                                           expected: Severity | None) -> None:
    t = gbw / (ng * f)  # [FR] single-pole region
    assert 20 * math.log10(t) == pytest.approx(t_db, abs=0.01)
    assert amplitude_error(t) == pytest.approx(ae, rel=0.02)
    found = run(loop_gain_at_fmax, design(), [stage(f_max=f, loop_gain_at_fmax=t)])
    assert [x.severity for x in found] == ([] if expected is None else [expected])


@pytest.mark.parametrize(("t", "expected"), [(100.0, None), (99.0, Severity.WARNING), (10.0, Severity.WARNING),
                                             (9.9, Severity.ERROR)])
def test_loop_gain_thresholds(t: float, expected: Severity | None) -> None:
    found = run(loop_gain_at_fmax, design(), [stage(f_max=1e3, loop_gain_at_fmax=t)])
    assert [x.severity for x in found] == ([] if expected is None else [expected])


def test_loop_gain_not_computed_is_not_evaluated_and_no_signal_is_silent() -> None:
    [f] = run(loop_gain_at_fmax, design(), [stage(f_max=1e3, loop_gain_at_fmax=None)])
    assert f.confidence == "not-evaluated"
    assert run(loop_gain_at_fmax, design(), [stage(f_max=0.0)]) == []


@pytest.mark.parametrize(("sr", "expected"), [(1.2e6, Severity.ERROR), (1.26e6, Severity.WARNING),
                                              (2.5e6, Severity.WARNING), (2.52e6, None)])
def test_slew_rate_thresholds_around_1_257_v_per_us(sr: float, expected: Severity | None) -> None:
    # [DER] R4d: 10 V peak at 20 kHz needs 1.257 V/µs; warning below twice that
    found = run(slew_rate, design(part={"slew_rate": sr}), [stage(vout_ac_peak=10.0, f_max=20e3)])
    assert [x.severity for x in found] == ([] if expected is None else [expected])
    if found:
        assert found[0].ctx["required"] == pytest.approx(1.2566e6, rel=1e-4)


def test_slew_rate_message_gives_full_power_bandwidth() -> None:
    # [DER] R4d: SR 0.5 V/µs at 10 V peak -> FPBW 7.958 kHz
    [f] = run(slew_rate, design(part={"slew_rate": 0.5e6}), [stage(vout_ac_peak=10.0, f_max=20e3)])
    assert f.ctx["full_power_bandwidth"] == pytest.approx(7.958e3, rel=1e-3) and "7.96 kHz" in f.message
    assert "1.26 V/µs" in f.message


def test_unknown_slew_rate_is_not_evaluated() -> None:
    [f] = run(slew_rate, design(part={"slew_rate": None}), [stage(vout_ac_peak=1.0, f_max=1e3)])
    assert f.confidence == "not-evaluated" and f.severity == Severity.INFO


def test_rc_fraction_published_values() -> None:
    assert rc_fraction(1e3, 1e3, 10e-9) == pytest.approx(0.9980, abs=1e-4)  # [DER] R4f low-pass
    assert rc_fraction(1e3, 10e3, 10e-6) == pytest.approx(0.001592, rel=1e-3)  # [DER] R4f coupling at 1 kHz
    assert rc_fraction(20.0, 10e3, 10e-6) == pytest.approx(0.07933, rel=1e-3)  # [DER] R4f coupling at 20 Hz


def c2_design(dielectric: str, band: tuple[float, float], extra: dict | None = None) -> object:
    comps = {"R7": {"kind": "resistor", "value": 1e3, "pins": {1: "SIG", 2: "FLT"}},
             "C7": {"kind": "capacitor", "value": 10e-9, "dielectric": dielectric, "pins": {1: "FLT", 2: "GND"}},
             "C8": {"kind": "capacitor", "value": 100e-9, "dielectric": "X7R", "pins": {1: "VCC", 2: "GND"}},
             **(extra or {})}
    return design(comps, signals={"SIG": {"dc": [0, 1], "ac_amplitude": 0.5, "band": list(band)}})


def test_class_2_filter_capacitor_is_flagged_and_c0g_and_decoupling_are_not() -> None:
    [f] = run(class2_ceramic, c2_design("X7R", (1e3, 10e3)), [])
    assert f.location.refs == ("C7",) and f.ctx["position"] == "filter"
    assert f.ctx["value"] == pytest.approx(0.9980, abs=1e-4)  # [DER] R4f
    assert run(class2_ceramic, c2_design("C0G", (1e3, 10e3)), []) == []


def test_class_2_coupling_capacitor_both_sides_of_the_band_edge() -> None:
    # [DER] R4f: 10 µF into 10 kΩ: 0.1592 % at 1 kHz (pass), 7.933 % at 20 Hz (warning)
    coupling = {"C9": {"kind": "capacitor", "value": 10e-6, "dielectric": "X5R", "pins": {1: "SIG", 2: "INP"}},
                "R9": {"kind": "resistor", "value": 10e3, "pins": {1: "INP", 2: "GND"}}}
    [f] = run(class2_ceramic, c2_design("C0G", (20.0, 10e3), coupling), [])
    assert f.location.refs == ("C9",) and f.ctx["value"] == pytest.approx(0.07933, rel=1e-3)
    assert run(class2_ceramic, c2_design("C0G", (1e3, 10e3), coupling), []) == []


def test_class_2_feedback_capacitor_has_the_full_signal_across_it() -> None:
    fb = {"C3": {"kind": "capacitor", "value": 1e-9, "dielectric": "Y5V", "pins": {1: "INM", 2: "OUT"}}}
    [f] = run(class2_ceramic, c2_design("C0G", (10.0, 1e3), fb), [])
    assert f.ctx["position"] == "feedback" and f.ctx["value"] == 1.0


def test_no_declared_band_means_no_signal_to_distort() -> None:
    loaded = design({"C7": {"kind": "capacitor", "value": 10e-9, "dielectric": "X7R", "pins": {1: "INM", 2: "OUT"}}})
    assert run(class2_ceramic, loaded, []) == []


def imbalance_case(rs: float, vcm_pk: float = 2.0, f: float = 20e3, ib: float = 10e-12) -> list:
    loaded = design(part={"bias_current": ib, "input_capacitance_cm": 5e-12})
    s = stage(topology="follower", f_max=f, inputs=(stage_input("in+", source("SIG", rs, rs, f_max=f)),))
    return run(input_impedance_imbalance, loaded, [s], nets={"INP": net("INP", 2.5, 2.5, ac=vcm_pk, f_max=f)})


def test_impedance_imbalance_estimate_matches_published_order_of_magnitude() -> None:
    # [DER] R4g: f 20 kHz, |Z+ - Z-| 10 kΩ, Ccm 5 pF -> 2πf·R·C = 6.283e-3
    [f] = imbalance_case(10e3)
    assert f.severity == Severity.WARNING and f.ctx["error_fraction"] == pytest.approx(6.283e-3, rel=1e-3)


@pytest.mark.parametrize(("kwargs", "hit"), [
    ({"rs": 1000.0}, False), ({"rs": 1001.0}, True),                   # imbalance threshold 1 kΩ [CP]
    ({"rs": 10e3, "vcm_pk": 1.0}, False), ({"rs": 10e3, "f": 1e3}, False),  # CM swing and frequency gates [CP]
    ({"rs": 10e3, "ib": 1e-9}, False),                                  # bipolar input: not this mechanism
])
def test_impedance_imbalance_gates(kwargs: dict, hit: bool) -> None:
    assert bool(imbalance_case(**kwargs)) is hit
