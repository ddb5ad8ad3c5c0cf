"""Stability causes: the isolation resistor against the E12 table, the input-capacitance zero and its neutralising
capacitor by hand (Franco), the second-pole and sensor-capacitance causes and the words of their fixes."""

from __future__ import annotations

import math

import pytest
from fixtures.rules import kit

from afecheck.checks.stability import phase_margin
from afecheck.checks.stability.causes import (
    STRAY_CAPACITANCE,
    input_zero,
    isolation_resistor,
    second_pole,
    sensor_capacitance,
)
from afecheck.engine.context import Context

# IEC 60063, E12 series (one decade), typed from the standard's table
IEC_60063_E12 = (10, 12, 15, 18, 22, 27, 33, 39, 47, 56, 68, 82)


@pytest.mark.parametrize("value", IEC_60063_E12)
def test_an_output_resistance_that_is_an_e12_value_is_suggested_as_is(value: int) -> None:
    # Riso ≈ Ro (common practice), rounded to the nearest E12 value: an Ro that already is one comes back unchanged
    assert isolation_resistor(float(value)) == pytest.approx(value, rel=1e-12)


def test_between_two_e12_values_the_nearer_on_a_log_scale_wins() -> None:
    # 30 Ω lies between 27 and 33: ln(33/30) = 0.0953 is less than ln(30/27) = 0.1054, so 33 Ω is nearer
    assert isolation_resistor(30.0) == pytest.approx(33.0)
    # 100 Ω and above: the top of the 10..100 Ω window
    assert isolation_resistor(100.0) == pytest.approx(100.0) and isolation_resistor(1e3) == pytest.approx(100.0)


def _ctx(loaded):
    return Context(loaded).for_rule(phase_margin.META)


def test_input_zero_needs_both_feedback_and_gain_resistors() -> None:
    # the zero 1/(2π·(Rf‖Rg)·(Cg + Cf)) exists only with a resistor to the output (Rf) and one elsewhere (Rg)
    rf = {"RF": {"kind": "resistor", "value": 10e3, "pins": {"1": "INM", "2": "OUT"}}}
    rg = {"RG": {"kind": "resistor", "value": 10e3, "pins": {"1": "INM", "2": "GND"}}}
    st = kit.stage(topology="non-inverting")
    assert input_zero(_ctx(kit.design(rf)), st) is None
    assert input_zero(_ctx(kit.design(rg)), st) is None
    cause = input_zero(_ctx(kit.design(rf | rg)), st)
    # Cg = 3 pF + 3 pF (KIT-AMP) + 1 pF stray = 7 pF, Rf‖Rg = 5 kΩ: 1/(2π·5k·7p) = 4.547 MHz (hand calculation)
    assert cause.frequency == pytest.approx(1 / (2 * math.pi * 5e3 * 7e-12), rel=1e-12)


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
