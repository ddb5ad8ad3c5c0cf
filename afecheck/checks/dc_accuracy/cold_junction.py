"""dc-accuracy.cold-junction: a thermocouple's cold-junction error alone uses more than the channel's allowance."""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.checks.budgets.shared import dc_error_of_budgets
from afecheck.checks.common import finding, fmt, grade_above, not_evaluated, pct
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import Param, RuleMeta
from afecheck.sensors.cold_junction import ColdJunctionError, cold_junction_error
from afecheck.sensors.measurand import measurand_note

META = RuleMeta(
    id="dc-accuracy.cold-junction", slug="cold-junction-error-too-large", severity=Severity.ERROR,
    family="dc-accuracy", needs=("dc-error",),
    summary="a thermocouple's cold-junction error (no compensation: E(t_cold) itself; with it: the compensation "
            "sensor's ±cjc_accuracy) alone uses more than the net's offset budget, or without one a share of the "
            "hot-junction span",
    params=(
        Param("budget_share", 1.0, "1", "share of a net's offset budget the cold-junction term alone may use"),
        Param("span_share", 0.01, "1", "without an offset budget: share of the hot-junction span the error, in °C "
                                       "at the hot junction, may reach (common practice)"),
    ),
    fix="compensate the cold junction (a temperature sensor on the isothermal terminal block, E(t_cj) added before "
        "the table is read), or a more accurate compensation sensor mounted on the block itself; or keep the "
        "terminals in a controlled reference",
)


def _cause(cj: ColdJunctionError) -> str:
    """What the reading does about the cold junction, and the terminal-voltage error that leaves."""
    lo, hi = cj.cold_range_c
    where = f"its terminals at {lo:g}..{hi:g} °C"
    seebeck = f"{fmt(cj.seebeck_cold_v_per_c, 'V')}/°C"
    if cj.compensated:
        return (f"{cj.ref} (type {cj.tc_type}) is compensated to ±{cj.cjc_accuracy_c:g} °C with {where}: the "
                f"correction is off by up to ±{fmt(cj.emf_v, 'V')} at the terminals (±{cj.cjc_accuracy_c:g} °C × "
                f"S = {seebeck} at {cj.cold_c:g} °C)")
    return (f"{cj.ref} (type {cj.tc_type}) has no cold-junction compensation with {where}: read against the "
            f"tables' 0 °C reference junction it is short by up to E({cj.cold_c:g} °C) = {fmt(cj.emf_v, 'V')} at "
            f"the terminals")


def _hot(cj: ColdJunctionError) -> str:
    return (f"about {cj.at_hot_c:.3g} °C at {cj.ref} (first order: over the smallest Seebeck coefficient of its hot "
            f"range, {fmt(cj.seebeck_hot_v_per_c, 'V')}/°C at {cj.hot_c:g} °C)")


def check(ctx: Context) -> Iterator[Finding]:
    """Each thermocouple's cold-junction term at every net with an offset budget it feeds, against a share of that
    budget; a thermocouple feeding no such net, its error in °C against a share of its hot-junction span."""
    result = dc_error_of_budgets(ctx)
    budgets = ctx.loaded.design.budgets
    for ref, comp in ctx.loaded.sensors.items():
        if getattr(comp, "kind", None) != "thermocouple":
            continue
        cj = cold_junction_error(ref, comp)
        judged = False
        for net, e in result.nets.items():
            term = next((t for t in e.terms if t.hot_junction_c is not None and t.refs == (ref,)), None)
            if term is None or budgets[net].offset is None:
                continue
            judged = True
            budget = float(budgets[net].offset)
            share = ctx.param("budget_share")
            limit, value = share * budget, abs(term.offset)
            if grade_above(value, limit, limit) is None:
                continue
            at_sensor, numbers = measurand_note(ctx, net, value, "V", limit)
            text = (f"{net}: {_cause(cj)}, {fmt(value, 'V')} at {net}: {pct(value / budget)} of its "
                    f"{fmt(budget, 'V')} offset budget (limit {pct(share)}, {fmt(limit, 'V')})"
                    f"; {at_sensor or _hot(cj)}")
            yield finding(ctx, Severity.ERROR, value=value, limit=limit, unit="V", margin=limit - value,
                          limit_source=f"budgets.{net}.offset × rule parameter", message=text, fix=META.fix,
                          refs=(ref,), nets=(net,), extra=_numbers(cj) | numbers)
        if judged:
            continue
        span = abs(float(comp.hot[1]) - float(comp.hot[0]))
        if span == 0.0 and cj.emf_v > 0.0:
            yield not_evaluated(ctx, f"cold-junction error of {ref}", f"{_cause(cj)}: {_hot(cj)}, but no net it "
                                "feeds has an offset budget and its hot range has no span to take a share of",
                                refs=(ref,))
            continue
        share = ctx.param("span_share")
        limit, value = share * span, cj.at_hot_c
        if grade_above(value, limit, limit) is None:
            continue
        text = (f"{_cause(cj)}: {_hot(cj)}, more than {pct(share)} of its {float(comp.hot[0]):g}.."
                f"{float(comp.hot[1]):g} °C hot range ({limit:.3g} °C; no net it feeds has an offset budget, so "
                f"the limit is that share, common practice)")
        yield finding(ctx, Severity.WARNING, value=value, limit=limit, unit="K", margin=limit - value,
                      limit_source="hot-junction span × rule parameter (common practice)", message=text,
                      fix=META.fix, refs=(ref,), nets=tuple(comp.pins.values()),
                      extra=_numbers(cj) | {"measurand_sensor": ref, "measurand_unit": "°C",
                                            "measurand_value": value})


def _numbers(cj: ColdJunctionError) -> dict[str, float | bool]:
    """The cold-junction figures every finding carries."""
    return {"compensated": cj.compensated, "cjc_accuracy_c": cj.cjc_accuracy_c, "emf_error_v": cj.emf_v,
            "cold_c": cj.cold_c, "seebeck_cold_v_per_c": cj.seebeck_cold_v_per_c, "hot_c": cj.hot_c,
            "seebeck_hot_v_per_c": cj.seebeck_hot_v_per_c, "hot_junction_c": cj.at_hot_c}
