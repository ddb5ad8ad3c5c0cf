"""Output within 100 mV of its swing limit at full signal (not beyond: that is headroom.output-swing)."""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.checks.common import finding as make_finding
from afecheck.checks.common import fmt, grade_headroom, rails_known, snap, switching
from afecheck.checks.headroom.limits import swing
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import Param, RuleMeta

META = RuleMeta(
    id="distortion.near-swing-limit", slug="output-near-swing-limit", severity=Severity.WARNING, family="distortion",
    summary="output at full signal within 100 mV of its swing limit, where output-stage linearity falls",
    params=(Param("band", 0.1, "V", "headroom to the swing limit below which a warning is raised"),),
    fix="lower the gain or output offset a little, lighten the load, or choose a part with more output swing",
)


def check(ctx: Context) -> Iterator[Finding]:
    """Warn when the full-signal output extreme is inside the swing limit by less than the band."""
    band = ctx.param("band")
    for stage in ctx.stages:
        if switching(ctx.loaded, stage.opamp):
            continue  # a declared comparator or Schmitt trigger is not a linear stage
        if not rails_known(ctx, stage.opamp):
            continue  # supply voltage unknown: coverage.not-evaluated reports it
        s = swing(ctx, stage)
        if s is None:
            continue
        for name, value, limit, margin in (
            ("highest", s.high_required, s.high_limit, s.high_limit - s.high_required),
            ("lowest", s.low_required, s.low_limit, s.low_required - s.low_limit),
        ):
            if grade_headroom(margin, band, value, limit, stage.rail_plus, stage.rail_minus) != Severity.WARNING:
                continue  # beyond the limit is headroom.output-swing's; inside by print precision is no warning
            margin = snap(margin, value, limit, stage.rail_plus, stage.rail_minus)
            text = (f"{stage.opamp} output reaches {fmt(value, 'V')} on {stage.out}, only {fmt(margin, 'V')} inside "
                    f"its {name} swing limit {fmt(limit, 'V')} at this load (band {fmt(band, 'V')})")
            yield make_finding(
                ctx, Severity.WARNING, value=value, limit=limit, unit="V", margin=margin,
                limit_source=f"part {stage.part} output swing at this load; band rule parameter (common practice)",
                message=text, fix=META.fix, refs=(stage.opamp,), nets=(stage.out,), pins=("out",), assumed=s.assumed,
            )
