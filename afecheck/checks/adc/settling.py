"""adc.settling: the driver and its RC do not settle to half an LSB within the acquisition time."""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.checks.adc.shared import acquisition_assumed, adc_of
from afecheck.checks.common import finding, fmt
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import RuleMeta

META = RuleMeta(
    id="adc.settling", slug="adc-settling-short", severity=Severity.ERROR, family="adc",
    summary="driver plus RC need more than the acquisition time to settle to half an LSB, (N + 1)·ln 2 time constants",
    needs=("analysis", "adc-drive"),
    fix="lower the RC's resistance or capacitance (keeping the capacitor large against the sampling capacitor), "
        "choose a faster driver, or lengthen the acquisition time",
)


def check(ctx: Context) -> Iterator[Finding]:
    """(N + 1)·ln 2 · √(τ_RC² + τ_driver²) against the acquisition time at each ADC net."""
    for net, a in adc_of(ctx).nets.items():
        if a.settling_time is None or a.tau is None or a.settling_time <= a.acquisition_time:
            continue
        given = "declared" if not a.acquisition_assumed else "assumed, half the sample period"
        yield finding(
            ctx, Severity.ERROR, value=a.settling_time, limit=a.acquisition_time, unit="s",
            margin=a.acquisition_time - a.settling_time,
            limit_source=f"loads.{net}.adc.acquisition_time ({given}); (N + 1)·ln 2 time constants to ½ LSB",
            message=f"{net}: {a.driver} through {fmt(a.series_resistance, 'Ω')} into "
                    f"{fmt(a.rc_capacitance + a.load_capacitance, 'F')} settles with τ = {fmt(a.tau, 's')}; "
                    f"{a.time_constants_needed:.2f} time constants to ½ LSB take {fmt(a.settling_time, 's')} "
                    f"against the {fmt(a.acquisition_time, 's')} acquisition time ({given})",
            fix=META.fix, refs=(*a.series_refs, *((a.driver,) if a.driver else ())), nets=(net,),
            assumed=acquisition_assumed(net, a.acquisition_assumed),
            extra={"tau": a.tau, "time_constants": a.time_constants_needed})
