"""dc-accuracy.sensor-self-heating: the excitation heats an NTC or RTD by a large share of its own accuracy."""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.checks.common import finding, fmt, grade_above, not_evaluated, pct
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import Param, RuleMeta
from afecheck.errors import AnalysisError, InputError, SingularCircuitError

META = RuleMeta(
    id="dc-accuracy.sensor-self-heating", slug="sensor-heated-by-its-excitation", severity=Severity.ERROR,
    family="dc-accuracy", needs=(),
    summary="the power the excitation puts into an NTC or RTD, over its dissipation constant, raises it by a large "
            "share of its own accuracy",
    params=(
        Param("share_warn", 0.25, "1", "temperature rise / the sensor's accuracy (class or tolerance) above which a "
                                       "warning is raised"),
        Param("share_error", 1.0, "1", "temperature rise / the sensor's accuracy above which an error is raised"),
    ),
    fix="lower the excitation (a larger divider resistor, a smaller excitation current or a lower reference), "
        "excite the sensor only while it is read, or choose a sensor with a higher dissipation constant",
)


def check(ctx: Context) -> Iterator[Finding]:
    """ΔT = P/δ at the worst corner and temperature of each sensor that declares ``dissipation``, against a share of
    its accuracy there (IEC 60751 class, or resistance tolerance in °C)."""
    from afecheck.sensors.self_heating import is_finite, self_heating

    for ref, comp in ctx.loaded.design.components.items():
        if comp.kind not in ("ntc", "rtd") or getattr(comp, "dissipation", None) is None:
            continue
        try:
            s = self_heating(ctx.loaded, ref)
        except (AnalysisError, InputError, SingularCircuitError, ValueError, ArithmeticError) as exc:
            reason = exc.problems[0].message if isinstance(exc, InputError) else str(exc)
            yield not_evaluated(ctx, f"self-heating of {ref}", reason, refs=(ref,))
            continue
        if not is_finite(s):
            yield not_evaluated(ctx, f"self-heating of {ref}", "the sensor's current has no finite value (no DC "
                                "path through it)", refs=(ref,))
            continue
        heat = (f"{ref} dissipates up to {fmt(s.power_w, 'W')} ({fmt(abs(s.current_a), 'A')} through "
                f"{fmt(s.resistance_ohm, 'Ω')} at {s.temperature_c:g} °C, sources at their worst corner) with "
                f"dissipation constant {fmt(s.dissipation_w_per_k, 'W/K')}: it runs {s.rise_k:.3g} °C above what "
                f"it measures")
        if s.accuracy_k is None:
            yield not_evaluated(ctx, f"self-heating of {ref}", f"{heat}, but it declares no tolerance class or "
                                "tolerance to judge that against", refs=(ref,))
            continue
        share = s.rise_k / s.accuracy_k
        severity = grade_above(share, ctx.param("share_warn"), ctx.param("share_error"))
        if severity is None:
            continue
        limit_share = ctx.param("share_error" if severity == Severity.ERROR else "share_warn")
        limit = limit_share * s.accuracy_k
        text = (f"{heat}, {pct(share)} of its accuracy there, ±{s.accuracy_k:.3g} °C from its {s.accuracy_source} "
                f"(limit {pct(limit_share)}, {limit:.3g} °C)")
        yield finding(
            ctx, severity, value=s.rise_k, limit=limit, unit="K", margin=limit - s.rise_k,
            limit_source=f"{s.accuracy_source} × rule parameter (common practice)", message=text, fix=META.fix,
            refs=(ref,), nets=tuple(comp.pins.values()),
            extra={"power_w": s.power_w, "current_a": abs(s.current_a), "resistance_ohm": s.resistance_ohm,
                   "temperature_c": s.temperature_c, "dissipation_w_per_k": s.dissipation_w_per_k,
                   "accuracy_k": s.accuracy_k, "share": share, "measurand_sensor": ref, "measurand_unit": "°C",
                   "measurand_value": s.rise_k})
