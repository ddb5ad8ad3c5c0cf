"""Loading rules on StageResult objects built directly: thresholds on both sides, numbers
checked against RULES-REFERENCE R1/R5b formulas and the issue's worked thermistor pair."""

from __future__ import annotations

import math

import pytest
from fixtures.rules.kit import design, run, source, stage, stage_input

from afecheck.checks.loading import bias_current_offset, input_divider_error, inverting_source_loading
from afecheck.checks.loading.bias_current_offset import bias_offset
from afecheck.checks.loading.input_divider_error import divider_error
from afecheck.engine.finding import Severity

RG_RF = {"R1": {"kind": "resistor", "value": 10e3, "pins": {1: "TH", 2: "INM"}},
         "R2": {"kind": "resistor", "value": 20e3, "pins": {1: "INM", 2: "OUT"}}}


def inverting(rs_min: float, rs_max: float, ri: float = 10e3) -> object:
    return stage(topology="inverting", in_plus="REF", noise_gain_dc=3.0,
                 inputs=(stage_input("in-", source("TH", rs_min, rs_max, kind="ntc-divider"), ("R1",), ri),))


def test_thermistor_divider_into_inverting_input_loses_a_third_of_the_gain() -> None:
    # common practice worked pair (issue): ~5 kΩ Thevenin into a 10 kΩ input resistor -> about 33 %
    loaded = design(RG_RF)
    [f] = run(inverting_source_loading, loaded, [inverting(1.2e3, 5e3)])
    assert f.severity == Severity.ERROR
    assert f.ctx["value"] == pytest.approx(5e3 / 15e3)  # [FR] e = Rs/(Rs + Ri)
    assert "33.3 %" in f.message and "nonlinearity" in f.message
    assert f.ctx["error_min"] == pytest.approx(1.2e3 / 11.2e3)
    assert f.location.refs[0] == "R1"


def test_same_thermistor_into_non_inverting_stage_is_not_a_loading_problem() -> None:
    # common practice worked pair (issue): the non-inverting input draws only bias current
    loaded = design({"R1": {"kind": "resistor", "value": 10e3, "pins": {1: "INM", 2: "GND"}},
                     "R2": {"kind": "resistor", "value": 10e3, "pins": {1: "INM", 2: "OUT"}}})
    s = stage(noise_gain_dc=2.0, vout_min=0.5, vout_max=4.0,
              inputs=(stage_input("in+", source("TH", 1.2e3, 5e3, kind="ntc-divider", f_max=10.0)),))
    for rule in (inverting_source_loading, input_divider_error, bias_current_offset):
        assert run(rule, loaded, [s]) == []


@pytest.mark.parametrize(("rs", "expected"), [
    (10.00, None), (10.02, Severity.WARNING),  # 0.1 % at Rs = Ri·0.001/0.999 = 10.010 Ω [DER]
    (101.0, Severity.WARNING), (101.1, Severity.ERROR),  # 1 % at Rs = Ri/99 = 101.01 Ω [DER]
])
def test_inverting_loading_thresholds_both_sides(rs: float, expected: Severity | None) -> None:
    found = run(inverting_source_loading, design(RG_RF), [inverting(rs, rs)])
    assert [f.severity for f in found] == ([] if expected is None else [expected])
    if found:
        assert "nonlinearity" not in found[0].message  # constant Rs: a gain error only


def test_inverting_loading_parameters_move_the_thresholds() -> None:
    found = run(inverting_source_loading, design(RG_RF), [inverting(101.1, 101.1)], params={"error_fraction": 0.02})
    assert [f.severity for f in found] == [Severity.WARNING]


def test_divider_error_matches_published_dc_and_ac_forms() -> None:
    assert divider_error(10e3, 1e9, 0.0, 0.0) == pytest.approx(10.00e-6, rel=1e-3)  # [DER] R1 check value
    assert divider_error(10e3, 1e12, 0.0, 0.0) == pytest.approx(0.01000e-6, rel=1e-3)  # [DER] R1 check value
    wrc = 2 * math.pi * 10e3 * 1e6 * 6e-12
    # [FR][DER] R1: e(f) = |1 - 1/(1 + j2πf·Rs·Cin)| when Rcm -> ∞
    assert divider_error(1e6, 1e18, 6e-12, 10e3) == pytest.approx(wrc / math.sqrt(1 + wrc ** 2), rel=1e-9)


def follower_from(rs: float, f: float) -> object:
    return stage(topology="follower", inputs=(stage_input("in+", source("SIG", rs, rs, f_max=f)),))


@pytest.mark.parametrize(("f", "expected"), [
    # KIT-AMP Cin = 6 pF, Rs = 100 kΩ: e ≈ 2πf·Rs·Cin; 0.1 % near 265.3 Hz, 1 % near 2.653 kHz [DER]
    (250.0, None), (280.0, Severity.WARNING), (2.60e3, Severity.WARNING), (2.70e3, Severity.ERROR),
])
def test_non_inverting_divider_thresholds_both_sides(f: float, expected: Severity | None) -> None:
    found = run(input_divider_error, design(), [follower_from(100e3, f)])
    assert [x.severity for x in found] == ([] if expected is None else [expected])


def test_divider_error_message_carries_the_numbers_and_series_resistor() -> None:
    loaded = design({"R5": {"kind": "resistor", "value": 900e3, "pins": {1: "SIG", 2: "INP"}}})
    s = stage(topology="follower", inputs=(stage_input("in+", source("SIG", 100e3, 100e3, f_max=10e3), ("R5",)),))
    [f] = run(input_divider_error, loaded, [s])
    wrc = 2 * math.pi * 10e3 * 1e6 * 6e-12  # Rs = 100 kΩ source + 900 kΩ series
    assert f.ctx["source_resistance"] == pytest.approx(1e6)
    assert f.ctx["value"] == pytest.approx(wrc / math.sqrt(1 + wrc ** 2), rel=1e-4)  # [FR][DER]
    assert "35.3 %" in f.message and f.location.refs == ("R5", "U1")


def test_divider_rule_marks_assumed_part_values_and_caps_at_warning() -> None:
    loaded = design(part={"input_capacitance_cm": None})
    [f] = run(input_divider_error, loaded, [follower_from(1e6, 100e3)])
    assert f.confidence == "estimated" and f.severity == Severity.WARNING
    assert f.assumed == ("U1.input_capacitance_cm",)


def test_bias_offset_formula_matches_published_matching_case() -> None:
    # [DER] R5b: Ib 100 nA, Ios 10 nA, Rf 100 kΩ, Rg 10 kΩ: R+ = Rf||Rg -> |Vout| <= 1.000 mV
    rpar = 100e3 * 10e3 / 110e3
    assert bias_offset(11.0, 100e-9, 10e-9, rpar, rpar) == pytest.approx(1.000e-3, rel=1e-4)
    # [DER] R5b: R+ = 0 -> Ib·Rf = 10.00 mV (offset current left out)
    assert bias_offset(11.0, 100e-9, 0.0, 0.0, rpar) == pytest.approx(10.00e-3, rel=1e-4)


@pytest.mark.parametrize(("rs", "expected"), [
    (250e3, None), (251e3, Severity.WARNING),  # 25 % of a 1 mV budget at 1 nA·250 kΩ [CP] threshold, [DER] value
    (1.0e6, Severity.WARNING), (1.01e6, Severity.ERROR),  # 100 % of the budget
])
def test_bias_offset_against_declared_budget(rs: float, expected: Severity | None) -> None:
    loaded = design(budgets={"OUT": {"offset": 1e-3}})
    s = stage(topology="follower", inputs=(stage_input("in+", source("SIG", rs, rs)),))
    found = run(bias_current_offset, loaded, [s])
    assert [f.severity for f in found] == ([] if expected is None else [expected])
    if found:
        assert found[0].ctx["value"] == pytest.approx(1e-9 * rs)  # [FR] follower: Ib·Rs


def test_bias_offset_against_output_span_without_budget() -> None:
    loaded = design(RG_RF | {"R1": {"kind": "resistor", "value": 10e3, "pins": {1: "INM", 2: "GND"}}})
    s = stage(topology="non-inverting", noise_gain_dc=3.0, vout_min=0.0, vout_max=3.0,
              inputs=(stage_input("in+", source("SIG", 2e6, 2e6)),))
    [f] = run(bias_current_offset, loaded, [s])
    # NG·Ib·|R- - R+| = 3·1 nA·(2 MΩ - 6.667 kΩ) = 5.98 mV against 0.1 % of 3 V = 3 mV [DER]
    assert f.ctx["value"] == pytest.approx(3 * 1e-9 * (2e6 - 10e3 * 20e3 / 30e3))
    assert f.severity == Severity.WARNING and f.ctx["limit"] == pytest.approx(3e-3)
