"""What the budget rules share: the whole-chain analyses they read (computed once per design, only for nets with
a budget) and the grading of a computed figure against its budget."""

from __future__ import annotations

from collections.abc import Iterable
from typing import TYPE_CHECKING, Any

from afecheck.checks.common import finding, fmt, grade_above, pct
from afecheck.engine.finding import Finding, Severity
from afecheck.sensors.measurand import measurand_note

if TYPE_CHECKING:
    from afecheck.analysis.dc_error import DcErrorResult
    from afecheck.analysis.noise import NoiseResult
    from afecheck.engine.context import Context

BUDGET_PARAMS = ("budget_warn", "budget_error")


def budget_nets(ctx: Context, *fields: str) -> list[str]:
    """Nets whose budget declares any of ``fields``, in file order."""
    return [net for net, b in ctx.loaded.design.budgets.items() if any(getattr(b, f) is not None for f in fields)]


def noise_of_budgets(ctx: Context) -> NoiseResult:
    """Noise at every net with a noise budget (the one noise computation the rules share)."""
    from afecheck.analysis.noise import analyse_noise

    return ctx.memo("noise-budgets", lambda: analyse_noise(ctx.loaded, budget_nets(ctx, "noise")))


def dc_error_of_budgets(ctx: Context) -> DcErrorResult:
    """DC error, nonlinearity and drift at every net with an offset, gain-accuracy, drift or nonlinearity budget."""
    from afecheck.analysis.dc_error import analyse_dc_error

    return ctx.memo("dc-error-budgets", lambda: analyse_dc_error(
        ctx.loaded, budget_nets(ctx, "offset", "gain_accuracy", "drift", "nonlinearity"),
        nonlinearity=bool(budget_nets(ctx, "nonlinearity"))))


def top_shares(items: Iterable[Any], count: int = 3) -> str:
    """``U1 voltage noise 45 %, R3 thermal 28 %`` for the first ``count`` contributors (``name``, ``share``)."""
    return ", ".join(f"{c.name} {pct(c.share, 2)}" for c in list(items)[:count])


def over_budget(ctx: Context, net: str, field: str, value: float, budget: float, unit: str, what: str,
                detail: str, refs: tuple[str, ...] = (), assumed: Iterable[str] = (),
                extra: dict[str, Any] | None = None) -> Finding | None:
    """A finding when ``value`` passes the warning or error share of ``budget``; None when it is inside."""
    share = value / budget
    severity = grade_above(share, ctx.param("budget_warn"), ctx.param("budget_error"))
    if severity is None:
        return None
    limit_share = ctx.param("budget_error" if severity == Severity.ERROR else "budget_warn")
    limit = limit_share * budget
    shown = pct if unit == "1" else (lambda v: fmt(v, unit))
    at_sensor, numbers = measurand_note(ctx, net, value, unit, limit)
    text = (f"{net}: {what} {shown(value)} is {pct(share)} of its {shown(budget)} budget (limit {shown(limit)}); "
            f"{at_sensor + '; ' if at_sensor else ''}{detail}")
    meta = ctx.rule
    assert meta is not None
    return finding(ctx, severity, value=value, limit=limit, unit=unit, margin=limit - value,
                   limit_source=f"budgets.{net}.{field} × rule parameter", message=text, fix=meta.fix, refs=refs,
                   nets=(net,), assumed=assumed, extra={**(extra or {}), **numbers})
