"""Stability causes: the isolation resistor against the E12 table, the input-capacitance zero and its neutralising
capacitor by hand (Franco), the second-pole and sensor-capacitance causes and the words of their fixes."""

from __future__ import annotations

import math

import pytest
from fixtures.rules import kit

from afecheck.checks.stability import feedback_sign, gain_margin, min_stable_gain, phase_margin
from afecheck.checks.stability.causes import (
    STRAY_CAPACITANCE,
    input_zero,
    isolation_resistor,
    load_pole,
    main_cause,
    second_pole,
    sensor_capacitance,
)
from afecheck.engine.context import Context
from afecheck.engine.finding import Severity

# IEC 60063, E12 series (one decade), typed from the standard's table
IEC_60063_E12 = (10, 12, 15, 18, 22, 27, 33, 39, 47, 56, 68, 82)


@pytest.mark.parametrize("value", IEC_60063_E12)
def test_an_output_resistance_that_is_an_e12_value_is_suggested_as_is(value: int) -> None:
    # Riso ≈ Ro (common practice), rounded to the nearest E12 value: an Ro that already is one comes back unchanged
    assert isolation_resistor(float(value)) == pytest.approx(value, rel=1e-12)


def test_between_two_e12_values_the_nearer_on_a_log_scale_wins() -> None:
    # 30 Ω lies between 27 and 33: ln(33/30) = 0.0953 is less than ln(30/27) = 0.1054, so 33 Ω is nearer
    assert isolation_resistor(30.0) == pytest.approx(33.0)
    # 95 Ω: 100 Ω (the next decade's first value) is nearer than 82 Ω
    assert isolation_resistor(95.0) == pytest.approx(100.0)
    # 100 Ω and above: the top of the 10..100 Ω window
    assert isolation_resistor(100.0) == pytest.approx(100.0) and isolation_resistor(1e3) == pytest.approx(100.0)


def _ctx(loaded):
    return Context(loaded).for_rule(phase_margin.META)


def test_input_zero_needs_both_feedback_and_gain_resistors() -> None:
    # the zero 1/(2π·(Rf‖Rg)·(Cg + Cf)) exists only with a resistor to the output (Rf) and one elsewhere (Rg)
    rf = {"RF": {"kind": "resistor", "value": 30e3, "pins": {"1": "INM", "2": "OUT"}}}
    rg = {"RG": {"kind": "resistor", "value": 10e3, "pins": {"1": "INM", "2": "GND"}}}
    cg = {"CG": {"kind": "capacitor", "value": 10e-12, "pins": {"1": "INM", "2": "GND"}}}
    st = kit.stage(topology="non-inverting")
    assert input_zero(_ctx(kit.design(rf)), st) is None
    assert input_zero(_ctx(kit.design(rg)), st) is None
    cause = input_zero(_ctx(kit.design(rf | rg)), st)
    # Cg = 3 pF + 3 pF (KIT-AMP) + 1 pF stray = 7 pF, Rf‖Rg = 30k‖10k = 7.5 kΩ: 1/(2π·7.5k·7p) = 3.03 MHz
    # (hand calculation)
    assert cause.frequency == pytest.approx(1 / (2 * math.pi * 7.5e3 * 7e-12), rel=1e-12)
    # a 10 pF capacitor from in- to ground adds to Cg: 17 pF, 1.248 MHz
    cause = input_zero(_ctx(kit.design(rf | rg | cg)), st)
    assert cause.frequency == pytest.approx(1 / (2 * math.pi * 7.5e3 * 17e-12), rel=1e-12)
    assert "17.0 pF at INM" in cause.text
    # a feedback capacitor counts too: 3 pF across Rf makes Cg + Cf = 10 pF, 2.122 MHz
    cf = {"CF": {"kind": "capacitor", "value": 3e-12, "pins": {"1": "INM", "2": "OUT"}}}
    cause = input_zero(_ctx(kit.design(rf | rg | cf)), st)
    assert cause.frequency == pytest.approx(1 / (2 * math.pi * 7.5e3 * 10e-12), rel=1e-12)


def test_a_feedback_capacitor_at_the_neutralising_value_is_not_asked_for_again() -> None:
    # Cf = Cg·Rg/Rf cancels the input-capacitance zero (Franco, 4th ed., ch. 8, input-capacitance compensation);
    # with Rf = 20 kΩ, Rg = 10 kΩ and Cg = 7 pF that is 3.5 pF: exactly there, no capacitor is suggested
    cg = (3e-12 + 3e-12) + 0.0 + STRAY_CAPACITANCE
    neutral = cg * 10e3 / 20e3

    def design(cf: float):
        return kit.design({"RF": {"kind": "resistor", "value": 20e3, "pins": {"1": "INM", "2": "OUT"}},
                           "RG": {"kind": "resistor", "value": 10e3, "pins": {"1": "INM", "2": "GND"}},
                           "CF": {"kind": "capacitor", "value": cf, "pins": {"1": "INM", "2": "OUT"}}})
    st = kit.stage(topology="non-inverting")
    assert input_zero(_ctx(design(neutral)), st).fix.startswith("lower resistor values")
    below = input_zero(_ctx(design(math.nextafter(neutral, 0.0))), st)
    assert below.fix.startswith("capacitor of about 3.50 pF across RF")


def test_second_pole_cause_quotes_the_noise_gain_at_crossover() -> None:
    loaded = kit.design()
    cause = second_pole(_ctx(loaded), kit.stage(noise_gain_at_crossover=2.5, noise_gain_dc=4.0))
    assert "noise gain 2.5 at crossover" in cause.text and "3.00 MHz" in cause.text  # KIT-AMP second pole 3 MHz
    assert "resistor between INP and INM" in cause.fix
    cause = second_pole(_ctx(loaded), kit.stage(noise_gain_at_crossover=None, noise_gain_dc=4.0))
    assert "noise gain 4 at crossover" in cause.text
    # a transimpedance stage raises its noise gain with a smaller feedback capacitor, 1 + Cs/Cf (common practice)
    tia = second_pole(_ctx(loaded), kit.stage(topology="transimpedance", noise_gain_at_crossover=2.0))
    assert "smaller feedback capacitor from OUT to INM" in tia.fix


def test_sensor_capacitance_cause_only_for_a_transimpedance_stage_with_a_computed_capacitor() -> None:
    assert sensor_capacitance(kit.stage(topology="transimpedance")) is None
    assert sensor_capacitance(kit.stage(topology="inverting", feedback_capacitance_for_margin=2e-12)) is None
    cause = sensor_capacitance(kit.stage(topology="transimpedance", feedback_capacitance_for_margin=2e-12))
    assert "2.00 pF" in cause.fix and cause.kind == "sensor-capacitance"


def test_a_lag_exactly_three_times_above_the_second_pole_is_not_the_cause() -> None:
    # main_cause names a load pole or input zero only below 3× the op-amp's second pole (there it costs more phase
    # at crossover than the second pole itself, common practice); KIT-AMP: f2 = 3 MHz, Ro = 100 Ω, so a load pole at
    # 9 MHz needs CL = 1/(2π·100·9 MHz) = 176.8 pF
    loaded = kit.design()
    ctx = _ctx(loaded)
    cl = 1.0 / (2.0 * math.pi * 100.0 * 9e6)
    while 1.0 / (2.0 * math.pi * 100.0 * cl) < 9e6:
        cl = math.nextafter(cl, 0.0)
    while 1.0 / (2.0 * math.pi * 100.0 * cl) > 9e6:
        cl = math.nextafter(cl, 1.0)
    assert load_pole(ctx, kit.stage(load_capacitance=cl)).frequency == 9e6
    assert main_cause(ctx, kit.stage(load_capacitance=cl)).kind == "second-pole"
    assert main_cause(ctx, kit.stage(load_capacitance=math.nextafter(cl, 1.0))).kind == "load"


def test_phase_margin_needs_both_the_margin_and_the_crossover() -> None:
    # either number missing: the rule says it could not judge the loop instead of guessing (never a silent pass)
    for changes in ({"phase_margin_deg": None, "crossover_hz": 1e6}, {"phase_margin_deg": 30.0, "crossover_hz": None}):
        (f,) = kit.run(phase_margin, kit.design(), [kit.stage(**changes)])
        assert f.confidence == "not-evaluated" and f.message.startswith("U1 phase margin not evaluated")


def test_gain_margin_limits_and_the_words_at_0_db() -> None:
    # warning below 6 dB, error below 0 dB (common practice; gain margin as in Gray, Hurst, Lewis, Meyer, 5th ed.)
    (f,) = kit.run(gain_margin, kit.design(), [kit.stage(gain_margin_db=4.0)])
    assert f.severity is Severity.WARNING and (f.ctx["limit"], f.ctx["margin"]) == (6.0, -2.0)
    assert "gain margin 4.0 dB (limit 6 dB): a small rise in loop gain would oscillate" in f.message
    (f,) = kit.run(gain_margin, kit.design(), [kit.stage(gain_margin_db=-2.0)])
    assert f.severity is Severity.ERROR and (f.ctx["limit"], f.ctx["margin"]) == (0.0, -2.0)
    assert "the loop gain exceeds 1 where its phase reaches -180°" in f.message
    # exactly 0 dB: |T| is 1 at −180°, it does not exceed 1; at 0.5 dB it is below 1
    for gm in (0.0, 0.5):
        (f,) = kit.run(gain_margin, kit.design(), [kit.stage(gain_margin_db=gm)])
        assert "a small rise in loop gain would oscillate" in f.message


def test_minimum_stable_gain_only_for_negative_feedback_and_a_declared_minimum() -> None:
    decomp = kit.design(part={"min_stable_gain": 5.0})
    assert kit.run(min_stable_gain, decomp, [kit.stage(feedback="positive", noise_gain_at_crossover=1.0)]) == []
    assert kit.run(min_stable_gain, kit.design(part={"min_stable_gain": None}),
                   [kit.stage(noise_gain_at_crossover=1.0)]) == []


def test_minimum_stable_gain_names_a_feedback_capacitor_only_when_it_drops_the_noise_gain() -> None:
    # noise gain falling from DC to high frequency by more than 10 % (below 0.9×) is blamed on 1 + Cg/Cf; exactly
    # 0.9× (10 → 9) or no high-frequency figure is the signal gain's doing
    decomp = kit.design(part={"min_stable_gain": 5.0})
    for hf, blamed in ((None, False), (9.0, False), (math.nextafter(9.0, 0.0), True)):
        st = kit.stage(noise_gain_at_crossover=2.0, noise_gain_dc=10.0, noise_gain_hf=hf)
        (f,) = kit.run(min_stable_gain, decomp, [st])
        assert ("a feedback capacitor drops it" in f.message) is blamed
        assert ("the signal gain sets it too low" in f.message) is not blamed
        assert (f.ctx["value"], f.ctx["limit"], f.ctx["margin"]) == (2.0, 5.0, -3.0)


def test_feedback_findings_carry_the_computed_return_ratio() -> None:
    # the value printed is T(0), the return ratio at DC (Bode, 1945); when the analysis has none it is 0
    cap = {"C1": {"kind": "capacitor", "value": 1e-9, "pins": {"1": "INM", "2": "OUT"}}}
    (f,) = kit.run(feedback_sign, kit.design(cap), [kit.stage(feedback="none", loop_gain_dc=2e-6)])
    assert (f.ctx["value"], f.ctx["margin"]) == (2e-6, 2e-6) and "(T(0) = 2e-06)" in f.message
    (f,) = kit.run(feedback_sign, kit.design(cap), [kit.stage(feedback="none", loop_gain_dc=None)])
    assert (f.ctx["value"], f.ctx["margin"]) == (0.0, 0.0) and "T(0)" not in f.message
    (f,) = kit.run(feedback_sign, kit.design(), [kit.stage(feedback="positive", loop_gain_dc=-3.0)])
    assert (f.ctx["value"], f.ctx["margin"]) == (-3.0, -3.0)
    (f,) = kit.run(feedback_sign, kit.design(), [kit.stage(feedback="none", loop_gain_dc=None)])
    assert (f.ctx["value"], f.ctx["margin"]) == (0.0, 0.0) and "runs open loop" in f.message
