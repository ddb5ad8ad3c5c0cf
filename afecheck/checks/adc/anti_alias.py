"""adc.anti-alias: the channel attenuates the first alias frequency less than the converter resolves."""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.checks.adc.shared import adc_of
from afecheck.checks.common import finding, fmt
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import Param, RuleMeta

META = RuleMeta(
    id="adc.anti-alias", slug="anti-alias-attenuation-short", severity=Severity.ERROR, family="adc",
    summary="attenuation at fs − fmax is below the ideal converter's dynamic range 6.02·N + 1.76 dB",
    needs=("analysis", "adc-drive"),
    params=(Param("extra_db", 0.0, "dB", "margin asked above 6.02·N + 1.76 dB"),),
    fix="raise the anti-alias filter's order or lower its corner, or sample faster so fs − fmax moves up",
)


def check(ctx: Context) -> Iterator[Finding]:
    """Attenuation from the band to fs − fmax at each ADC net against the ideal SNR of its resolution."""
    for net, a in adc_of(ctx).nets.items():
        if a.attenuation_db is None:
            continue
        need = a.required_db + ctx.param("extra_db")
        if a.attenuation_db >= need:
            continue
        yield finding(
            ctx, Severity.ERROR, value=a.attenuation_db, limit=need, unit="dB", margin=a.attenuation_db - need,
            limit_source="6.02·N + 1.76 dB, the ideal converter's SNR (Bennett 1948) + rule parameter",
            message=f"{net}: the channel attenuates {fmt(a.alias_hz, 'Hz')} (fs − fmax, which folds onto the band) "
                    f"by {a.attenuation_db:.1f} dB relative to {fmt(a.passband_hz, 'Hz')}; a {a.bits}-bit converter "
                    f"resolves {need:.1f} dB", fix=META.fix, nets=(net,),
            extra={"alias_hz": a.alias_hz, "passband_hz": a.passband_hz, "bits": a.bits})
