"""budgets.gain-error: the worst-case gain error of the whole channel is larger than the net's gain accuracy."""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.checks.budgets.offset_over_budget import terms_text
from afecheck.checks.budgets.shared import dc_error_of_budgets, over_budget
from afecheck.checks.common import not_evaluated, pct
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import Param, RuleMeta

META = RuleMeta(
    id="budgets.gain-error", slug="gain-error-over-budget", severity=Severity.ERROR, family="budgets",
    summary="worst-case gain error (tolerances, reference, finite open-loop gain; linear sum) exceeds the budget",
    needs=("dc-error",),
    params=(
        Param("budget_warn", 0.8, "1", "share of the gain-accuracy budget above which a warning is raised"),
        Param("budget_error", 1.0, "1", "share of the gain-accuracy budget above which an error is raised"),
    ),
    fix="tighten the tolerance of the resistors that set the gain (or use a matched network, whose ratio "
        "tolerance is what counts), a tighter reference, or a part with more open-loop gain; or calibrate the gain",
)


def check(ctx: Context) -> Iterator[Finding]:
    """Σ|gain-error term| (fraction of the ideal span) against ``budgets.<net>.gain_accuracy``."""
    result = dc_error_of_budgets(ctx)
    for net, budget in ctx.loaded.design.budgets.items():
        if budget.gain_accuracy is None:
            continue
        if net in result.not_evaluated:
            yield not_evaluated(ctx, f"gain error at {net}", result.not_evaluated[net], nets=(net,))
            continue
        e = result.nets[net]
        if e.gain_error_worst is None:
            yield not_evaluated(ctx, f"gain error at {net}",
                                "no declared signal gives the net a straight-line DC span (AC-only, or a thermistor "
                                "or reference channel)", nets=(net,))
            continue
        lead = max((t for t in e.terms if t.kind != "sensor"), key=lambda t: abs(t.gain_error or 0.0), default=None)
        found = over_budget(
            ctx, net, "gain_accuracy", e.gain_error_worst, budget.gain_accuracy, "1",
            "worst-case gain error (linear sum)",
            f"statistical (RSS) {pct(e.gain_error_rss or 0.0)}; largest terms: "
            f"{terms_text(e.terms, 'gain_error', '1')}",
            refs=lead.refs if lead else (), assumed=e.assumed,
            extra={"rss": e.gain_error_rss or 0.0, "top_terms": terms_text(e.terms, "gain_error", "1")})
        if found is not None:
            yield found
