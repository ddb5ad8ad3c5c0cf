"""Parts of the design the analysis could not evaluate, reported so that nothing passes silently.

A warning by default: a stage that was not fully evaluated counts toward the verdict (``--fail-on warning`` fails
on it), and the report's summary line counts such stages. A stage declared as a comparator or Schmitt trigger has
no linear loop on purpose, so the reasons that follow from that (no feedback, no crossover) are not reported.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import replace

from afecheck.checks.common import not_evaluated, switching
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import RuleMeta

META = RuleMeta(
    id="coverage.not-evaluated", slug="analysis-incomplete", severity=Severity.WARNING, family="coverage",
    summary="part of the design could not be analysed; the rules did not judge it",
    fix="give the missing data (part model, rail voltage, signal range) or review that part by hand",
)


_LINEAR_ONLY = ("no DC feedback", "no crossover")


def check(ctx: Context) -> Iterator[Finding]:
    """One not-evaluated warning per (refs, reason) the design analysis returned."""
    for refs, reason in ctx.analysis.not_evaluated:
        if len(refs) == 1 and switching(ctx.loaded, refs[0]):
            kept = [r for r in reason.split("; ") if not r.startswith(_LINEAR_ONLY)]
            if not kept:
                continue
            reason = "; ".join(kept)
        yield replace(not_evaluated(ctx, ", ".join(refs) or "design", reason, refs=tuple(refs)),
                      severity=META.severity)
