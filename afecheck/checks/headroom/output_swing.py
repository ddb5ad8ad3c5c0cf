"""headroom.output-swing: required output voltage beyond the op-amp's swing limit at its actual load."""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.checks.common import FRANCO, fmt, grade_headroom, not_evaluated, rails_known, stage_reason
from afecheck.checks.common import finding as make_finding
from afecheck.checks.headroom.limits import swing
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import RuleMeta
from afecheck.sensors.measurand import measurand_note

META = RuleMeta(
    id="headroom.output-swing", slug="output-beyond-swing-limit", severity=Severity.ERROR, family="headroom",
    summary="required output voltage beyond the op-amp's swing limit at its load (it clips)",
    fix="lower the gain or the input range, move the output reference, lighten the load, or choose a "
        "rail-to-rail-output part",
)


def check(ctx: Context) -> Iterator[Finding]:
    """Error when the highest or lowest required output passes the swing limit (its warning band is another rule)."""
    for stage in ctx.stages:
        if not rails_known(ctx, stage.opamp):
            continue  # supply voltage unknown: coverage.not-evaluated reports it
        if stage.feedback != "negative":
            continue  # no linear operating range to judge: stability.feedback-sense reports the loop
        s = swing(ctx, stage)
        if s is None:
            if stage.vout_min is None or stage.vout_max is None:
                yield not_evaluated(ctx, f"{stage.opamp} output range", stage_reason(stage, "no output range"),
                                    refs=(stage.opamp,), nets=(stage.out,))
            continue
        for name, value, limit, margin in (
            ("highest", s.high_required, s.high_limit, s.high_limit - s.high_required),
            ("lowest", s.low_required, s.low_limit, s.low_required - s.low_limit),
        ):
            if grade_headroom(margin, 0.0, value, limit, stage.rail_plus, stage.rail_minus) is None:
                continue
            text = (f"{stage.opamp} must reach {fmt(value, 'V')} on {stage.out} but its {name} output at this load "
                    f"is {fmt(limit, 'V')} ({fmt(-margin, 'V')} short): the signal clips")
            lost, numbers = measurand_note(ctx, stage.out, -margin, "V", end="high" if name == "highest" else "low")
            yield make_finding(
                ctx, Severity.ERROR, value=value, limit=limit, unit="V", margin=margin,
                limit_source=f"part {stage.part} output swing at this load (common practice; {FRANCO})",
                message=text + (f"; the part that clips {lost}" if lost and margin < 0 else ""), fix=META.fix,
                refs=(stage.opamp,), nets=(stage.out,), pins=("out",), assumed=s.assumed,
                extra=numbers if margin < 0 else None,
            )
