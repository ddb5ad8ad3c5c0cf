"""A non-inverting input's common-mode impedance divides the source signal (Rcm at DC, Ccm at f_max)."""

from __future__ import annotations

import math
from collections.abc import Iterator

from afecheck.checks.common import finding as make_finding
from afecheck.checks.common import fmt, grade_above, part_value, pct
from afecheck.checks.loading.sources import plus_source_resistance
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import Param, RuleMeta

META = RuleMeta(
    id="loading.input-divider", slug="input-impedance-divides-source", severity=Severity.ERROR, family="loading",
    summary="source resistance against a non-inverting input's resistance and capacitance loses signal",
    params=(
        Param("warn_fraction", 1e-3, "1", "divider error above which a warning is raised"),
        Param("error_fraction", 1e-2, "1", "divider error above which an error is raised"),
    ),
    fix="lower the source resistance at the pin (shorter series resistor, buffer nearer the sensor) or choose a part "
        "with lower input capacitance; keep Rs·Cin well below 1/(2π·f_max)",
)

_SKIP = ("inverting", "summing", "difference", "transimpedance", "integrator")


def divider_error(rs: float, r_cm: float, c_in: float, f: float) -> float:
    """|Rs/(Rs + Zin)| with Zin = Rcm || 1/(j2πf·Cin) (RULES-REFERENCE R1, non-inverting formulas)."""
    z_in = r_cm / complex(1.0, 2.0 * math.pi * f * r_cm * c_in)
    return float(abs(rs / (rs + z_in)))


def check(ctx: Context) -> Iterator[Finding]:
    """Divider error with the common-mode input resistance and capacitance at the highest signal frequency."""
    warn, err = ctx.param("warn_fraction"), ctx.param("error_fraction")
    for stage in ctx.stages:
        if stage.topology in _SKIP:
            continue
        for inp in stage.inputs:
            if inp.pin != "in+":
                continue
            rs = plus_source_resistance(ctx.loaded, inp)
            if rs <= 0:
                continue
            r_cm, a1 = part_value(ctx, stage.opamp, "input_resistance_cm")
            c_cm, a2 = part_value(ctx, stage.opamp, "input_capacitance_cm")
            c_diff, a3 = part_value(ctx, stage.opamp, "input_capacitance_diff")
            if r_cm is None or c_cm is None or c_diff is None:
                continue
            c_in = c_cm + c_diff
            f = inp.source.f_max
            e_dc = divider_error(rs, r_cm, 0.0, 0.0)
            e = divider_error(rs, r_cm, c_in, f)
            severity = grade_above(e, warn, err)
            if severity is None:
                continue
            limit = err if severity == Severity.ERROR else warn
            at = f"at {fmt(f, 'Hz')}" if f > 0 else "at DC"
            text = (f"{stage.opamp} in+ from {inp.source.net}: {fmt(rs, 'Ω')} source against the input's "
                    f"{fmt(r_cm, 'Ω')} || {fmt(c_in, 'F')} loses {pct(e)} of the signal {at} (limit {pct(limit)}; "
                    f"{pct(e_dc)} at DC)")
            yield make_finding(
                ctx, severity, value=e, limit=limit, unit="1", margin=limit - e,
                limit_source="rule parameter (RULES-REFERENCE R1, common practice)", message=text, fix=META.fix,
                refs=(*inp.via[:1], stage.opamp), nets=(inp.source.net, stage.in_plus), assumed=a1 + a2 + a3,
                extra={"source_resistance": rs, "input_resistance_cm": r_cm, "input_capacitance": c_in,
                       "frequency": f, "error_dc": e_dc},
            )
