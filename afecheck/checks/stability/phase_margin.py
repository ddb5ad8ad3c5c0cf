"""Phase margin of an op-amp loop from its return ratio (input C, feedback C and load included)."""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.checks.common import FRANCO, deg, fmt, grade_below, not_evaluated, stage_assumed, stage_reason
from afecheck.checks.common import finding as make_finding
from afecheck.checks.stability.causes import main_cause
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import Param, RuleMeta

META = RuleMeta(
    id="stability.phase-margin", slug="phase-margin-below-limit", severity=Severity.ERROR, family="stability",
    summary="loop phase margin below 45° (error) or 60° (warning)",
    params=(
        Param("warn_deg", 60.0, "deg", "phase margin below which a warning is raised"),
        Param("error_deg", 45.0, "deg", "phase margin below which an error is raised"),
    ),
    fix="remove the extra phase lag named in the message (isolation resistor, feedback capacitor, more noise gain)",
)


def check(ctx: Context) -> Iterator[Finding]:
    """Grade each negative-feedback loop's phase margin and name the pole or zero that eats it."""
    warn, err = ctx.param("warn_deg"), ctx.param("error_deg")
    for stage in ctx.stages:
        if stage.feedback != "negative":
            continue
        pm = stage.phase_margin_deg
        if pm is None or stage.crossover_hz is None:
            yield not_evaluated(ctx, f"{stage.opamp} phase margin", stage_reason(stage, "no loop-gain crossover found"),
                                refs=(stage.opamp,), nets=(stage.out,))
            continue
        severity = grade_below(pm, warn, err)
        if severity is None:
            continue
        limit = err if severity == Severity.ERROR else warn
        cause = main_cause(ctx, stage)
        at = fmt(stage.crossover_hz, "Hz")
        text = f"{stage.opamp} phase margin {deg(pm)} at {at} (limit {limit:g}°): {cause.text}"
        yield make_finding(
            ctx, severity, value=pm, limit=limit, unit="deg", margin=pm - limit,
            limit_source=f"rule parameter: 45° minimum, 60° preferred (common practice; {FRANCO})", message=text,
            fix=cause.fix, refs=cause.refs, nets=(stage.out,), assumed=(*stage_assumed(stage), *cause.assumed),
            estimated=stage.estimated,
            extra={"crossover_hz": stage.crossover_hz, "cause": cause.kind, "cause_hz": cause.frequency,
                   "noise_gain_at_crossover": stage.noise_gain_at_crossover},
        )
