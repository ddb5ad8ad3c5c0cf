"""limits.input-current: a source driven past a rail pushes more current into an op-amp input than it allows."""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.checks.common import finding, fmt
from afecheck.checks.limits.shared import supply_of
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import RuleMeta

META = RuleMeta(
    id="limits.input-current", slug="input-overvoltage-current", severity=Severity.ERROR, family="limits",
    summary="a declared source beyond a rail drives more current into an input's protection than the part allows",
    fix="add series resistance at the input so (V − rail − 0.5 V)/R stays under the part's limit, or clamp the "
        "input with external diodes to the rails (and a resistor before them)",
)


def check(ctx: Context) -> Iterator[Finding]:
    """(V − rail − 0.5 V)/(Rsource + series R) against ``input_current_limit`` for every over-driven input."""
    for ref, c in supply_of(ctx).opamps.items():
        for d in c.inputs:
            if d.current <= c.input_current_limit:
                continue
            if d.resistance <= 0:
                yield finding(
                    ctx, Severity.ERROR, value=d.beyond_v, limit=0.0, unit="V", margin=-d.beyond_v,
                    limit_source="0.5 V protection-diode drop (common practice); no resistance limits the current",
                    message=f"{ref} {d.pin}: {d.source} goes {fmt(d.beyond_v, 'V')} past a rail and its protection "
                            "diode with no resistance in the way: the pin's current is limited only by the source",
                    fix=META.fix, refs=(ref,), nets=(d.source,), pins=(d.pin,), assumed=c.assumed)
                continue
            yield finding(
                ctx, Severity.ERROR, value=d.current, limit=c.input_current_limit, unit="A",
                margin=c.input_current_limit - d.current,
                limit_source=f"part {c.part}: input_current_limit; 0.5 V protection-diode drop (common practice)",
                message=f"{ref} {d.pin}: {d.source} goes {fmt(d.beyond_v, 'V')} past a rail and its protection diode; "
                        f"through {fmt(d.resistance, 'Ω')} that drives {fmt(d.current, 'A')} into the pin "
                        f"(limit {fmt(c.input_current_limit, 'A')})",
                fix=META.fix, refs=(ref,), nets=(d.source,), pins=(d.pin,), assumed=c.assumed,
                extra={"beyond_v": d.beyond_v, "resistance": d.resistance})
