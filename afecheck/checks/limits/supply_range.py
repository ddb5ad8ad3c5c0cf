"""limits.supply-range: the rails put an op-amp outside its supply range at some tolerance corner."""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.checks.common import finding, fmt
from afecheck.checks.limits.shared import supply_of
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import RuleMeta

META = RuleMeta(
    id="limits.supply-range", slug="supply-outside-part-range", severity=Severity.ERROR, family="limits",
    summary="the supply span V+ − V−, over the rails' tolerances, leaves the part's minimum..maximum supply",
    fix="choose a part rated for the rails, or change the rails (or their tolerance) to fit the part",
)


def check(ctx: Context) -> Iterator[Finding]:
    """Lowest span against ``supply_min`` and highest against ``supply_max`` for every op-amp."""
    for ref, c in supply_of(ctx).opamps.items():
        if c.span_min is None or c.span_max is None:
            continue
        side = f"(V+ {c.plus_v:g} V, V- {c.minus_v:g} V with their tolerances)"
        if c.supply_max is not None and c.span_max > c.supply_max:
            yield finding(
                ctx, Severity.ERROR, value=c.span_max, limit=c.supply_max, unit="V", margin=c.supply_max - c.span_max,
                limit_source=f"part {c.part}: supply_max", refs=(ref,),
                message=f"{ref}: the supply reaches {fmt(c.span_max, 'V')} {side}, above the {c.part}'s "
                        f"{fmt(c.supply_max, 'V')} maximum", fix=META.fix)
        if c.supply_min is not None and c.span_min < c.supply_min:
            yield finding(
                ctx, Severity.ERROR, value=c.span_min, limit=c.supply_min, unit="V", margin=c.span_min - c.supply_min,
                limit_source=f"part {c.part}: supply_min", refs=(ref,),
                message=f"{ref}: the supply falls to {fmt(c.span_min, 'V')} {side}, below the {c.part}'s "
                        f"{fmt(c.supply_min, 'V')} minimum", fix=META.fix)
