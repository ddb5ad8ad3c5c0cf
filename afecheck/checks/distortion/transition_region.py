"""Common-mode swing through a complementary rail-to-rail input stage's transition region."""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.checks.common import db, fmt, part_value, rails_known, switching
from afecheck.checks.common import finding as make_finding
from afecheck.checks.headroom.limits import cm_extremes
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import RuleMeta

META = RuleMeta(
    id="distortion.input-pair-transition", slug="common-mode-crosses-input-transition",
    severity=Severity.WARNING, family="distortion",
    summary="input common mode swings through a rail-to-rail input's pair-transition region",
    fix="use an inverting stage around a fixed reference, keep the common mode on one side of the region, or choose "
        "a zero-crossover or single-pair input part",
)


def transition_window(v_plus: float, below: float, width: float) -> tuple[float, float]:
    """[V+ − Vtr − w, V+ − Vtr + w] (RULES-REFERENCE R3)."""
    return v_plus - below - width, v_plus - below + width


def check(ctx: Context) -> Iterator[Finding]:
    """Warn when a moving common mode overlaps the transition window; estimate the output step and distortion."""
    for stage in ctx.stages:
        if switching(ctx.loaded, stage.opamp):
            continue  # a declared comparator or Schmitt trigger is not a linear stage
        if not rails_known(ctx, stage.opamp):
            continue  # supply voltage unknown: coverage.not-evaluated reports it
        if stage.opamp not in ctx.loaded.design.components:
            continue
        if ctx.loaded.part(stage.opamp).input_stage != "rail-to-rail-complementary":
            continue
        ext = cm_extremes(ctx, stage)
        if ext is None:
            continue
        lo, hi = ext
        below, a1 = part_value(ctx, stage.opamp, "transition_below_vplus")
        width, a2 = part_value(ctx, stage.opamp, "transition_width")
        step, a3 = part_value(ctx, stage.opamp, "transition_offset_step")
        if below is None or width is None or step is None:
            continue
        w_lo, w_hi = transition_window(stage.rail_plus, below, width)
        if not (hi > lo and hi > w_lo and lo < w_hi):
            continue
        ng = stage.noise_gain_dc or 1.0
        v_pk = (hi - lo) / 2.0
        hd = abs(step) / v_pk
        text = (f"{stage.opamp} input common mode swings {fmt(lo, 'V')}..{fmt(hi, 'V')} through the input-pair "
                f"transition region {fmt(w_lo, 'V')}..{fmt(w_hi, 'V')}: an offset step of about {fmt(step, 'V')} "
                f"({fmt(ng * abs(step), 'V')} at {stage.out}) each crossing, distortion of order {db(hd):.0f} dB")
        yield make_finding(
            ctx, Severity.WARNING, value=hi, limit=w_lo, unit="V", margin=w_lo - hi,
            limit_source=f"part {stage.part} input-pair transition region (declared in its part model)", message=text,
            fix=META.fix,
            refs=(stage.opamp,), nets=(stage.in_plus,), pins=("in+",), assumed=a1 + a2 + a3,
            extra={"vcm_min": lo, "vcm_max": hi, "window_low": w_lo, "window_high": w_hi,
                   "output_step": ng * abs(step), "distortion": hd},
        )
