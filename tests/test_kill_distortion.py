"""Distortion rules: where a class-2 ceramic capacitor sits decides whether its voltage coefficient matters."""

from __future__ import annotations

import math

import pytest
from fixtures.rules import kit

from afecheck.checks.distortion import (
    class2_ceramic,
    common_mode_swing,
    loop_gain_at_fmax,
    output_near_limit,
    slew_rate,
    transition_region,
)
from afecheck.checks.distortion.class2_ceramic import classify
from afecheck.engine.context import Context
from afecheck.engine.finding import Severity

BAND = {"SIG": {"band": [10.0, 1e3]}}


def _classify(components: dict, ref: str):
    loaded = kit.design(components, signals=BAND)
    return classify(Context(loaded).for_rule(class2_ceramic.META), ref)


def test_a_capacitor_from_a_stiff_output_to_ground_is_exempt() -> None:
    # the op-amp's loop forces the output voltage whatever the load capacitor's value does (common practice)
    for pins in ({"1": "OUT", "2": "GND"}, {"1": "GND", "2": "OUT"}):
        assert _classify({"CL": {"kind": "capacitor", "value": 1e-6, "dielectric": "X7R", "pins": pins}}, "CL") is None
    # across the feedback path, output to in−, it is part of the transfer function
    cf = {"CF": {"kind": "capacitor", "value": 1e-9, "dielectric": "X7R", "pins": {"1": "OUT", "2": "INM"}}}
    assert _classify(cf, "CF") == ("feedback", 0.0, 1.0)


def test_a_feedback_capacitor_works_against_no_resistance_and_the_default_limit_is_one_percent() -> None:
    # the whole output-to-in− voltage sits across a feedback capacitor: 100 % of the signal, against the rule's
    # default 1 % (a class-2 dielectric's voltage coefficient, common practice); no resistance is named
    cf = {"CF": {"kind": "capacitor", "value": 1e-9, "dielectric": "X7R", "pins": {"1": "OUT", "2": "INM"}}}
    (f,) = kit.run(class2_ceramic, kit.design(cf, signals=BAND), ())
    assert f.ctx["value"] == 1.0 and f.ctx["limit"] == 0.01 and f.ctx["margin"] == 0.01 - 1.0
    assert f.ctx["frequency"] == 10.0 and f.ctx["position"] == "feedback"  # the band's lowest frequency
    assert "sits in a feedback position with 100 % of the signal across it at 10.0 Hz (limit 1.00 %)" in f.message


def test_slew_rate_exactly_at_two_and_one_times_the_requirement() -> None:
    # the rule page: a warning below 2×, an error below 1× the required rate (factors: common practice); a part
    # exactly at a multiple is not below it. The analysis's required rate, 1 V/µs, is used as it is.
    st = kit.stage(required_slew_rate=1e6, f_max=0.0, vout_ac_peak=0.0)

    def severities(sr: float) -> list:
        return [f.severity for f in kit.run(slew_rate, kit.design(part={"slew_rate": sr}), [st])]

    assert severities(2e6) == [] and severities(math.nextafter(2e6, 0.0)) == [Severity.WARNING]
    assert severities(1e6) == [Severity.WARNING] and severities(math.nextafter(1e6, 0.0)) == [Severity.ERROR]
    (f,) = kit.run(slew_rate, kit.design(part={"slew_rate": 1.5e6}), [st])
    assert (f.ctx["limit"], f.ctx["margin"]) == (2e6, -0.5e6) and f.ctx["full_power_bandwidth"] == math.inf
    # the larger of the analysis's figure and 2π·f·Vpk: 5 V peak at 100 kHz needs 3.14 V/µs (Franco, 4th ed.)
    st = kit.stage(required_slew_rate=1e6, f_max=100e3, vout_ac_peak=5.0)
    (f,) = kit.run(slew_rate, kit.design(part={"slew_rate": 1e6}), [st])
    assert f.ctx["required"] == pytest.approx(2 * math.pi * 100e3 * 5.0, rel=1e-12)
    assert f.ctx["full_power_bandwidth"] == pytest.approx(1e6 / (2 * math.pi * 5.0), rel=1e-12)
    assert "against 3.14 V/µs needed" in f.message


def _cm_follower(**changes):
    return kit.stage(**{"topology": "follower", "noise_gain_dc": 1.0, "vcm_min": 1.0, "vcm_max": 3.0, **changes})


def test_common_mode_error_is_swing_over_cmrr_against_the_offset_budget() -> None:
    # NG·ΔVcm/CMRR (Franco, 4th ed., ch. 5): 1 × 2 V / 10^5 (100 dB) = 20 µV at the output. With the budget share
    # at 1 and a 20 µV offset budget the error equals its limit: passes; one float less budget: flagged
    def run(offset: float, **params):
        loaded = kit.design(budgets={"OUT": {"offset": offset}})
        return kit.run(common_mode_swing, loaded, [_cm_follower()], params=params or None)

    assert run(2e-5, budget_share=1.0) == []
    (f,) = run(math.nextafter(2e-5, 0.0), budget_share=1.0)
    assert f.ctx["value"] == 2e-5 and f.ctx["cm_swing_pp"] == 2.0 and f.ctx["input_error"] == 2e-5
    # default share 25 %: a 40 µV budget allows 10 µV, so 20 µV is 10 µV over
    (f,) = run(40e-6)
    assert f.ctx["limit"] == pytest.approx(10e-6, rel=1e-12) and f.ctx["margin"] == pytest.approx(-10e-6, rel=1e-9)
    assert "with CMRR 100 dB that is 20.0 µV at the input, 20.0 µV at OUT" in f.message
    assert "25.0 % of the 40.0 µV offset budget" in f.message


def test_common_mode_error_against_half_an_lsb_without_a_budget() -> None:
    # 12 bits over 4.096 V: 1 mV LSB, half of it 0.5 mV; CMRR 60 dB: 2 V / 1000 = 2 mV at a follower's output
    adc = {"OUT": {"adc": {"full_scale": 4.096, "bits": 12, "sample_rate": 1e4}}}
    (f,) = kit.run(common_mode_swing, kit.design(part={"cmrr": 1e3}, loads=adc), [_cm_follower()])
    assert f.ctx["limit"] == pytest.approx(0.5e-3, rel=1e-12) and f.ctx["value"] == pytest.approx(2e-3, rel=1e-12)
    assert "0.5 LSB of the 12-bit ADC" in f.message
    # a declared budget is what counts when there is one (1 mV budget × 25 % = 0.25 mV)
    both = kit.design(part={"cmrr": 1e3}, loads=adc, budgets={"OUT": {"offset": 1e-3}})
    (f,) = kit.run(common_mode_swing, both, [_cm_follower()])
    assert f.ctx["limit"] == pytest.approx(0.25e-3, rel=1e-12)
    # no swing at all (a constant common mode), or an inverting stage: nothing to judge
    assert kit.run(common_mode_swing, both, [_cm_follower(vcm_max=1.0)]) == []
    assert kit.run(common_mode_swing, both, [_cm_follower(topology="inverting")]) == []


def test_loop_gain_at_fmax_by_hand() -> None:
    # |T| = 10 (20 dB) at 10 kHz: 1 − 10/√101 = 0.496 % amplitude error (single-pole loop, T = −j·|T|; Gray, Hurst,
    # Lewis, Meyer, 5th ed.), below the 40 dB warning limit by 20 dB
    (f,) = kit.run(loop_gain_at_fmax, kit.design(), [kit.stage(f_max=10e3, loop_gain_at_fmax=10.0)])
    assert f.severity is Severity.WARNING and f.ctx["value"] == pytest.approx(20.0, abs=1e-12)
    assert (f.ctx["limit"], f.ctx["margin"]) == (40.0, pytest.approx(-20.0, abs=1e-12))
    assert f.ctx["amplitude_error"] == pytest.approx(1 - 10 / math.sqrt(101), rel=1e-12)
    assert "reduced only 10×, amplitude error about 0.496 %" in f.message
    # |T| = 5 (14 dB): an error against 20 dB; a complex T is judged by its magnitude
    (f,) = kit.run(loop_gain_at_fmax, kit.design(), [kit.stage(f_max=10e3, loop_gain_at_fmax=complex(3.0, -4.0))])
    assert f.severity is Severity.ERROR and f.ctx["loop_gain"] == 5.0 and f.ctx["limit"] == 20.0
    # no signal frequency or no negative feedback: nothing to judge; no loop gain: not evaluated
    assert kit.run(loop_gain_at_fmax, kit.design(), [kit.stage(f_max=0.0, loop_gain_at_fmax=5.0)]) == []
    assert kit.run(loop_gain_at_fmax, kit.design(), [kit.stage(f_max=1e3, feedback="positive")]) == []
    (f,) = kit.run(loop_gain_at_fmax, kit.design(), [kit.stage(f_max=1e3, loop_gain_at_fmax=None)])
    assert f.confidence == "not-evaluated"


RRIO = {"input_stage": "rail-to-rail-complementary", "transition_below_vplus": 1.25, "transition_width": 0.25,
        "transition_offset_step": 1e-4}


def test_transition_region_overlap_exactly_at_its_edges() -> None:
    # window V+ − 1.25 V ± 0.25 V on 5 V: 3.5..4.0 V (hand calculation, all exact in binary); touching an edge is
    # not crossing the region, the next float into it is
    loaded = kit.design(part=RRIO)

    def found(lo: float, hi: float) -> list:
        return kit.run(transition_region, loaded, [kit.stage(vcm_min=lo, vcm_max=hi, noise_gain_dc=2.0)])

    assert found(3.0, 3.5) == [] and len(found(3.0, math.nextafter(3.5, 5.0))) == 1
    assert found(4.0, 4.5) == [] and len(found(math.nextafter(4.0, 0.0), 4.5)) == 1
    assert found(3.75, 3.75) == []  # a constant common mode inside the region never crosses it
    # 3.0..4.0 V: 0.5 V peak; a 0.1 mV step is 2e-4 of it (−74 dB), 0.2 mV at the output at noise gain 2
    (f,) = found(3.0, 4.0)
    assert (f.ctx["window_low"], f.ctx["window_high"]) == (3.5, 4.0)
    assert f.ctx["distortion"] == pytest.approx(2e-4, rel=1e-12)
    assert f.ctx["output_step"] == pytest.approx(2e-4, rel=1e-12)
    assert (f.ctx["value"], f.ctx["limit"], f.ctx["margin"]) == (4.0, 3.5, -0.5) and "-74 dB" in f.message
    # a single-pair input has no transition region
    assert kit.run(transition_region, kit.design(), [kit.stage(vcm_min=3.0, vcm_max=4.0)]) == []


def test_near_swing_limit_measures_the_low_end_inward_from_its_limit() -> None:
    # distortion.near-swing-limit at the low end. KIT-AMP on 0..5 V with a 0.1 V output drop and no load current
    # (docs/FORMAT.md's drop + Rsat·I swing model): the lowest output is 0.1 V. Hand calculation: an output down to
    # 0.15 V is 0.05 V inside it, under the 0.1 V band (a warning quoting 50 mV); down to 0.25 V it is 0.15 V inside
    # (no finding); exactly at 0.1 V the margin is zero and still a warning (clipping is headroom.output-swing's).
    loaded = kit.design()
    (near,) = kit.run(output_near_limit, loaded, [kit.stage(vout_min=0.15, vout_max=2.0, iout_peak=0.0)])
    assert near.severity == Severity.WARNING
    assert near.ctx["margin"] == pytest.approx(0.05, abs=1e-12)
    assert near.ctx["limit"] == pytest.approx(0.1, abs=1e-12)
    assert "lowest swing limit" in near.message
    assert kit.run(output_near_limit, loaded, [kit.stage(vout_min=0.25, vout_max=2.0, iout_peak=0.0)]) == []
    (edge,) = kit.run(output_near_limit, loaded, [kit.stage(vout_min=0.1, vout_max=2.0, iout_peak=0.0)])
    assert edge.ctx["margin"] == pytest.approx(0.0, abs=1e-12)
