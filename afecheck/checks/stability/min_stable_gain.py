"""stability.min-stable-gain: a decompensated op-amp whose noise gain at crossover is below its minimum stable gain."""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.checks.common import finding as make_finding
from afecheck.checks.common import fmt, not_evaluated, stage_reason
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import RuleMeta

META = RuleMeta(
    id="stability.min-stable-gain", slug="noise-gain-below-minimum-stable", severity=Severity.ERROR, family="stability",
    summary="decompensated op-amp run below its minimum stable noise gain at crossover",
    fix="raise the high-frequency noise gain (resistor between the inputs, smaller feedback capacitor, more gain) "
        "or choose a unity-gain-stable part",
)


def check(ctx: Context) -> Iterator[Finding]:
    """Compare the noise gain at crossover (not the signal gain) with the part's declared minimum stable gain."""
    for stage in ctx.stages:
        if stage.feedback != "negative" or stage.opamp not in ctx.loaded.design.components:
            continue
        gmin = ctx.loaded.part(stage.opamp).min_stable_gain
        if gmin is None or gmin <= 1.0:
            continue
        ng = stage.noise_gain_at_crossover
        if ng is None:
            yield not_evaluated(ctx, f"{stage.opamp} noise gain at crossover",
                                stage_reason(stage, "no loop-gain crossover found"), refs=(stage.opamp,))
            continue
        if ng >= gmin:
            continue
        why = "the signal gain sets it too low"
        if stage.noise_gain_hf is not None and stage.noise_gain_dc and stage.noise_gain_hf < 0.9 * stage.noise_gain_dc:
            why = (f"a feedback capacitor drops it from {stage.noise_gain_dc:.3g} at DC toward "
                   f"{stage.noise_gain_hf:.3g} at high frequency (1 + Cg/Cf)")
        at = f" at {fmt(stage.crossover_hz, 'Hz')}" if stage.crossover_hz else ""
        text = (f"{stage.opamp} noise gain {ng:.3g}{at} is below its minimum stable gain {gmin:.3g} "
                f"(limit from part {stage.part}): {why}")
        yield make_finding(
            ctx, Severity.ERROR, value=ng, limit=gmin, unit="V/V", margin=ng - gmin,
            limit_source=f"part {stage.part} min_stable_gain", message=text, fix=META.fix,
            refs=(stage.opamp,), nets=(stage.in_minus, stage.out), estimated=stage.estimated,
            extra={"noise_gain_dc": stage.noise_gain_dc, "noise_gain_hf": stage.noise_gain_hf},
        )
