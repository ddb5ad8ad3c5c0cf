"""Parts of the design the analysis could not evaluate, reported so that nothing passes silently."""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.checks.common import not_evaluated
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import RuleMeta

META = RuleMeta(
    id="coverage.not-evaluated", slug="analysis-incomplete", severity=Severity.INFO, family="coverage",
    summary="part of the design could not be analysed; the rules did not judge it",
    fix="give the missing data (part model, rail voltage, signal range) or review that part by hand",
)


def check(ctx: Context) -> Iterator[Finding]:
    """One not-evaluated finding per (refs, reason) the design analysis returned."""
    for refs, reason in ctx.analysis.not_evaluated:
        yield not_evaluated(ctx, ", ".join(refs) or "design", reason, refs=tuple(refs))
