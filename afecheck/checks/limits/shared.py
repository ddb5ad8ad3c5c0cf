"""The supply-and-abuse analysis the limit rules share, computed once per design."""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from afecheck.analysis.supply import SupplyResult
    from afecheck.engine.context import Context


def supply_of(ctx: Context) -> SupplyResult:
    """Supply span, input overdrive and capacitive load of every analysed op-amp."""
    from afecheck.analysis.supply import analyse_supply

    return ctx.memo("supply", lambda: analyse_supply(ctx.loaded, ctx.analysis))
