"""loading.inverting-input: a source's Thevenin resistance adds to an inverting (summing, difference) input resistor.

The gain error is the analysis's own loading error of the input (1 − the share of the source voltage left at the
input net, solved over the source's declared resistance range), never recomputed here from the declared source
resistance. With an intended gain declared on the op-amp, the gain the analysis computed with the source in place
is compared with that intended gain instead: a designer who counted a fixed source resistance in the gain has no
loading error.
"""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.checks.common import finding as make_finding
from afecheck.checks.common import fmt, grade_above, intended_gain, pct
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
    fix="buffer the source with a follower, or make the input resistor at least 1000 × the source resistance; if the "
        "source resistance is fixed and counted in the gain, declare `intended_gain` on the op-amp",
)

_LOADED_TOPOLOGIES = ("inverting", "summing", "difference")


def check(ctx: Context) -> Iterator[Finding]:
    """Gain error over the declared source range for every inverting-type input (against the intended gain if any)."""
    warn, err, variation = ctx.param("warn_fraction"), ctx.param("error_fraction"), ctx.param("variation")
    for stage in ctx.stages:
        wanted = intended_gain(ctx.loaded, stage.opamp)
        if stage.topology in ("transimpedance", "charge-amplifier"):
            continue  # the sensor drives the virtual ground directly: its resistance is a shunt, not a series part
        for inp in stage.inputs:
            if not (inp.pin == "in-" or stage.topology in _LOADED_TOPOLOGIES):
                continue
            ri = inp.input_resistance
            src = inp.source
            if src.kind in ("current", "charge"):
                continue  # a current or charge sensor is meant to work into a low impedance
            if ri is None or ri <= 0 or src.r_max <= 0 or src.kind in ("rail", "vsource"):
                continue
            e_min, e_max = inp.loading_error_min, inp.loading_error_max
            against = ""
            if wanted is not None:
                # gain with the source in place at both ends of its range, against the declared intent
                ends = [inp.ideal_gain * (1.0 - e) for e in (e_min, e_max)]
                devs = [abs(g / wanted - 1.0) for g in ends]
                value = max(devs)
                against = (f" against the intended gain {wanted:.4g} (computed {ends[0]:.4g}"
                           + (f"..{ends[1]:.4g}" if abs(ends[1] - ends[0]) > 1e-12 * abs(ends[0]) else "") + ")")
            else:
                value = e_max
            severity = grade_above(value, warn, err)
            if severity is None:
                continue
            limit = err if severity == Severity.ERROR else warn
            resistor = inp.via[0] if inp.via else stage.opamp
            varies = src.r_max > (1.0 + variation) * src.r_min
            text = (f"{stage.opamp} input from {src.net}: source resistance {fmt(src.r_max, 'Ω')} in series with "
                    f"{resistor} ({fmt(ri, 'Ω')}) cuts the gain by {pct(e_max)}")
            text += (f"{against}: {pct(value)} off (limit {pct(limit)})" if wanted is not None
                     else f" (limit {pct(limit)})")
            if varies:
                text += (f"; it varies from {pct(e_min)} to {pct(e_max)} as the source goes from "
                         f"{fmt(src.r_min, 'Ω')} to {fmt(src.r_max, 'Ω')}, a nonlinearity no gain trim removes")
            yield make_finding(
                ctx, severity, value=value, limit=limit, unit="1", margin=limit - value,
                limit_source="rule parameter (common practice)", message=text, fix=META.fix,
                refs=(*inp.via[:1], stage.opamp), nets=(src.net, stage.in_minus),
                extra={"error_min": e_min, "error_max": e_max, "source_resistance_min": src.r_min,
                       "source_resistance_max": src.r_max, "input_resistance": ri, "varies": varies,
                       "intended_gain": wanted if wanted is not None else "none"},
            )
