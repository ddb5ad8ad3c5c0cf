"""Loading rules on StageResult objects built directly: thresholds on both sides, numbers
checked against RULES-REFERENCE R1/R5b formulas and the issue's worked thermistor pair."""

from __future__ import annotations

import math
from dataclasses import replace

import pytest
from fixtures.rules.kit import design, run, source, stage, stage_input

from afecheck.checks.common import fmt
from afecheck.checks.loading import bias_current_offset, input_divider_error, inverting_source_loading
from afecheck.checks.loading.bias_current_offset import bias_offset
from afecheck.checks.loading.input_divider_error import divider_error
from afecheck.engine.finding import Severity

RG_RF = {"R1": {"kind": "resistor", "value": 10e3, "pins": {1: "TH", 2: "INM"}},
         "R2": {"kind": "resistor", "value": 20e3, "pins": {1: "INM", 2: "OUT"}}}


def inverting(rs_min: float, rs_max: float, ri: float = 10e3, ideal_gain: float = -2.0) -> object:
    """An inverting stage as the analysis leaves it: loading error Rs/(Rs + Ri) at both ends of the source range."""
    inp = stage_input("in-", source("TH", rs_min, rs_max, kind="ntc-divider"), ("R1",), ri)
    inp = replace(inp, loading_error_min=rs_min / (rs_min + ri), loading_error_max=rs_max / (rs_max + ri),
                  ideal_gain=ideal_gain, gain=ideal_gain * ri / (rs_max + ri))
    return stage(topology="inverting", in_plus="REF", noise_gain_dc=3.0, inputs=(inp,))


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
    # 0.1 % at Rs = Ri·0.001/0.999 = 10.010 Ω [DER]; 10.02 Ω gives 0.1001 %, which prints as the limit (item 7)
    (10.00, None), (10.02, None), (10.1, Severity.WARNING),
    # 1 % at Rs = Ri/99 = 101.01 Ω [DER]; 101.1 Ω gives 1.0009 %, printed "1.00 %": still the warning
    (101.0, Severity.WARNING), (101.1, Severity.WARNING), (102.0, Severity.ERROR),
])
def test_inverting_loading_thresholds_both_sides(rs: float, expected: Severity | None) -> None:
    found = run(inverting_source_loading, design(RG_RF), [inverting(rs, rs)])
    assert [f.severity for f in found] == ([] if expected is None else [expected])
    if found:
        assert "nonlinearity" not in found[0].message  # constant Rs: a gain error only


def test_intended_gain_counting_a_fixed_source_resistance_silences_the_loading_error() -> None:
    # item 12: Ri = 10 kΩ, Rf = 20 kΩ, fixed Rs = 1 kΩ: gain -20k/11k = -1.818 (Rs/(Rs+Ri) = 9.1 % below -2)
    u1 = {"kind": "opamp", "part": "KIT-AMP", "intended_gain": -20e3 / 11e3,
          "pins": {"in+": "REF", "in-": "INM", "out": "OUT", "v+": "VCC", "v-": "GND"}}
    assert run(inverting_source_loading, design(RG_RF | {"U1": u1}), [inverting(1e3, 1e3)]) == []
    # the broken twin: the intended gain is the ideal -2, so the 9.1 % loss still fires as an error
    u1_ideal = u1 | {"intended_gain": -2.0}
    [f] = run(inverting_source_loading, design(RG_RF | {"U1": u1_ideal}), [inverting(1e3, 1e3)])
    assert f.severity == Severity.ERROR and f.ctx["value"] == pytest.approx(1e3 / 11e3)
    assert "intended gain -2" in f.message


def test_printed_loading_error_is_the_analysis_value() -> None:
    # the rule prints the analysis's StageInput.loading_error_max, not a value of its own
    s = inverting(5e3, 5e3)
    s = replace(s, inputs=(replace(s.inputs[0], loading_error_max=0.25, loading_error_min=0.25),))
    [f] = run(inverting_source_loading, design(RG_RF), [s])
    assert f.ctx["value"] == 0.25 and "25.0 %" in f.message


def test_inverting_loading_parameters_move_the_thresholds() -> None:
    found = run(inverting_source_loading, design(RG_RF), [inverting(102.0, 102.0)], params={"error_fraction": 0.02})
    assert [f.severity for f in found] == [Severity.WARNING]


def test_divider_error_matches_published_dc_and_ac_forms() -> None:
    assert divider_error(10e3, 1e9, 0.0, 0.0) == pytest.approx(10.00e-6, rel=1e-3)  # [DER] R1 check value
    assert divider_error(10e3, 1e12, 0.0, 0.0) == pytest.approx(0.01000e-6, rel=1e-3)  # [DER] R1 check value
    wrc = 2 * math.pi * 10e3 * 1e6 * 6e-12
    # first-order RC low-pass (Ohm's law on the complex divider): |H| = 1/sqrt(1 + (2πf·Rs·Cin)²) when Rcm -> ∞;
    # the loss is 1 - |H|, not the error-vector length |1 - H| = x/sqrt(1 + x²)
    assert divider_error(1e6, 1e18, 6e-12, 10e3) == pytest.approx(1 - 1 / math.sqrt(1 + wrc ** 2), rel=1e-9)


def follower_from(rs: float, f: float) -> object:
    return stage(topology="follower", inputs=(stage_input("in+", source("SIG", rs, rs, f_max=f)),))


@pytest.mark.parametrize(("f", "expected"), [
    # KIT-AMP Cin = 6 pF, Rs = 100 kΩ: 1 - 1/sqrt(1 + x²), x = 2πf·Rs·Cin; 0.1 % at x = 0.04475 (11.87 kHz),
    # 1 % at x = 0.1425 (37.80 kHz) [DER]
    (11.8e3, None), (11.95e3, Severity.WARNING), (37.7e3, Severity.WARNING), (37.9e3, Severity.ERROR),
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
    assert f.ctx["value"] == pytest.approx(1 - 1 / math.sqrt(1 + wrc ** 2), rel=1e-4)  # RC low-pass |H| [DER]
    assert "6.43 %" in f.message and f.location.refs == ("R5", "U1")
    assert f.ctx["phase_deg"] == pytest.approx(-math.degrees(math.atan(wrc)), rel=1e-4)


def test_electrode_into_cmos_follower_is_judged_by_amplitude_not_error_vector() -> None:
    # item 2: 200 MΩ electrode, 1 Hz band top, KIT-AMP Cin 6 pF: x = 2π·1·200M·6p = 7.54e-3 -> amplitude loss
    # 2.8e-5 (plus 2e-4 from Rcm at DC) while the error vector |1 - H| would read 0.75 %: silent
    assert run(input_divider_error, design(), [follower_from(200e6, 1.0)]) == []
    # broken twin: the same electrode with a 100 Hz band top (x = 0.754, loss 20 %) still fires
    [f] = run(input_divider_error, design(), [follower_from(200e6, 100.0)])
    assert f.severity == Severity.ERROR
    # the printed fix criterion is the tested one: at the printed resistance the loss is the warning limit
    rs_ok = f.ctx["max_source_resistance"]
    assert divider_error(rs_ok, 1e12, 6e-12, 100.0) == pytest.approx(1e-3, rel=1e-6)
    assert fmt(rs_ok, "Ω") in f.fix


def test_input_capacitance_judged_against_the_filters_own_capacitor_tolerance() -> None:
    # item 3: Sallen-Key with 680 pF (C0G, 5 %) at in+: 6 pF is 0.88 % of it, inside the tolerance: silent
    c2 = {"C2": {"kind": "capacitor", "value": 680e-12, "tolerance": 0.05, "dielectric": "C0G",
                 "pins": {1: "INP", 2: "GND"}},
          "R1": {"kind": "resistor", "value": 10e3, "pins": {1: "SIG", 2: "N1"}},
          "R2": {"kind": "resistor", "value": 10e3, "pins": {1: "N1", 2: "INP"}}}
    sk = stage(topology="active-filter",
               inputs=(stage_input("in+", source("SIG", 0.0, 0.0, f_max=20e3), ("R1", "R2")),))
    assert run(input_divider_error, design(c2), [sk]) == []
    # broken twin: a 47 pF filter capacitor; 6 pF is 12.8 % of it, beyond its 5 %
    c2["C2"] = c2["C2"] | {"value": 47e-12}
    [f] = run(input_divider_error, design(c2), [sk])
    assert f.severity == Severity.WARNING and f.ctx["value"] == pytest.approx(6 / 47)
    assert f.location.refs == ("C2", "U1")


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


@pytest.mark.parametrize("budget", [None, 1e-6, 1.0])
def test_bias_offset_never_reads_the_offset_budget(budget: float | None) -> None:
    # scope: budgets.offset alone judges a declared offset budget; this rule's verdict is the same with a budget
    # far below or far above the bias term, or none
    loaded = design(budgets={} if budget is None else {"OUT": {"offset": budget}})
    s = stage(topology="follower", noise_gain_dc=1.0, inputs=(stage_input("in+", source("SIG", 2e6, 2e6)),))
    [f] = run(bias_current_offset, loaded, [s])
    assert f.ctx["value"] == pytest.approx(1e-9 * 2e6)  # [FR] follower: Ib·Rs
    assert f.ctx["limit_source"].startswith("part ") and "budget" not in f.message


def test_bias_offset_against_output_span_without_budget() -> None:
    loaded = design(RG_RF | {"R1": {"kind": "resistor", "value": 10e3, "pins": {1: "INM", 2: "GND"}}})
    s = stage(topology="non-inverting", noise_gain_dc=3.0, vout_min=0.0, vout_max=3.0,
              inputs=(stage_input("in+", source("SIG", 2e6, 2e6)),))
    [f] = run(bias_current_offset, loaded, [s])
    # NG·Ib·|R- - R+| = 3·1 nA·(2 MΩ - 6.667 kΩ) = 5.98 mV against 0.1 % of 3 V = 3 mV [DER]
    assert f.ctx["value"] == pytest.approx(3 * 1e-9 * (2e6 - 10e3 * 20e3 / 30e3))
    assert f.severity == Severity.WARNING and f.ctx["limit"] == pytest.approx(3e-3)


@pytest.mark.parametrize(("rs", "expected"), [
    # item 4: NG 20, Ib 1 nA, no resistor at in-: offset = 20·1 nA·Rs against the part's own 20 × 1 mV = 20 mV
    (900e3, None),  # 18 mV: below the part's own offset error, silent (the reported false alarm)
    (1.5e6, Severity.WARNING),  # 30 mV: the bias term dominates
    (12e6, Severity.ERROR),  # 240 mV: more than 10 × the part's own offset error
])
def test_bias_offset_without_budget_is_judged_against_the_parts_own_offset(rs: float, expected) -> None:
    s = stage(topology="non-inverting", noise_gain_dc=20.0, vout_min=0.0, vout_max=4.0,
              inputs=(stage_input("in+", source("SIG", rs, rs)),))
    found = run(bias_current_offset, design(), [s])
    assert [f.severity for f in found] == ([] if expected is None else [expected])
    if found:
        assert found[0].ctx["value"] == pytest.approx(20 * 1e-9 * rs)  # Jung, Op Amp Applications Handbook, ch. 1
        assert "own offset error 20.0 mV" in found[0].message
    assert bias_current_offset.META.family == "dc-accuracy"
