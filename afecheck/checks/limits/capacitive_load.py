"""limits.capacitive-load: an op-amp drives more capacitance than its part allows; the isolation resistor is given."""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.checks.common import finding, fmt
from afecheck.checks.limits.shared import supply_of
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import RuleMeta

META = RuleMeta(
    id="limits.capacitive-load", slug="capacitive-load-over-limit", severity=Severity.WARNING, family="limits",
    summary="the load capacitance on an op-amp output exceeds the part's declared limit",
    fix="put the computed isolation resistor between the output and the capacitance (feedback taken before it), "
        "or reduce the capacitance",
)


def check(ctx: Context) -> Iterator[Finding]:
    """Load capacitance against ``max_capacitive_load``, with the isolation resistor that restores the margin."""
    for ref, c in supply_of(ctx).opamps.items():
        if c.max_capacitive_load is None or c.load_capacitance <= c.max_capacitive_load:
            continue
        if c.isolation_resistance is not None:
            cure = (f"a {fmt(c.isolation_resistance, 'Ω')} isolation resistor restores "
                    f"{c.phase_margin_with_iso_deg:.1f}° of phase margin")
        else:
            cure = "; ".join(c.notes) or "no isolation resistor was computed"
        yield finding(
            ctx, Severity.WARNING, value=c.load_capacitance, limit=c.max_capacitive_load, unit="F",
            margin=c.max_capacitive_load - c.load_capacitance, limit_source=f"part {c.part}: max_capacitive_load",
            message=f"{ref}: {fmt(c.load_capacitance, 'F')} on its output, above the {c.part}'s "
                    f"{fmt(c.max_capacitive_load, 'F')} limit; {cure}",
            fix=META.fix, refs=(ref,),
            extra={"isolation_resistance": c.isolation_resistance if c.isolation_resistance is not None else -1.0})
