"""budgets.offset: the worst-case output offset of the whole channel is larger than the net's offset budget."""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.checks.budgets.shared import dc_error_of_budgets, over_budget
from afecheck.checks.common import fmt, not_evaluated
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import Param, RuleMeta

META = RuleMeta(
    id="budgets.offset", slug="offset-over-budget", severity=Severity.ERROR, family="budgets",
    summary="worst-case output offset (every offset, bias current and tolerance term, linear sum) exceeds the budget",
    needs=("dc-error",),
    params=(
        Param("budget_warn", 0.8, "1", "share of the offset budget above which a warning is raised"),
        Param("budget_error", 1.0, "1", "share of the offset budget above which an error is raised"),
    ),
    fix="attack the terms at the top of the list: a lower-offset or lower-bias-current part for the stage that "
        "leads, lower resistances where bias current flows, a tighter reference; or calibrate the offset out",
)


def terms_text(terms, key: str, unit: str, count: int = 3) -> str:  # noqa: ANN001 - DcTerm sequence
    """``U1 offset voltage 1.00 mV, R1 tolerance 0.20 mV`` for the largest ``count`` counted terms by ``key``."""
    ranked = sorted((t for t in terms if t.kind != "sensor"), key=lambda t: -abs(getattr(t, key) or 0.0))[:count]
    if unit == "1":
        return ", ".join(f"{t.name} {100 * abs(getattr(t, key) or 0.0):.3g} %" for t in ranked)
    return ", ".join(f"{t.name} {fmt(abs(getattr(t, key) or 0.0), unit)}" for t in ranked)


def check(ctx: Context) -> Iterator[Finding]:
    """Σ|offset term| at the net against ``budgets.<net>.offset``; the RSS and the largest terms in the message."""
    result = dc_error_of_budgets(ctx)
    for net, budget in ctx.loaded.design.budgets.items():
        if budget.offset is None:
            continue
        if net in result.not_evaluated:
            yield not_evaluated(ctx, f"offset at {net}", result.not_evaluated[net], nets=(net,))
            continue
        e = result.nets[net]
        lead = max((t for t in e.terms if t.kind != "sensor"), key=lambda t: abs(t.offset), default=None)
        found = over_budget(
            ctx, net, "offset", e.offset_worst, budget.offset, "V", "worst-case offset (linear sum)",
            f"statistical (RSS) {fmt(e.offset_rss, 'V')}; largest terms: {terms_text(e.terms, 'offset', 'V')}",
            refs=lead.refs if lead else (), assumed=e.assumed,
            extra={"rss": e.offset_rss, "top_terms": terms_text(e.terms, "offset", "V")})
        if found is not None:
            yield found
