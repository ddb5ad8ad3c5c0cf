"""loading.inverting-input: a source's Thevenin resistance adds to an inverting (summing, difference) input resistor."""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.checks.common import finding as make_finding
from afecheck.checks.common import fmt, grade_above, pct
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import Param, RuleMeta

META = RuleMeta(
    id="loading.inverting-input", slug="inverting-input-loads-source", severity=Severity.ERROR, family="loading",
    summary="source resistance in series with an inverting-type input resistor changes the gain",
    params=(
        Param("warn_fraction", 1e-3, "1", "gain error Rs/(Rs+Ri) above which a warning is raised"),
        Param("error_fraction", 1e-2, "1", "gain error Rs/(Rs+Ri) above which an error is raised"),
        Param("variation", 0.1, "1", "relative change of Rs over the declared range that makes it a nonlinearity"),
    ),
    fix="buffer the source with a follower, or make the input resistor at least 1000 × the source resistance",
)

_LOADED_TOPOLOGIES = ("inverting", "summing", "difference")


def check(ctx: Context) -> Iterator[Finding]:
    """Gain error e = Rs/(Rs + Ri) over the declared source range for every inverting-type input."""
    warn, err, variation = ctx.param("warn_fraction"), ctx.param("error_fraction"), ctx.param("variation")
    for stage in ctx.stages:
        for inp in stage.inputs:
            if not (inp.pin == "in-" or stage.topology in _LOADED_TOPOLOGIES):
                continue
            ri = inp.input_resistance
            src = inp.source
            if ri is None or ri <= 0 or src.r_max <= 0:
                continue
            e_max = src.r_max / (src.r_max + ri)
            e_min = src.r_min / (src.r_min + ri)
            severity = grade_above(e_max, warn, err)
            if severity is None:
                continue
            limit = err if severity == Severity.ERROR else warn
            resistor = inp.via[0] if inp.via else stage.opamp
            varies = src.r_max > (1.0 + variation) * src.r_min
            text = (f"{stage.opamp} input from {src.net}: source resistance {fmt(src.r_max, 'Ω')} in series with "
                    f"{resistor} ({fmt(ri, 'Ω')}) cuts the gain by {pct(e_max)} (limit {pct(limit)})")
            if varies:
                text += (f"; it varies from {pct(e_min)} to {pct(e_max)} as the source goes from "
                         f"{fmt(src.r_min, 'Ω')} to {fmt(src.r_max, 'Ω')}, a nonlinearity no gain trim removes")
            yield make_finding(
                ctx, severity, value=e_max, limit=limit, unit="1", margin=limit - e_max,
                limit_source="rule parameter (RULES-REFERENCE R1, common practice)", message=text, fix=META.fix,
                refs=(*inp.via[:1], stage.opamp), nets=(src.net, stage.in_minus),
                extra={"error_min": e_min, "source_resistance_min": src.r_min, "source_resistance_max": src.r_max,
                       "input_resistance": ri, "varies": varies},
            )
