"""Input common-mode voltage outside the part's range anywhere over the declared signal range."""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.checks.common import finding as make_finding
from afecheck.checks.common import fmt, grade_headroom, not_evaluated, part_value, rails_known, snap, stage_reason
from afecheck.checks.headroom.limits import cm_extremes, worst_rails
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import Param, RuleMeta

META = RuleMeta(
    id="headroom.input-common-mode", slug="input-common-mode-out-of-range", severity=Severity.ERROR, family="headroom",
    summary="op-amp input common-mode voltage outside (error) or within 100 mV of (warning) its range",
    params=(Param("warn_band", 0.1, "V", "headroom inside the common-mode range below which a warning is raised"),),
    fix="use an inverting stage around a reference inside the range, shift the input level, or choose a part whose "
        "common-mode range includes the rail",
)


def check(ctx: Context) -> Iterator[Finding]:
    """Compare the lowest and highest input common mode with V− + dVcm_lo and V+ − dVcm_hi."""
    band = ctx.param("warn_band")
    for stage in ctx.stages:
        if not rails_known(ctx, stage.opamp):
            continue  # supply voltage unknown: coverage.not-evaluated reports it
        if stage.feedback != "negative":
            continue  # no linear operating range to judge: stability.feedback-sense reports the loop
        ext = cm_extremes(ctx, stage)
        if ext is None:
            yield not_evaluated(ctx, f"{stage.opamp} input common mode", stage_reason(stage, "no common-mode range"),
                                refs=(stage.opamp,), nets=(stage.in_plus,))
            continue
        lo, hi = ext
        d_lo, a_lo = part_value(ctx, stage.opamp, "input_cm_low")
        d_hi, a_hi = part_value(ctx, stage.opamp, "input_cm_high")
        if d_lo is None or d_hi is None:
            continue
        v_minus, v_plus = worst_rails(ctx, stage)
        sides = (
            ("highest", hi, v_plus - d_hi, v_plus - d_hi - hi, a_hi, "above"),
            ("lowest", lo, v_minus + d_lo, lo - (v_minus + d_lo), a_lo, "below"),
        )
        for name, value, limit, margin, assumed, beyond in sides:
            severity = grade_headroom(margin, band, v_plus, v_minus, value, limit)
            if severity is None:
                continue
            value, margin = snap(value, v_plus, v_minus), snap(margin, v_plus, v_minus)
            state = (f"{fmt(-margin, 'V')} {beyond}" if severity == Severity.ERROR
                     else f"only {fmt(margin, 'V')} inside (band {fmt(band, 'V')})")
            rails = f"{fmt(v_minus, 'V')}..{fmt(v_plus, 'V')} at their tolerance"
            text = (f"{stage.opamp} {name} input common mode {fmt(value, 'V')} is {state} its limit "
                    f"{fmt(limit, 'V')} (part {stage.part}, rails {rails})")
            yield make_finding(
                ctx, severity, value=value, limit=limit, unit="V", margin=margin,
                limit_source=f"part {stage.part} input_cm_{'high' if name == 'highest' else 'low'}; warning band "
                             "rule parameter (common practice)",
                message=text, fix=META.fix, refs=(stage.opamp,), nets=(stage.in_plus,), pins=("in+",),
                assumed=assumed, extra={"vcm_min": lo, "vcm_max": hi},
            )
