"""Large common-mode swing in a non-inverting stage: error referred to the input via CMRR."""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.checks.common import db, fmt, part_value, pct, switching
from afecheck.checks.common import finding as make_finding
from afecheck.checks.headroom.limits import cm_extremes
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import Param, RuleMeta

META = RuleMeta(
    id="distortion.common-mode-error", slug="common-mode-swing-error", severity=Severity.WARNING, family="distortion",
    summary="common-mode swing through finite CMRR uses up the output error budget",
    params=(
        Param("budget_share", 0.25, "1", "share of the offset budget the CMRR error may take"),
        Param("lsb_share", 0.5, "1", "share of one ADC LSB the CMRR error may take when no budget is declared"),
    ),
    fix="use an inverting configuration (constant common mode) or a part with higher CMRR",
)


def check(ctx: Context) -> Iterator[Finding]:
    """Output error NG·ΔVcm_pp/CMRR against the declared offset budget or the ADC LSB on the stage output."""
    for stage in ctx.stages:
        if switching(ctx.loaded, stage.opamp):
            continue  # a declared comparator or Schmitt trigger is not a linear stage
        if stage.topology not in ("follower", "non-inverting") or stage.noise_gain_dc is None:
            continue
        ext = cm_extremes(ctx, stage)
        if ext is None or ext[1] <= ext[0]:
            continue
        swing_pp = ext[1] - ext[0]
        cmrr, assumed = part_value(ctx, stage.opamp, "cmrr")
        if not cmrr:
            continue
        error_out = stage.noise_gain_dc * swing_pp / cmrr
        budget = ctx.loaded.design.budgets.get(stage.out)
        load = ctx.loaded.design.loads.get(stage.out)
        if budget is not None and budget.offset:
            share = ctx.param("budget_share")
            limit, against = share * budget.offset, f"{pct(share)} of the {fmt(budget.offset, 'V')} offset budget"
            source = f"budgets.{stage.out}.offset × rule parameter"
        elif load is not None and load.adc is not None:
            lsb = load.adc.full_scale / 2 ** load.adc.bits
            share = ctx.param("lsb_share")
            limit, against = share * lsb, f"{share:g} LSB of the {load.adc.bits}-bit ADC"
            source = f"loads.{stage.out}.adc × rule parameter"
        else:
            continue
        if error_out <= limit:
            continue
        text = (f"{stage.opamp} common mode swings {fmt(swing_pp, 'V')} peak-to-peak; with CMRR {db(cmrr):.0f} dB "
                f"that is {fmt(swing_pp / cmrr, 'V')} at the input, {fmt(error_out, 'V')} at {stage.out} "
                f"(limit {fmt(limit, 'V')}, {against})")
        yield make_finding(
            ctx, Severity.WARNING, value=error_out, limit=limit, unit="V", margin=limit - error_out,
            limit_source=source, message=text, fix=META.fix, refs=(stage.opamp,), nets=(stage.in_plus, stage.out),
            assumed=assumed, extra={"cm_swing_pp": swing_pp, "cmrr": cmrr, "input_error": swing_pp / cmrr},
        )
