"""Input bias current through the source resistance of a non-inverting input offsets the output.

A DC-accuracy rule (family ``dc-accuracy``) about the choice of part and resistances, judged against the part's own
offset error at the output, NG·Vos: a bias term smaller than the offset the part brings anyway is no design
mistake, one many times larger is. It never reads ``budgets``: the whole channel's offset against a declared
budget (this bias term among every other) is ``budgets.offset``'s question.
"""

from __future__ import annotations

import math
from collections.abc import Iterator

from afecheck.checks.common import attached, fmt, grade_above, part_value, resistance_at
from afecheck.checks.common import finding as make_finding
from afecheck.checks.loading.sources import ac_coupled, plus_source_resistance
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import Param, RuleMeta
from afecheck.sensors.measurand import measurand_note

META = RuleMeta(
    id="dc-accuracy.bias-offset", slug="bias-current-offsets-output", severity=Severity.ERROR, family="dc-accuracy",
    summary="input bias current through the source resistance offsets a non-inverting stage's output",
    params=(
        Param("own_offset_warn", 1.0, "1",
              "bias offset / the part's own offset error NG·Vos above which a warning is raised"),
        Param("own_offset_error", 10.0, "1",
              "bias offset / the part's own offset error NG·Vos above which an error is raised"),
    ),
    fix="choose a low-bias-current (CMOS or JFET input) part, lower the source resistance, or (plain bipolar inputs "
        "only) match the in- resistance Rf||Rg to the source resistance",
)


def bias_offset(ng: float, ib: float, ios: float, r_plus: float, r_minus: float) -> float:
    """Worst-case output offset from bias currents: NG·(|Ib|·|R− − R+| + |Ios|/2·(R− + R+)).

    Jung, Op Amp Applications Handbook, Newnes, 2005, ch. 1."""
    return ng * (abs(ib) * abs(r_minus - r_plus) + abs(ios) / 2.0 * (r_minus + r_plus))


def check(ctx: Context) -> Iterator[Finding]:
    """Output offset NG·Ib·Rs (with the in- side's cancelling term) against the part's own offset error NG·Vos."""
    for stage in ctx.stages:
        if stage.topology not in ("follower", "non-inverting") or stage.noise_gain_dc is None:
            continue
        for inp in stage.inputs:
            if inp.pin != "in+" or ac_coupled(ctx.loaded, inp):
                continue
            r_plus = plus_source_resistance(ctx.loaded, inp)
            if r_plus < 0 or not math.isfinite(r_plus):
                continue
            ib, a1 = part_value(ctx, stage.opamp, "bias_current")
            ios, a2 = part_value(ctx, stage.opamp, "offset_current")
            if ib is None or ios is None:
                continue
            has_rg = bool(attached(ctx.loaded, stage.in_minus, "resistor"))
            r_minus = resistance_at(ctx.loaded, stage.in_minus) if has_rg else 0.0
            offset = bias_offset(stage.noise_gain_dc, ib, ios, r_plus, r_minus)
            vos, a3 = part_value(ctx, stage.opamp, "offset_voltage")
            if not vos:
                continue
            own = stage.noise_gain_dc * abs(vos)
            a1 = a1 + a3
            share = offset / own
            severity = grade_above(share, ctx.param("own_offset_warn"), ctx.param("own_offset_error"))
            limit_share = ctx.param("own_offset_error" if severity == Severity.ERROR else "own_offset_warn")
            limit = limit_share * own
            against = f"{limit_share:g} × the part's own offset error {fmt(own, 'V')} = NG × {fmt(abs(vos), 'V')}"
            source = f"part {stage.part} offset_voltage × noise gain × rule parameter (common practice)"
            if severity is None:
                continue
            text = (f"{stage.opamp}: bias current {fmt(ib, 'A')} through {fmt(r_plus, 'Ω')} at in+ "
                    f"(in- side {fmt(r_minus, 'Ω')}) with noise gain {stage.noise_gain_dc:.3g} offsets {stage.out} by "
                    f"up to {fmt(offset, 'V')} (limit {fmt(limit, 'V')}, {against})")
            at_sensor, numbers = measurand_note(ctx, stage.out, offset, "V", limit)
            text += f"; {at_sensor}" if at_sensor else ""
            yield make_finding(
                ctx, severity, value=offset, limit=limit, unit="V", margin=limit - offset, limit_source=source,
                message=text, fix=META.fix, refs=(*inp.via[:1], stage.opamp), nets=(inp.source.net, stage.out),
                assumed=a1 + a2,
                extra={"bias_current": ib, "offset_current": ios, "r_plus": r_plus, "r_minus": r_minus,
                       "noise_gain": stage.noise_gain_dc, "own_offset": own, **numbers},
            )
