"""Headroom rules and the output-near-limit warning band (distortion.near-swing-limit) on StageResult objects,
checked against RULES-REFERENCE R3 check values with thresholds on both sides."""

from __future__ import annotations

import pytest
from fixtures.rules.kit import design, net, run, stage

from afecheck.checks.distortion import output_near_limit
from afecheck.checks.headroom import input_common_mode, output_current, output_swing
from afecheck.engine.finding import Severity


def test_follower_0_to_4_v_on_5_v_is_half_a_volt_over_the_common_mode_range() -> None:
    # [DER] R3: 5 V single supply, CM range 0..V+ - 1.5 V, follower with 0..4 V input -> 0.5 V over -> error
    [f] = run(input_common_mode, design(), [stage(topology="follower", vcm_min=0.2, vcm_max=4.0)])
    assert f.severity == Severity.ERROR
    assert f.ctx["limit"] == pytest.approx(3.5) and f.ctx["margin"] == pytest.approx(-0.5)
    assert "500 mV above its limit 3.50 V" in f.message and f.location.pins == ("in+",)


@pytest.mark.parametrize(("vcm", "expected"), [
    (2.0, None),  # [DER] R3: non-inverting G = 2 with 0..2 V input -> pass
    (2.5, None),  # [DER] R3: inverting with in+ = 2.5 V -> pass
    (3.39, None), (3.41, Severity.WARNING), (3.5, Severity.WARNING), (3.51, Severity.ERROR),  # 100 mV band [CP]
])
def test_common_mode_high_side_thresholds(vcm: float, expected: Severity | None) -> None:
    found = run(input_common_mode, design(), [stage(vcm_min=0.5, vcm_max=vcm)])
    assert [f.severity for f in found] == ([] if expected is None else [expected])


@pytest.mark.parametrize(("vcm", "expected"), [(0.11, None), (0.09, Severity.WARNING), (-0.01, Severity.ERROR)])
def test_common_mode_low_side_thresholds(vcm: float, expected: Severity | None) -> None:
    found = run(input_common_mode, design(), [stage(vcm_min=vcm, vcm_max=1.0)])
    assert [f.severity for f in found] == ([] if expected is None else [expected])


def test_common_mode_includes_the_ac_peak_on_in_plus() -> None:
    found = run(input_common_mode, design(), [stage(vcm_min=2.0, vcm_max=2.0)], nets={"INP": net("INP", 2, 2, ac=1.6)})
    assert [f.severity for f in found] == [Severity.ERROR]  # 2.0 + 1.6 = 3.6 V > 3.5 V


def test_assumed_common_mode_limits_give_an_estimated_warning() -> None:
    [f] = run(input_common_mode, design(part={"input_cm_high": None}), [stage(vcm_max=4.0)])
    assert f.severity == Severity.WARNING and f.confidence == "estimated" and f.assumed == ("U1.input_cm_high",)


def swing_part() -> dict:
    return {"output_drop_high": 0.01, "output_drop_low": 0.01, "output_sat_resistance": 50.0}


def test_swing_limit_at_1k_load_fails_a_required_4v9() -> None:
    # [DER] R3: V+ 5 V, Vsat0 10 mV, Rsat 50 Ω, RL 1 kΩ to 2.5 V: the limit is about 4.87 V -> 4.9 V fails
    s = stage(vout_min=2.5, vout_max=4.9, iout_peak=(4.9 - 2.5) / 1e3)
    [f] = run(output_swing, design(part=swing_part()), [s])
    assert f.severity == Severity.ERROR and f.ctx["limit"] == pytest.approx(4.871, abs=2e-3)
    assert run(output_near_limit, design(part=swing_part()), [s]) == []


def test_non_inverting_gain_2_of_3_v_needs_6_v_and_clips() -> None:
    # [DER] R3: non-inverting G = 2 with 0..3 V input on 5 V -> needs 6 V -> error
    [f] = run(output_swing, design(part=swing_part()), [stage(vout_min=0.02, vout_max=6.0, load_resistance=10e3)])
    assert f.ctx["value"] == pytest.approx(6.0) and f.ctx["margin"] < -1.0


@pytest.mark.parametrize(("v", "swing_err", "near_warn"), [
    (4.70, False, False), (4.80, False, True), (4.87, False, True), (4.89, True, False),
])
def test_output_swing_and_near_limit_band_split_cleanly(v: float, swing_err: bool, near_warn: bool) -> None:
    # limit 5 V - 0.1 V - 50 Ω·0.5 mA = 4.875 V [DER] R3 model; warning band 100 mV below it [CP]
    s = stage(vout_min=1.0, vout_max=v, iout_peak=0.5e-3)
    loaded = design(part={"output_drop_high": 0.1, "output_sat_resistance": 50.0})
    assert bool(run(output_swing, loaded, [s])) is swing_err
    assert bool(run(output_near_limit, loaded, [s])) is near_warn


def test_output_extremes_include_the_ac_peak_and_the_low_side() -> None:
    loaded = design(part={"output_drop_low": 0.1, "output_sat_resistance": 0.0})
    [f] = run(output_swing, loaded, [stage(vout_min=0.5, vout_max=2.0, vout_ac_peak=0.45)])
    assert "lowest" in f.message and f.ctx["value"] == pytest.approx(0.05)


@pytest.mark.parametrize(("i", "expected"), [
    # shares within half a unit of the third printed digit of the limit count as the limit itself (item 7)
    (10.0e-3, None), (10.2e-3, Severity.WARNING), (20.0e-3, Severity.WARNING), (20.1e-3, Severity.WARNING),
    (20.2e-3, Severity.ERROR),
])
def test_output_current_thresholds(i: float, expected: Severity | None) -> None:
    found = run(output_current, design(), [stage(iout_peak=i)])  # limit 20 mA, 50 % warning [CP] R3
    assert [f.severity for f in found] == ([] if expected is None else [expected])


def test_rail_tolerance_narrows_common_mode_and_swing_limits() -> None:
    # worst-case rails (RULES-REFERENCE R3 inputs: rails min/max over tolerance): 5 V - 5 % = 4.75 V [DER]
    loaded = design(rails={"VCC": {"voltage": 5.0, "tolerance": "5%"}})
    [f] = run(input_common_mode, loaded, [stage(vcm_min=1.0, vcm_max=3.3)])
    assert f.ctx["limit"] == pytest.approx(4.75 - 1.5) and f.severity == Severity.ERROR
    [g] = run(output_swing, loaded, [stage(vout_min=1.0, vout_max=4.7, iout_peak=0.0)])
    assert g.ctx["limit"] == pytest.approx(4.75 - 0.1)
