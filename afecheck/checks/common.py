"""Shared helpers for rule modules: grading against thresholds, number formatting, finding construction,
and small design queries (what sits on a net) that several rules need.

``ctx`` convention for every finding: ``value`` and ``limit`` in ``unit`` (SI), ``margin`` = how far the value
is inside its limit in the same unit (negative = broken), ``limit_source`` = where the limit comes from.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from typing import TYPE_CHECKING, Any

from afecheck.engine.finding import Confidence, Finding, Severity
from afecheck.model.units import format_si

if TYPE_CHECKING:
    from afecheck.analysis.results import StageResult
    from afecheck.engine.context import Context
    from afecheck.model.loaded import LoadedDesign

CONFIG = "rule parameter"


def fmt(value: float, unit: str = "", digits: int = 3) -> str:
    """A number with an SI prefix and ``digits`` significant figures: ``4.10 MHz``."""
    return format_si(float(value), unit, digits)


def pct(fraction: float, digits: int = 3) -> str:
    """A fraction as a percentage with ``digits`` significant figures: ``33.3 %``."""
    value = 100.0 * fraction
    if value == 0 or not math.isfinite(value) or abs(value) < 0.01:
        return f"{value:.{digits}g} %"
    decimals = max(digits - 1 - int(math.floor(math.log10(abs(value)))), 0)
    return f"{value:.{decimals}f} %"


def deg(value: float) -> str:
    """An angle in degrees with one decimal: ``38.2°``."""
    return f"{value:.1f}°"


def db(ratio: float) -> float:
    """A magnitude ratio in decibels (20·log10)."""
    return 20.0 * math.log10(ratio) if ratio > 0 else -math.inf


# Published works the findings' limit sources cite (by author and title, as readers can find them).
FRANCO = "Franco, Design with Operational Amplifiers and Analog Integrated Circuits, 4th ed."
GHLM = "Gray, Hurst, Lewis, Meyer, Analysis and Design of Analog Integrated Circuits, 5th ed."

NUMERIC_TOLERANCE = 1e-9
"""Relative size of solver round-off: differences this small against the quantities involved are noise."""


def print_tolerance(limit: float, digits: int = 3) -> float:
    """Half a unit in the last printed digit of ``limit`` (``digits`` significant figures): a value closer than this
    prints as the limit itself, so it is never reported as breaking it."""
    if limit == 0 or not math.isfinite(limit):
        return 0.0
    return 0.5 * 10.0 ** (math.floor(math.log10(abs(limit))) - digits + 1)


def noise_floor(*quantities: float) -> float:
    """Round-off scale of a comparison: NUMERIC_TOLERANCE times the largest magnitude among ``quantities``."""
    largest = 0.0
    for q in quantities:  # a plain loop: this runs a dozen times per stage and rule
        if math.isfinite(q) and abs(q) > largest:
            largest = abs(q)
    return NUMERIC_TOLERANCE * largest


def grade_above(value: float, warn: float, err: float) -> Severity | None:
    """Severity when larger is worse: error above ``err``, warning above ``warn``; a value that prints as the limit
    (within :func:`print_tolerance`) does not break it."""
    if value > err + max(print_tolerance(err), noise_floor(value, err)):
        return Severity.ERROR
    if value > warn + max(print_tolerance(warn), noise_floor(value, warn)):
        return Severity.WARNING
    return None


def grade_below(value: float, warn: float, err: float) -> Severity | None:
    """Severity when smaller is worse: error below ``err``, warning below ``warn``; within print precision of a limit
    counts as meeting it."""
    if value < err - max(print_tolerance(err), noise_floor(value, err)):
        return Severity.ERROR
    if value < warn - max(print_tolerance(warn), noise_floor(value, warn)):
        return Severity.WARNING
    return None


def grade_headroom(margin: float, band: float, *scale: float) -> Severity | None:
    """Headroom grading: error when ``margin`` is below zero by more than round-off of the quantities in ``scale``,
    warning when it is inside ``band`` by more than the band's print precision."""
    if margin < -noise_floor(*scale, band):
        return Severity.ERROR
    if margin < band - max(print_tolerance(band), noise_floor(*scale, band)):
        return Severity.WARNING
    return None


def snap(value: float, *scale: float) -> float:
    """``value`` with round-off removed: 0.0 when it is within :func:`noise_floor` of zero."""
    return 0.0 if abs(value) <= noise_floor(*scale) else value


def finding(
    ctx: Context,
    severity: Severity,
    *,
    value: float,
    limit: float,
    unit: str,
    margin: float,
    limit_source: str,
    message: str,
    fix: str,
    refs: tuple[str, ...] = (),
    nets: tuple[str, ...] = (),
    pins: tuple[str, ...] = (),
    assumed: Iterable[str] = (),
    estimated: bool = False,
    extra: dict[str, Any] | None = None,
) -> Finding:
    """Build a finding for the context's rule; estimated results are capped at warning."""
    meta = ctx.rule
    assert meta is not None, "finding() needs a rule-bound context"
    assumed = tuple(sorted(set(assumed)))
    confidence: Confidence = "estimated" if (estimated or assumed) else "computed"
    if confidence == "estimated" and severity > Severity.WARNING:
        severity = Severity.WARNING
    numbers: dict[str, Any] = {
        "value": float(value), "limit": float(limit), "unit": unit, "margin": float(margin),
        "limit_source": limit_source,
    }
    for key, item in (extra or {}).items():
        numbers[key] = float(item) if isinstance(item, (int, float)) and not isinstance(item, bool) else item
    text = f"{message}. Fix: {fix}" if fix else message
    return Finding(
        rule=meta.id, slug=meta.slug, severity=severity, message=text,
        location=ctx.loaded.locate(refs=refs, nets=nets, pins=pins), ctx=numbers, fix=fix,
        confidence=confidence, assumed=assumed, design=ctx.loaded.design.name,
    )


def not_evaluated(ctx: Context, what: str, reason: str, refs: tuple[str, ...] = (),
                  nets: tuple[str, ...] = ()) -> Finding:
    """An info finding saying the rule could not judge ``what`` and why: never a silent pass."""
    meta = ctx.rule
    assert meta is not None, "not_evaluated() needs a rule-bound context"
    return Finding(
        rule=meta.id, slug=meta.slug, severity=Severity.INFO,
        message=f"{what} not evaluated: {reason}", location=ctx.loaded.locate(refs=refs, nets=nets),
        ctx={"reason": reason}, confidence="not-evaluated", design=ctx.loaded.design.name,
    )


def part_value(ctx: Context, opamp: str, name: str) -> tuple[float | None, tuple[str, ...]]:
    """(value, assumed names) of op-amp ``opamp``'s parameter ``name``; value None if the part has none."""
    try:
        model = ctx.loaded.part(opamp)
    except KeyError:
        return None, ()
    if getattr(model, name, None) is None and name not in _DEFAULTED:
        return None, ()
    value, assumed = model.get(name)
    return value, ((f"{opamp}.{name}",) if assumed else ())


_DEFAULTED = frozenset({
    "open_loop_gain", "input_resistance_diff", "input_resistance_cm", "input_capacitance_diff",
    "input_capacitance_cm", "output_resistance", "bias_current", "offset_current", "offset_voltage", "cmrr",
    "input_cm_low", "input_cm_high", "output_drop_low", "output_drop_high", "output_sat_resistance",
    "output_current_limit", "transition_below_vplus", "transition_width", "transition_offset_step",
    "min_stable_gain", "second_pole",
})


def stage_assumed(stage: StageResult) -> tuple[str, ...]:
    """The analysis's assumed macromodel parameters of ``stage``, named ``<refdes>.<parameter>`` like part_value's."""
    return tuple(a if "." in a else f"{stage.opamp}.{a}" for a in stage.assumed)


def stage_reason(stage: StageResult, default: str) -> str:
    """The analysis's own reason a stage number is missing, else ``default``."""
    return "; ".join(stage.not_evaluated) if stage.not_evaluated else default


# --- small design queries -------------------------------------------------------------------------------


def ac_ground_nets(loaded: LoadedDesign) -> frozenset[str]:
    """Nets held at a fixed voltage: ground, rails, and either end of a vsource tied to one of them."""
    return loaded.fixed_nets


def rails_known(ctx: Context, opamp: str) -> bool:
    """True when both supply pins of ``opamp`` sit on nets of known voltage (ground, a rail, or a source on one)."""
    comp = ctx.loaded.design.components.get(opamp)
    if comp is None or comp.kind != "opamp":
        return False
    fixed = ac_ground_nets(ctx.loaded)
    return all(comp.pins.get(pin) in fixed for pin in ("v+", "v-"))


def attached(loaded: LoadedDesign, net: str, kind: str | None = None) -> list[tuple[str, str]]:
    """(refdes, other net) for every two-pin component of ``kind`` with a pin on ``net``."""
    return [(ref, other) for ref, other, k in loaded.two_pin_by_net.get(net, ()) if kind is None or k == kind]


def parallel(*values: float) -> float:
    """Parallel combination of resistances (0 Ω dominates; no values -> infinity)."""
    if any(v == 0 for v in values):
        return 0.0
    g = sum(1.0 / v for v in values if math.isfinite(v))
    return 1.0 / g if g > 0 else math.inf


def resistance_at(loaded: LoadedDesign, net: str) -> float:
    """Resistance seen from ``net`` through the resistors on it, every far end taken as AC ground.

    At an op-amp's inverting input with feedback this is Rf || Rg (the far ends are the low-impedance
    output and the reference).
    """
    comps = loaded.design.components
    return parallel(*(comps[ref].value for ref, _ in attached(loaded, net, "resistor")))  # type: ignore[union-attr]


def design_band(loaded: LoadedDesign) -> tuple[float, float] | None:
    """(lowest, highest) frequency over every declared signal band, or None if no band is declared."""
    d = loaded.design
    bands = [s.band for s in d.signals.values() if s.band]
    bands += [c.band for c in d.components.values() if c.kind == "signal_source" and c.band]  # type: ignore[union-attr]
    if not bands:
        return None
    return min(b[0] for b in bands), max(b[1] for b in bands)


def stage_role(loaded: LoadedDesign, opamp: str) -> str:
    """The declared role of op-amp ``opamp`` (amplifier, comparator, schmitt, integrator); amplifier if undeclared."""
    comp = loaded.design.components.get(opamp)
    role = getattr(comp, "role", None) if comp is not None else None
    return role or "amplifier"


def switching(loaded: LoadedDesign, opamp: str) -> bool:
    """True for a stage declared as a comparator or Schmitt trigger: it switches on purpose, it is not linear."""
    return stage_role(loaded, opamp) in ("comparator", "schmitt")


def intended_gain(loaded: LoadedDesign, opamp: str) -> float | None:
    """The declared intended DC gain of ``opamp``'s stage (V/V, signed), None when not declared."""
    comp = loaded.design.components.get(opamp)
    value = getattr(comp, "intended_gain", None) if comp is not None else None
    return None if value is None else float(value)
