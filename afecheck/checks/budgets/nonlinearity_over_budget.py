"""budgets.nonlinearity: the channel's end-point nonlinearity is larger than the net's nonlinearity budget."""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.checks.budgets.shared import dc_error_of_budgets, over_budget
from afecheck.checks.common import fmt, not_evaluated
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import Param, RuleMeta

META = RuleMeta(
    id="budgets.nonlinearity", slug="nonlinearity-over-budget", severity=Severity.ERROR, family="budgets",
    summary="end-point nonlinearity (largest deviation from the line through the range's ends, fraction of the "
            "output span) exceeds the budget",
    needs=("dc-error",),
    params=(
        Param("budget_warn", 0.8, "1", "share of the nonlinearity budget above which a warning is raised"),
        Param("budget_error", 1.0, "1", "share of the nonlinearity budget above which an error is raised"),
    ),
    fix="linearise the sensor where it sits (a parallel resistor across a thermistor, a top resistor chosen for the "
        "range, a half or full bridge in place of a quarter bridge, constant-current excitation of an RTD), or "
        "correct the curve in firmware and drop this budget",
)


def check(ctx: Context) -> Iterator[Finding]:
    """|worst deviation| / |output span| at the net against ``budgets.<net>.nonlinearity``."""
    result = dc_error_of_budgets(ctx)
    for net, budget in ctx.loaded.design.budgets.items():
        if budget.nonlinearity is None:
            continue
        if net in result.not_evaluated:
            yield not_evaluated(ctx, f"nonlinearity at {net}", result.not_evaluated[net], nets=(net,))
            continue
        nl = result.nets[net].nonlinearity
        if nl is None or nl.fraction is None:
            yield not_evaluated(ctx, f"nonlinearity at {net}", "the net's DC output does not move across the "
                                "declared range (AC-only signal, or no signal or sensor drives it)", nets=(net,))
            continue
        found = over_budget(
            ctx, net, "nonlinearity", nl.fraction, budget.nonlinearity, "1", "end-point nonlinearity",
            f"the output strays {fmt(abs(nl.worst), 'V')} from the straight line through its ends "
            f"({fmt(nl.outputs[0], 'V')} and {fmt(nl.outputs[-1], 'V')}) at {100 * nl.at:.0f} % of the range; "
            f"swept: {nl.over}", refs=nl.refs,
            extra={"deviation": nl.worst, "at": nl.at, "span": nl.span, "over": nl.over})
        if found is not None:
            yield found

