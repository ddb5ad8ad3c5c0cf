"""Stability rules on StageResult objects built directly: thresholds on both sides, and the
cause each message names checked against RULES-REFERENCE R2 check values."""

from __future__ import annotations

import pytest
from fixtures.rules.kit import design, run, stage

from afecheck.checks.stability import feedback_sign, gain_margin, min_stable_gain, phase_margin
from afecheck.engine.finding import Severity


@pytest.mark.parametrize(("pm", "expected"), [
    (60.0, None), (59.9, Severity.WARNING), (45.0, Severity.WARNING), (44.9, Severity.ERROR),  # [CP] R2 thresholds
])
def test_phase_margin_thresholds_both_sides(pm: float, expected: Severity | None) -> None:
    found = run(phase_margin, design(), [stage(phase_margin_deg=pm)])
    assert [f.severity for f in found] == ([] if expected is None else [expected])
    if found:
        assert found[0].ctx["limit"] == (45.0 if expected == Severity.ERROR else 60.0)
        assert found[0].ctx["margin"] == pytest.approx(pm - found[0].ctx["limit"])


def test_capacitive_load_named_as_the_cause_with_its_pole() -> None:
    # [FR] R2(e): follower, Ro 100 Ω, CL 1 nF -> fpL = 1.592 MHz; PM 15.38° at 3.817 MHz ([NUM] values as input)
    loaded = design(part={"gbw": 10e6, "second_pole": 30e6})
    s = stage(topology="follower", load_capacitance=1e-9, output_resistance=1e-3, phase_margin_deg=15.38,
              crossover_hz=3.817e6)
    [f] = run(phase_margin, loaded, [s])
    assert f.severity == Severity.ERROR and f.ctx["cause"] == "load"
    assert f.ctx["cause_hz"] == pytest.approx(1.592e6, rel=1e-3)
    assert f.message.startswith("U1 phase margin 15.4° at 3.82 MHz (limit 45°): 1.00 nF load on OUT with 100 Ω")
    assert "pole at 1.59 MHz" in f.message and f.fix.startswith("100 Ω isolation resistor")


def test_input_capacitance_named_with_the_neutralising_capacitor() -> None:
    # [NUM] R2(b): Rf = Rg = 100 kΩ, Cg = 10 pF (9 pF part + 1 pF stray here, op-amp Cin 0) -> fz = 318.3 kHz,
    # neutralised by Cf = Cg·Rg/Rf = 10 pF [FR]
    loaded = design({"R1": {"kind": "resistor", "value": 100e3, "pins": {1: "INM", 2: "GND"}},
                     "R2": {"kind": "resistor", "value": 100e3, "pins": {1: "INM", 2: "OUT"}},
                     "C1": {"kind": "capacitor", "value": 9e-12, "dielectric": "C0G", "pins": {1: "INM", 2: "GND"}}},
                    part={"gbw": 10e6, "second_pole": 30e6, "input_capacitance_cm": 0.0, "input_capacitance_diff": 0.0})
    s = stage(noise_gain_dc=2.0, phase_margin_deg=12.02, crossover_hz=1.241e6)
    [f] = run(phase_margin, loaded, [s])
    assert f.ctx["cause"] == "input-capacitance"
    assert f.ctx["cause_hz"] == pytest.approx(318.3e3, rel=1e-3)
    assert "10.0 pF across R2" in f.fix and f.location.refs[0] == "R2"


def test_second_pole_is_the_cause_when_nothing_else_lags() -> None:
    loaded = design(part={"gbw": 50e6, "second_pole": 10e6})
    [f] = run(phase_margin, loaded, [stage(noise_gain_at_crossover=2.0, phase_margin_deg=34.93, crossover_hz=14.32e6)])
    assert f.ctx["cause"] == "second-pole" and "10.0 MHz" in f.message


def test_estimated_phase_margin_is_capped_at_warning_and_lists_assumptions() -> None:
    s = stage(phase_margin_deg=30.0, estimated=True, assumed=("U1.second_pole",))
    [f] = run(phase_margin, design(), [s])
    assert f.severity == Severity.WARNING and f.confidence == "estimated"
    assert "U1.second_pole" in f.assumed


def test_missing_phase_margin_is_reported_not_evaluated() -> None:
    [f] = run(phase_margin, design(), [stage(phase_margin_deg=None, crossover_hz=None, not_evaluated=("singular",))])
    assert f.severity == Severity.INFO and f.confidence == "not-evaluated" and "singular" in f.message


def test_phase_margin_rule_skips_loops_without_negative_feedback() -> None:
    assert run(phase_margin, design(), [stage(feedback="positive", phase_margin_deg=None)]) == []


@pytest.mark.parametrize(("ng", "expected"), [(5.0, None), (4.99, Severity.ERROR), (1.152, Severity.ERROR)])
def test_minimum_stable_gain_both_sides(ng: float, expected: Severity | None) -> None:
    loaded = design(part={"min_stable_gain": 5.0, "gbw": 50e6, "second_pole": 10e6})
    found = run(min_stable_gain, loaded, [stage(noise_gain_dc=11.0, noise_gain_at_crossover=ng, noise_gain_hf=ng)])
    assert [f.severity for f in found] == ([] if expected is None else [expected])


def test_minimum_stable_gain_blames_the_feedback_capacitor() -> None:
    # [NUM] R2(c): Rf 10 kΩ, Rg 1 kΩ, Cg 5 pF, Cf 33 pF -> NG(∞) = 1 + Cg/Cf = 1.152 [FR]
    loaded = design(part={"min_stable_gain": 5.0, "gbw": 50e6, "second_pole": 10e6})
    ng_inf = 1 + 5 / 33
    s = stage(noise_gain_dc=11.0, noise_gain_at_crossover=ng_inf, noise_gain_hf=ng_inf)
    [f] = run(min_stable_gain, loaded, [s])
    assert "feedback capacitor" in f.message and "1.15" in f.message and f.ctx["limit"] == 5.0


def test_unity_gain_stable_part_is_never_below_its_minimum() -> None:
    assert run(min_stable_gain, design(), [stage(noise_gain_at_crossover=1.0)]) == []


@pytest.mark.parametrize(("gm", "expected"), [(6.0, None), (5.9, Severity.WARNING), (0.0, Severity.WARNING),
                                               (-0.1, Severity.ERROR), (None, None)])
def test_gain_margin_both_sides(gm: float | None, expected: Severity | None) -> None:
    found = run(gain_margin, design(), [stage(gain_margin_db=gm)])
    assert [f.severity for f in found] == ([] if expected is None else [expected])


def test_positive_feedback_is_an_error_with_the_loop_gain_sign() -> None:
    # [DER] R5m Schmitt: β+ = 10k/110k, A0 = 1e5 -> T(0) = -9091
    [f] = run(feedback_sign, design(), [stage(feedback="positive", loop_gain_dc=-1e5 * 10e3 / 110e3)])
    assert f.severity == Severity.ERROR and "T(0) = -9091" in f.message


def test_open_loop_is_an_error_and_negative_feedback_is_silent() -> None:
    [f] = run(feedback_sign, design(), [stage(feedback="none", loop_gain_dc=0.0)])
    assert f.severity == Severity.ERROR and "no feedback" in f.message
    assert run(feedback_sign, design(), [stage()]) == []


def test_integrator_without_dc_path_is_an_error_and_with_resistor_is_silent() -> None:
    # Bode return ratio: capacitor-only feedback leaves T(0) = 0, so the output integrates offset to a rail
    cap = {"C1": {"kind": "capacitor", "value": 1e-6, "dielectric": "film", "pins": {1: "INM", 2: "OUT"}},
           "R1": {"kind": "resistor", "value": 10e3, "pins": {1: "SIG", 2: "INM"}}}
    open_dc = stage(topology="integrator", feedback="none", loop_gain_dc=0.0)
    [f] = run(feedback_sign, design(cap), [open_dc])
    assert f.severity == Severity.ERROR and f.location.refs[0] == "C1"
    shunt = cap | {"R2": {"kind": "resistor", "value": 1e6, "pins": {1: "INM", 2: "OUT"}}}
    assert run(feedback_sign, design(shunt), [stage(topology="integrator", loop_gain_dc=1e5 * 1e4 / 1.01e6)]) == []


def test_feedback_judged_by_computed_loop_gain_not_by_the_part_across_in_minus() -> None:
    # item 1: a multiple-feedback low-pass has only C2 between in- and the output, but R2-R3 close the DC loop;
    # its computed T(0) = A0·R?/(...) is large and negative feedback, so nothing to report
    mfb = {"C2": {"kind": "capacitor", "value": 1e-9, "dielectric": "C0G", "pins": {1: "INM", 2: "OUT"}},
           "R2": {"kind": "resistor", "value": 1e4, "pins": {1: "N1", 2: "OUT"}},
           "R3": {"kind": "resistor", "value": 1e4, "pins": {1: "N1", 2: "INM"}}}
    assert run(feedback_sign, design(mfb), [stage(topology="active-filter", loop_gain_dc=3.3e4)]) == []
    [f] = run(feedback_sign, design(mfb), [stage(topology="active-filter", feedback="none", loop_gain_dc=0.0)])
    assert f.severity == Severity.ERROR


@pytest.mark.parametrize("role", ["comparator", "schmitt"])
def test_declared_switching_stage_gets_no_feedback_finding(role: str) -> None:
    # item 12: a comparator or Schmitt trigger declared as such has open-loop or positive feedback on purpose
    loaded = design(part=None)
    comps = loaded.design.model_dump(by_alias=True)["components"]
    comps["U1"]["role"] = role
    intended = design(comps)
    assert run(feedback_sign, intended, [stage(feedback="positive", loop_gain_dc=-9091.0)]) == []
    assert run(feedback_sign, design(), [stage(feedback="positive", loop_gain_dc=-9091.0)]) != []


def test_declared_integrator_without_dc_path_is_only_info() -> None:
    cap = {"C1": {"kind": "capacitor", "value": 1e-6, "dielectric": "film", "pins": {1: "INM", 2: "OUT"}},
           "U1": {"kind": "opamp", "part": "KIT-AMP", "role": "integrator",
                  "pins": {"in+": "INP", "in-": "INM", "out": "OUT", "v+": "VCC", "v-": "GND"}}}
    [f] = run(feedback_sign, design(cap), [stage(topology="integrator", feedback="none", loop_gain_dc=0.0)])
    assert f.severity == Severity.INFO and "declared an integrator" in f.message


@pytest.mark.parametrize(("ro", "riso"), [(100.0, 100.0), (80.0, 82.0), (250.0, 100.0), (3.0, 10.0), (50.0, 47.0)])
def test_isolation_resistor_suggestion_is_an_e12_value_near_ro(ro: float, riso: float) -> None:
    from afecheck.checks.stability.causes import isolation_resistor

    assert isolation_resistor(ro) == pytest.approx(riso)  # [IEC60063] E12 values; Riso ≈ Ro common practice


def test_analysis_assumptions_are_named_by_refdes_and_make_the_result_estimated() -> None:
    [f] = run(phase_margin, design(), [stage(phase_margin_deg=40.0, assumed=("second_pole", "output_resistance"))])
    assert f.assumed == ("U1.output_resistance", "U1.second_pole") and f.severity == Severity.WARNING
