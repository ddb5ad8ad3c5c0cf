"""adc.kick-back: the RC's capacitor is too small against the converter's sampling capacitor."""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.checks.adc.shared import adc_of
from afecheck.checks.common import finding, fmt, pct
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import Param, RuleMeta

META = RuleMeta(
    id="adc.kick-back", slug="adc-kick-back-risk", severity=Severity.WARNING, family="adc",
    summary="the capacitor at an ADC input is small against the sampling capacitor, so each sample kicks the input",
    needs=("analysis", "adc-drive"),
    params=(Param("min_ratio", 20.0, "1", "least ratio of the RC's capacitor to the sampling capacitor"),),
    fix="put a capacitor at the converter input at least 20 times its sampling capacitor (C0G), with the series "
        "resistor sized for settling",
)


def check(ctx: Context) -> Iterator[Finding]:
    """C_RC / C_sample at each ADC net that declares its sampling capacitor."""
    limit = ctx.param("min_ratio")
    for net, a in adc_of(ctx).nets.items():
        if a.capacitor_ratio is None or a.sampling_capacitance is None or a.capacitor_ratio >= limit:
            continue
        step = a.sampling_capacitance / (a.rc_capacitance + a.sampling_capacitance)
        yield finding(
            ctx, Severity.WARNING, value=a.capacitor_ratio, limit=limit, unit="1", margin=a.capacitor_ratio - limit,
            limit_source="rule parameter (common practice)",
            message=f"{net}: {fmt(a.rc_capacitance, 'F')} at the input against the converter's "
                    f"{fmt(a.sampling_capacitance, 'F')} sampling capacitor (ratio {a.capacitor_ratio:.3g}, limit "
                    f"{limit:g}): each sample pulls the input by {pct(step)} of the step it meets",
            fix=META.fix, refs=a.series_refs, nets=(net,), extra={"charge_share": step})
