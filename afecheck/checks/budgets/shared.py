"""What the budget rules share: the whole-chain analyses they read, computed once per design and only where asked."""

from __future__ import annotations

from typing import TYPE_CHECKING

from afecheck.checks.common import pct

if TYPE_CHECKING:
    from afecheck.analysis.noise import NoiseResult
    from afecheck.engine.context import Context


def budget_nets(ctx: Context, field: str) -> list[str]:
    """Nets whose budget declares ``field``, in file order."""
    return [net for net, b in ctx.loaded.design.budgets.items() if getattr(b, field) is not None]


def noise_of_budgets(ctx: Context) -> NoiseResult:
    """Noise at every net with a noise budget (the one noise computation the rules share)."""
    from afecheck.analysis.noise import analyse_noise

    return ctx.memo("noise-budgets", lambda: analyse_noise(ctx.loaded, budget_nets(ctx, "noise")))


def top_shares(items, count: int = 3) -> str:  # noqa: ANN001 - contributors with .name and .share
    """``U1 voltage noise 45 %, R3 thermal 28 %`` for the first ``count`` contributors."""
    return ", ".join(f"{c.name} {pct(c.share, 2)}" for c in list(items)[:count])
