"""The ADC-drive analysis the ADC rules share, computed once per design (identical channels solved once)."""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from afecheck.analysis.adc_drive import AdcResult
    from afecheck.engine.context import Context


def adc_of(ctx: Context) -> AdcResult:
    """Drive figures at every net with ``loads.<net>.adc``."""
    from afecheck.analysis.adc_drive import analyse_adc

    return ctx.memo("adc-drive", lambda: analyse_adc(ctx.loaded, ctx.analysis))


def acquisition_assumed(net: str, assumed: bool) -> tuple[str, ...]:
    """The assumption list of a figure resting on the default acquisition time."""
    return (f"loads.{net}.adc.acquisition_time",) if assumed else ()
