"""budgets.drift: the output's worst-case change over the operating temperature range exceeds the drift budget."""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.checks.budgets.offset_over_budget import terms_text
from afecheck.checks.budgets.shared import dc_error_of_budgets, over_budget
from afecheck.checks.common import fmt, not_evaluated
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import Param, RuleMeta

META = RuleMeta(
    id="budgets.drift", slug="drift-over-budget", severity=Severity.ERROR, family="budgets",
    summary="worst-case output drift over the operating temperature range (offset drift, tempcos) exceeds the budget",
    needs=("dc-error",),
    params=(
        Param("budget_warn", 0.8, "1", "share of the drift budget above which a warning is raised"),
        Param("budget_error", 1.0, "1", "share of the drift budget above which an error is raised"),
    ),
    fix="choose a lower-drift part for the stage that leads, resistors with a lower temperature coefficient (or a "
        "tracking network so ratios hold), a lower-tempco reference; or narrow the operating range",
)


def check(ctx: Context) -> Iterator[Finding]:
    """Σ|drift term| from 25 °C to the further end of ``operating_temperature`` against ``budgets.<net>.drift``."""
    result = dc_error_of_budgets(ctx)
    for net, budget in ctx.loaded.design.budgets.items():
        if budget.drift is None:
            continue
        if net in result.not_evaluated:
            yield not_evaluated(ctx, f"drift at {net}", result.not_evaluated[net], nets=(net,))
            continue
        e = result.nets[net]
        if e.temperature_range is None:
            yield not_evaluated(ctx, f"drift at {net}", "the design declares no operating_temperature range",
                                nets=(net,))
            continue
        lead = e.drift_terms[0] if e.drift_terms else None
        lo, hi = e.temperature_range
        found = over_budget(
            ctx, net, "drift", e.drift_worst, budget.drift, "V", f"worst-case drift over {lo:g}..{hi:g} °C",
            f"statistical (RSS) {fmt(e.drift_rss, 'V')}; largest terms: {terms_text(e.drift_terms, 'error_high', 'V')}",
            refs=lead.refs if lead else (), assumed=e.drift_assumed,
            extra={"rss": e.drift_rss, "temperature_low_c": lo, "temperature_high_c": hi})
        if found is not None:
            yield found
