"""distortion.slew-rate: slew rate below once (error) or twice (warning) the 2π·f·Vpk the output signal needs."""

from __future__ import annotations

import math
from collections.abc import Iterator

from afecheck.checks.common import FRANCO, fmt, not_evaluated, switching
from afecheck.checks.common import finding as make_finding
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import Param, RuleMeta

META = RuleMeta(
    id="distortion.slew-rate", slug="slew-rate-too-low", severity=Severity.ERROR, family="distortion",
    summary="op-amp slew rate below 2× (warning) or 1× (error) the required 2π·f·Vpk",
    params=(
        Param("warn_factor", 2.0, "1", "required-slew-rate multiple below which a warning is raised"),
        Param("error_factor", 1.0, "1", "required-slew-rate multiple below which an error is raised"),
    ),
    fix="choose a faster part, lower the output amplitude, or split the gain over two stages",
)


def v_per_us(rate: float) -> str:
    """A slew rate in V/µs with three significant figures."""
    return f"{rate / 1e6:.3g} V/µs"


def check(ctx: Context) -> Iterator[Finding]:
    """Compare the part's slew rate with 2π·f_max·Vpk at the stage output; full-power bandwidth in the message."""
    warn, err = ctx.param("warn_factor"), ctx.param("error_factor")
    for stage in ctx.stages:
        if switching(ctx.loaded, stage.opamp):
            continue  # a declared comparator or Schmitt trigger is not a linear stage
        required = max(stage.required_slew_rate, 2.0 * math.pi * stage.f_max * stage.vout_ac_peak)
        if required <= 0 or stage.opamp not in ctx.loaded.design.components:
            continue
        sr = ctx.loaded.part(stage.opamp).slew_rate
        if sr is None:
            yield not_evaluated(ctx, f"{stage.opamp} slew rate", f"part {stage.part} declares no slew_rate",
                                refs=(stage.opamp,))
            continue
        if sr >= warn * required:
            continue
        severity = Severity.ERROR if sr < err * required else Severity.WARNING
        limit = (err if severity == Severity.ERROR else warn) * required
        fpbw = sr / (2.0 * math.pi * stage.vout_ac_peak) if stage.vout_ac_peak > 0 else math.inf
        text = (f"{stage.opamp} slew rate {v_per_us(sr)} against {v_per_us(required)} needed for "
                f"{fmt(stage.vout_ac_peak, 'V')} peak at {fmt(stage.f_max, 'Hz')} (limit {v_per_us(limit)}); "
                f"full-power bandwidth {fmt(fpbw, 'Hz')}")
        yield make_finding(
            ctx, severity, value=sr, limit=limit, unit="V/s", margin=sr - limit,
            limit_source=f"rule parameter × 2π·f·Vpk (full-power bandwidth, {FRANCO}; factor: common practice)",
            message=text, fix=META.fix,
            refs=(stage.opamp,), nets=(stage.out,),
            extra={"required": required, "full_power_bandwidth": fpbw, "f_max": stage.f_max,
                   "vout_ac_peak": stage.vout_ac_peak},
        )
