"""headroom.output-current: peak output current near or above the op-amp's output current limit."""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.checks.common import finding as make_finding
from afecheck.checks.common import fmt, grade_above, part_value, pct
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import Param, RuleMeta

META = RuleMeta(
    id="headroom.output-current", slug="output-current-near-limit", severity=Severity.ERROR, family="headroom",
    summary="peak output current above 50 % (warning) or 100 % (error) of the part's limit",
    params=(
        Param("warn_fraction", 0.5, "1", "share of the current limit above which a warning is raised"),
        Param("error_fraction", 1.0, "1", "share of the current limit above which an error is raised"),
    ),
    fix="raise the load and feedback resistances, add a buffer stage, or choose a part with more output current",
)


def check(ctx: Context) -> Iterator[Finding]:
    """Peak output current (load and feedback network) against the part's current limit."""
    warn, err = ctx.param("warn_fraction"), ctx.param("error_fraction")
    for stage in ctx.stages:
        if stage.iout_peak is None:
            continue
        limit_a, assumed = part_value(ctx, stage.opamp, "output_current_limit")
        if not limit_a:
            continue
        share = abs(stage.iout_peak) / limit_a
        severity = grade_above(share, warn, err)
        if severity is None:
            continue
        limit = (err if severity == Severity.ERROR else warn) * limit_a
        text = (f"{stage.opamp} output current reaches {fmt(abs(stage.iout_peak), 'A')}, {pct(share)} of its "
                f"{fmt(limit_a, 'A')} limit (limit {fmt(limit, 'A')})")
        yield make_finding(
            ctx, severity, value=abs(stage.iout_peak), limit=limit, unit="A", margin=limit - abs(stage.iout_peak),
            limit_source=f"part {stage.part} output_current_limit × rule parameter (common practice)",
            message=text, fix=META.fix, refs=(stage.opamp,), nets=(stage.out,), pins=("out",), assumed=assumed,
        )
