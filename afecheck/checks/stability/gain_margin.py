"""stability.gain-margin: gain margin at the loop's -180° crossing below the limit."""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.checks.common import GHLM, grade_below, stage_assumed
from afecheck.checks.common import finding as make_finding
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import Param, RuleMeta

META = RuleMeta(
    id="stability.gain-margin", slug="gain-margin-below-limit", severity=Severity.WARNING, family="stability",
    summary="loop gain margin at the -180° crossing below 6 dB (warning) or 0 dB (error)",
    params=(
        Param("warn_db", 6.0, "dB", "gain margin below which a warning is raised"),
        Param("error_db", 0.0, "dB", "gain margin below which an error is raised (the loop is unstable)"),
    ),
    fix="add phase margin (see the phase-margin finding) or lower the loop gain where the phase reaches -180°",
)


def check(ctx: Context) -> Iterator[Finding]:
    """Warn when 1/|T| at the first -180° crossing is less than the limit (no crossing: infinite margin)."""
    warn, err = ctx.param("warn_db"), ctx.param("error_db")
    for stage in ctx.stages:
        gm = stage.gain_margin_db
        if stage.feedback != "negative" or gm is None:
            continue
        severity = grade_below(gm, warn, err)
        if severity is None:
            continue
        limit = err if severity == Severity.ERROR else warn
        what = "the loop gain exceeds 1 where its phase reaches -180°" if gm < 0 else \
            "a small rise in loop gain would oscillate"
        text = f"{stage.opamp} gain margin {gm:.1f} dB (limit {limit:g} dB): {what}"
        yield make_finding(
            ctx, severity, value=gm, limit=limit, unit="dB", margin=gm - limit,
            limit_source=f"rule parameter (common practice; gain margin as in {GHLM})", message=text, fix=META.fix,
            refs=(stage.opamp,), nets=(stage.out,), assumed=stage_assumed(stage), estimated=stage.estimated,
        )
