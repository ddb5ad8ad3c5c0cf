"""Exact boundaries of every threshold comparison in afecheck/checks: at the limit, and one float beyond it.

Each rule page says "above" or "below" a limit, so a value exactly at the limit passes and the next float past it
is flagged. Where the limit is a rule parameter, the test runs the rule on its catalogue bad example (real
analysis), reads the graded quantity, sets the parameter to exactly that value and to the next float, and expects
the documented outcome; where the limit is fixed (a zero margin, a part's minimum stable gain), a stage is built
with the value exactly on it.
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest
from fixtures.rules import kit

from afecheck.analysis import analyse
from afecheck.checks.common import grade_above, grade_below, noise_floor, print_tolerance
from afecheck.checks.distortion import (
    class2_ceramic,
    common_mode_swing,
    input_impedance_imbalance,
    loop_gain_at_fmax,
    output_near_limit,
    transition_region,
)
from afecheck.checks.headroom import input_common_mode, output_current, output_swing
from afecheck.checks.loading import bias_current_offset, input_divider_error, inverting_source_loading
from afecheck.checks.stability import gain_margin, min_stable_gain, phase_margin
from afecheck.engine.finding import Severity
from afecheck.model.load import load_design

RULES = Path(__file__).resolve().parents[1] / "rules"
UP, DOWN = math.inf, -math.inf


def past(limit: float, direction: float) -> float:
    """The first float beyond a limit as the rules read it: a value within print precision (or round-off) of a
    limit prints as the limit and meets it (afecheck.checks.common.print_tolerance), so "beyond" starts there."""
    step = max(print_tolerance(limit), noise_floor(limit))
    return math.nextafter(limit + math.copysign(step, direction), direction)
W, E = Severity.WARNING, Severity.ERROR


def _bad(rule_id: str):
    path = RULES / rule_id.replace(".", "/") / "bad.yaml"
    loaded = load_design(path)
    analysis = analyse(loaded)
    return loaded, analysis


def _run(module, loaded, analysis, params=None):
    return kit.run(module, loaded, analysis.stages, nets=dict(analysis.nets), params=params)


def _severities(module, loaded, analysis, params) -> list[Severity]:
    return sorted({f.severity for f in _run(module, loaded, analysis, params) if f.confidence != "not-evaluated"})


def test_grade_helpers_at_their_exact_limits() -> None:
    assert grade_above(1.0, 1.0, 2.0) is None and grade_above(past(1.0, UP), 1.0, 2.0) == W
    assert grade_above(2.0, 1.0, 2.0) == W and grade_above(past(2.0, UP), 1.0, 2.0) == E
    assert grade_below(2.0, 2.0, 1.0) is None and grade_below(past(2.0, DOWN), 2.0, 1.0) == W
    assert grade_below(1.0, 2.0, 1.0) == W and grade_below(past(1.0, DOWN), 2.0, 1.0) == E


def _share_103(f, loaded, analysis) -> float:
    return f.ctx["value"] / f.ctx["own_offset"]


def _share_303(f, loaded, analysis) -> float:
    stage = {s.opamp: s for s in analysis.stages}[f.location.refs[0]]
    return abs(stage.iout_peak) / loaded.part(stage.opamp).output_current_limit


GRADED = [
    # rule, module, graded quantity of its finding, warn parameter, error parameter, worse direction
    ("loading.inverting-input", inverting_source_loading, lambda f, *_: f.ctx["value"], "warn_fraction",
     "error_fraction", UP),
    ("loading.input-divider", input_divider_error, lambda f, *_: f.ctx["value"], "warn_fraction", "error_fraction", UP),
    ("stability.phase-margin", phase_margin, lambda f, *_: f.ctx["value"], "warn_deg", "error_deg", DOWN),
    ("stability.gain-margin", gain_margin, lambda f, *_: f.ctx["value"], "warn_db", "error_db", DOWN),
    ("headroom.output-current", output_current, _share_303, "warn_fraction", "error_fraction", UP),
    ("distortion.loop-gain-at-fmax", loop_gain_at_fmax, lambda f, *_: f.ctx["value"], "warn_db", "error_db", DOWN),
]


@pytest.mark.parametrize(("rule_id", "module", "graded", "warn", "err", "worse"), GRADED, ids=[g[0] for g in GRADED])
def test_warning_and_error_limits_exactly(rule_id, module, graded, warn, err, worse) -> None:
    loaded, analysis = _bad(rule_id)
    (f,) = [f for f in _run(module, loaded, analysis) if f.confidence != "not-evaluated"][:1]
    v = graded(f, loaded, analysis)
    better = -worse
    far = 1e300 if worse == UP else -1e300  # an error limit the value cannot reach
    # warning limit exactly at the value: passes; one float toward "better": a warning
    assert _severities(module, loaded, analysis, {warn: v, err: far}) == []
    assert _severities(module, loaded, analysis, {warn: past(v, better), err: far}) == [W]
    # error limit exactly at the value: a warning only; one float toward "better": an error
    loose = -far
    assert _severities(module, loaded, analysis, {warn: loose, err: v}) == [W]
    assert _severities(module, loaded, analysis, {warn: loose, err: past(v, better)}) == [E]


def test_bias_offset_share_limits_exactly() -> None:
    loaded, analysis = _bad("dc-accuracy.bias-offset")
    (f,) = _run(bias_current_offset, loaded, analysis)
    share = _share_103(f, loaded, analysis)
    warn, err = "own_offset_warn", "own_offset_error"
    sev = lambda p: sorted({x.severity for x in _run(bias_current_offset, loaded, analysis, p)})  # noqa: E731
    assert sev({warn: share, err: 1e300}) == []
    assert sev({warn: past(share, DOWN), err: 1e300}) == [W]
    assert sev({warn: 0.0, err: share}) == [W]
    assert sev({warn: 0.0, err: past(share, DOWN)}) == [E]


@pytest.mark.parametrize(("rule_id", "module", "param"), [
    ("distortion.class2-ceramic", class2_ceramic, "fraction"),
    ("distortion.impedance-balance", input_impedance_imbalance, "max_imbalance"),
])
def test_single_warning_limits_exactly(rule_id, module, param) -> None:
    loaded, analysis = _bad(rule_id)
    found = _run(module, loaded, analysis)
    v = max(f.ctx["value"] for f in found)
    assert [f for f in _run(module, loaded, analysis, {param: v}) if f.ctx["value"] > v] == []
    assert not any(f.ctx["value"] == v for f in _run(module, loaded, analysis, {param: v}))  # at limit: passes
    assert any(f.ctx["value"] == v for f in _run(module, loaded, analysis, {param: math.nextafter(v, DOWN)}))


def test_high_z_imbalance_gates_exactly() -> None:
    # distortion.impedance-balance applies only above min_vcm_peak and above min_frequency ("above": equal does not
    # apply)
    loaded, analysis = _bad("distortion.impedance-balance")
    (f,) = _run(input_impedance_imbalance, loaded, analysis)
    vcm = f.ctx["vcm_peak"]
    fmax = next(s for s in analysis.stages if s.opamp in f.location.refs).f_max
    assert _run(input_impedance_imbalance, loaded, analysis, {"min_vcm_peak": vcm}) == []
    assert len(_run(input_impedance_imbalance, loaded, analysis, {"min_vcm_peak": math.nextafter(vcm, DOWN)})) == 1
    assert _run(input_impedance_imbalance, loaded, analysis, {"min_frequency": fmax}) == []
    assert len(_run(input_impedance_imbalance, loaded, analysis, {"min_frequency": math.nextafter(fmax, DOWN)})) == 1


def test_common_mode_warning_band_exactly() -> None:
    # headroom.input-common-mode: a warning when the headroom inside the range is below the band; headroom equal to
    # the band passes
    loaded = kit.design()
    st = kit.stage(vcm_min=1.0, vcm_max=3.4)
    margin = (5.0 - 1.5) - 3.4  # the rule's own arithmetic: V+ - input_cm_high - highest common mode
    assert kit.run(input_common_mode, loaded, [st], params={"warn_band": margin}) == []
    found = kit.run(input_common_mode, loaded, [st], params={"warn_band": past(margin, UP)})
    assert [(f.severity, f.ctx["margin"]) for f in found] == [(W, margin)]


@pytest.mark.parametrize(("rule_id", "module", "param"), [("distortion.near-swing-limit", output_near_limit, "band")])
def test_margin_bands_exactly(rule_id, module, param) -> None:
    # a warning when the margin inside the limit is below the band; a margin equal to the band passes
    loaded, analysis = _bad(rule_id)
    found = [f for f in _run(module, loaded, analysis) if f.severity == W]
    margin = found[0].ctx["margin"]
    assert margin >= 0
    same = lambda fs: [f for f in fs if f.ctx["margin"] == margin]  # noqa: E731
    assert same(_run(module, loaded, analysis, {param: margin})) == []
    assert [f.severity for f in same(_run(module, loaded, analysis, {param: past(margin, UP)}))] == [W]


def test_common_mode_error_limit_exactly() -> None:
    # distortion.common-mode-error: CMRR error at or below its share of the budget passes
    loaded, analysis = _bad("distortion.common-mode-error")
    (f,) = _run(common_mode_swing, loaded, analysis)
    err, limit = f.ctx["value"], f.ctx["limit"]
    param = "budget_share" if "budget" in f.ctx["limit_source"] else "lsb_share"
    base = limit / common_mode_swing.META.params[[p.name for p in common_mode_swing.META.params].index(param)].default
    p = err / base
    while p * base < err:
        p = math.nextafter(p, UP)
    while p * base > err:
        p = math.nextafter(p, DOWN)
    assert p * base == err
    assert _run(common_mode_swing, loaded, analysis, {param: p}) == []
    assert len(_run(common_mode_swing, loaded, analysis, {param: math.nextafter(p, DOWN)})) == 1


def test_input_common_mode_error_at_zero_margin_exactly() -> None:
    # headroom.input-common-mode: at the limit (zero margin) a warning, one float beyond it an error. KIT-AMP: V+ 5
    # V, input_cm_high 1.5
    limit = 5.0 - 1.5
    loaded = kit.design()
    at = kit.stage(vcm_min=1.0, vcm_max=limit)
    assert [f.severity for f in kit.run(input_common_mode, loaded, [at])] == [W]
    beyond = kit.stage(vcm_min=1.0, vcm_max=past(limit, UP))
    assert [f.severity for f in kit.run(input_common_mode, loaded, [beyond])] == [E]


def test_output_swing_at_zero_margin_exactly() -> None:
    # headroom.output-swing (clips) at a margin below zero only; distortion.near-swing-limit warns from zero margin
    # up. KIT-AMP: 5 V - 0.1 V drop,
    # no load current (iout_peak 0), so the high limit is exactly 4.9 V
    loaded = kit.design()
    high = 5.0 - 0.1 - 50.0 * 0.0
    at = kit.stage(vout_min=1.0, vout_max=high, iout_peak=0.0)
    beyond = kit.stage(vout_min=1.0, vout_max=past(high, UP), iout_peak=0.0)
    assert kit.run(output_swing, loaded, [at]) == []
    assert [f.severity for f in kit.run(output_near_limit, loaded, [at])] == [W]
    assert [f.severity for f in kit.run(output_swing, loaded, [beyond])] == [E]
    assert kit.run(output_near_limit, loaded, [beyond]) == []


def test_noise_gain_at_minimum_stable_gain_exactly() -> None:
    # stability.min-stable-gain: a noise gain equal to the part's minimum stable gain passes; one float below is an
    # error
    loaded = kit.design(part={"min_stable_gain": 5.0})
    assert kit.run(min_stable_gain, loaded, [kit.stage(noise_gain_at_crossover=5.0)]) == []
    below = kit.stage(noise_gain_at_crossover=math.nextafter(5.0, DOWN))
    assert [f.severity for f in kit.run(min_stable_gain, loaded, [below])] == [E]


def test_transition_window_edges_exactly() -> None:
    # distortion.input-pair-transition: a common mode reaching exactly the window's lower edge does not cross it; one
    # float more does
    part = {"input_stage": "rail-to-rail-complementary", "transition_below_vplus": 1.2, "transition_width": 0.2,
            "transition_offset_step": 1e-3, "input_cm_low": -0.1, "input_cm_high": -0.1}
    loaded = kit.design(part=part)
    w_lo, w_hi = transition_region.transition_window(5.0, 1.2, 0.2)
    at = kit.stage(vcm_min=1.0, vcm_max=w_lo)
    assert kit.run(transition_region, loaded, [at]) == []
    assert len(kit.run(transition_region, loaded, [kit.stage(vcm_min=1.0, vcm_max=math.nextafter(w_lo, UP))])) == 1
    # and from above: a common mode starting exactly at the upper edge does not cross it either
    assert kit.run(transition_region, loaded, [kit.stage(vcm_min=w_hi, vcm_max=4.9)]) == []
    assert len(kit.run(transition_region, loaded, [kit.stage(vcm_min=math.nextafter(w_hi, DOWN), vcm_max=4.9)])) == 1
