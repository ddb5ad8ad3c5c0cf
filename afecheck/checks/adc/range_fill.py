"""adc.range: the signal runs past the converter's input range, or uses too few of its codes."""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.checks.adc.shared import adc_of
from afecheck.checks.common import finding, fmt, not_evaluated, pct
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import Param, RuleMeta
from afecheck.sensors.measurand import measurand_note

META = RuleMeta(
    id="adc.range", slug="adc-range-misfit", severity=Severity.ERROR, family="adc",
    summary="the signal at an ADC input runs past the input range, or spans too small a part of it",
    needs=("analysis", "adc-drive"),
    params=(
        Param("min_margin", 0.0, "1", "least margin at either end, as a fraction of full scale (error below)"),
        Param("min_codes_used", 0.25, "1", "least fraction of the codes the signal spans (warning below)"),
    ),
    fix="set the last stage's gain and offset so the signal spans most of the input range with a little margin at "
        "both ends, or choose the converter's range (reference) to suit the signal",
)


def check(ctx: Context) -> Iterator[Finding]:
    """Margin at each end of the input range, then the fraction of codes used."""
    result = adc_of(ctx)
    for net, reason in result.not_evaluated.items():
        yield not_evaluated(ctx, f"ADC range at {net}", reason, nets=(net,))
    for net, a in result.nets.items():
        if a.margin_low is None or a.margin_high is None or a.codes_used is None:
            continue
        fs = a.input_high - a.input_low
        need = ctx.param("min_margin") * fs
        worst = min(a.margin_low, a.margin_high)
        end = "low" if a.margin_low <= a.margin_high else "high"
        common = (f"{net}: signal {a.signal_low:.4g}..{a.signal_high:.4g} V into the {a.bits}-bit converter's "
                  f"{a.input_low:.4g}..{a.input_high:.4g} V range")
        if worst < need:
            lost, numbers = measurand_note(ctx, net, -worst, "V", end=end) if worst < 0 else ("", {})
            yield finding(
                ctx, Severity.ERROR, value=worst, limit=need, unit="V", margin=worst - need,
                limit_source="rule parameter (common practice)",
                message=f"{common} leaves {fmt(worst, 'V')} at the {end} end (limit {fmt(need, 'V')}): "
                        f"readings clip there{'; the part that clips ' + lost if lost else ''}", fix=META.fix,
                nets=(net,),
                extra={"margin_low": a.margin_low, "margin_high": a.margin_high, "codes_used": a.codes_used,
                       **numbers})
        elif a.codes_used < ctx.param("min_codes_used"):
            limit = ctx.param("min_codes_used")
            yield finding(
                ctx, Severity.WARNING, value=a.codes_used, limit=limit, unit="1", margin=a.codes_used - limit,
                limit_source="rule parameter (common practice: under a quarter of the range gives up two bits)",
                message=f"{common} uses {pct(a.codes_used)} of the codes (limit {pct(limit)})", fix=META.fix,
                nets=(net,), extra={"margin_low": a.margin_low, "margin_high": a.margin_high})
