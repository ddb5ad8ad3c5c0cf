"""Errors at a net restated in the measurand's units: which declared sensor drives the net, and volts per unit there.

A net's channel (:mod:`afecheck.analysis.channel`) whose source is one declared sensor (an NTC or RTD over its
temperature, a thermocouple over its hot junction, a bridge over its measurand) is solved at DC with only that
measurand moved. The slope dV/dm at the net is the local derivative (central difference) at nine points spread
evenly over the declared range, ends included, and the one of smallest magnitude is kept: an error divided by it is
the largest measurand error anywhere in the range (the conservative reading for a nonlinear sensor). The slope
carries the whole chain to the net, the sensor's own curve, its excitation and every stage's gain, so an error at
the net divided by it is the error "at the sensor". A gain error (fraction of span) is restated as that fraction of
the declared measurand span.

The same module answers, for every budget analysis, what a sensor is once loaded: a swept resistor (NTC and RTD
over temperature, a bridge's four arms over the bridge's measurand; :mod:`afecheck.sensors.resistive`) or a
thermocouple (a signal source over E(hot) − E(cold), kept as declared in ``loaded.sensors``): where a point of the
measurand range puts it, its own tolerance as a fraction of its resistance, the temperature its thermal noise is
taken at, and the values that make two channels' sensors alike.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from afecheck.model.units import format_si
from afecheck.sensors import rtd
from afecheck.sensors import thermocouple as tc
from afecheck.sensors.resistive import SWEPT_KINDS, resistance, sweep_range
from afecheck.sensors.thermistor import T0

if TYPE_CHECKING:
    from afecheck.analysis.netlist import NetlistOptions
    from afecheck.engine.context import Context
    from afecheck.model.loaded import LoadedDesign

_NOT_VALUES = ("pins", "description", "waive")

GRID_POINTS = 9
STEP_OF_SPAN = 1e-4
"""Central-difference step as a fraction of the declared span (at least MIN_STEP in the measurand's unit)."""
MIN_STEP = 1e-3


@dataclass(frozen=True)
class Measurand:
    """A declared sensor as a quantity the analysis can move: its unit, declared range and what carries a value into
    the netlist (:func:`_options` turns one measurand value into netlist option overrides)."""

    sensor: str
    unit: str
    low: float
    high: float
    kind: str
    """``resistive`` (NTC, RTD: each swept part at the value), ``bridge`` (each arm at value/span) or ``emf``."""
    parts: tuple[str, ...]
    per_fraction: float = 1.0
    """For a bridge: the measurand value at full scale (its span, or 100 for % of full scale)."""
    cold_c: float = 0.0
    tc_type: str = ""
    """For a thermocouple: its type and the cold junction's mid-range temperature, held while the hot end moves."""


@dataclass(frozen=True)
class MeasurandScale:
    """Volts per measurand unit at a net, the smallest magnitude over the sensor's declared range, and where."""

    net: str
    measurand: Measurand
    slope_v_per_unit: float
    at: float
    end_slopes: tuple[float, float] = (math.nan, math.nan)
    """The local slope at the measurand's low and high end (for an error that belongs to one end of the range)."""

    def equivalent(self, value: float, unit: str) -> float:
        """``value`` (volts, or a fraction of span when ``unit`` is "1") as a measurand error in the sensor's unit."""
        if unit == "1":
            return abs(value) * abs(self.measurand.high - self.measurand.low)
        return abs(value) / abs(self.slope_v_per_unit)

    def net_end(self, end: str) -> tuple[float, float]:
        """(measurand value, slope) at the end of the measurand range that drives the net to its ``end`` ("low" or
        "high"): the measurand's high end drives a rising net high."""
        rising = self.slope_v_per_unit > 0
        k = 1 if (end == "high") == rising else 0
        return (self.measurand.low, self.measurand.high)[k], self.end_slopes[k]


def channel_measurands(loaded: LoadedDesign, refs: tuple[str, ...]) -> list[Measurand]:
    """Every declared sensor among ``refs`` (one per bridge, not per arm), in file order."""
    d = loaded.design
    found: dict[str, Measurand] = {}
    arms: dict[str, list[str]] = {}
    for ref in refs:
        comp = d.components[ref]
        if comp.kind in ("ntc", "rtd"):
            lo, hi = comp.temperature
            found[ref] = Measurand(ref, "°C", float(lo), float(hi), "resistive", (ref,))
        elif comp.kind == "bridge_arm":
            arms.setdefault(comp.bridge, []).append(ref)
        elif comp.kind == "signal_source" and getattr(loaded.sensors.get(ref), "kind", None) == "thermocouple":
            t = loaded.sensors[ref]
            found[ref] = Measurand(ref, "°C", float(t.hot[0]), float(t.hot[1]), "emf", (ref,),
                                   cold_c=0.5 * (float(t.cold[0]) + float(t.cold[1])), tc_type=t.type)
    for bridge, members in arms.items():
        b = loaded.sensors.get(bridge)
        if b is None:
            continue
        per = 100.0 if b.span is None else float(b.span)
        lo, hi = (100.0 * m for m in b.measurand) if b.span is None else b.measurand
        found[bridge] = Measurand(bridge, b.unit or "% of full scale", float(lo), float(hi), "bridge",
                                  tuple(members), per_fraction=per)
    return list(found.values())


def _options(m: Measurand, value: float) -> dict[str, Any]:
    """Netlist option overrides that put the measurand at ``value`` (offsets left out: the slope is small-signal)."""
    if m.kind == "resistive":
        return {"ntc_temperature_c": {m.sensor: value}}
    if m.kind == "bridge":
        return {"ntc_temperature_c": {arm: value / m.per_fraction for arm in m.parts}}
    return {"signal_dc": {m.sensor: tc.measured_mv(m.tc_type, value, m.cold_c) / 1000.0}}


def net_scale(loaded: LoadedDesign, net: str) -> MeasurandScale | None:
    """The measurand scale at ``net``: None when the net's channel holds no declared sensor, more than one, or the
    net does not move with it."""
    from afecheck.analysis.channel import find_channels
    from afecheck.analysis.mna import solve_dc
    from afecheck.analysis.netlist import NetlistOptions, netlist_from_design
    from afecheck.errors import AnalysisError, InputError, SingularCircuitError

    channel = find_channels(loaded).get(net)
    if channel is None or net == loaded.design.ground:
        return None
    found = channel_measurands(loaded, channel.refs)
    if len(found) != 1:
        return None
    m = found[0]

    def v(value: float) -> float:
        nl = netlist_from_design(loaded, channel.refs, NetlistOptions(include_offsets=False, **_options(m, value)))
        return solve_dc(nl).voltage(net)

    span = m.high - m.low
    h = max(STEP_OF_SPAN * abs(span), MIN_STEP)
    points = [m.low + span * k / (GRID_POINTS - 1) for k in range(GRID_POINTS)] if span else [m.low]
    slopes: list[float] = []
    try:
        for p in points:
            a, b = (p, p + h) if p == m.low and span else ((p - h, p) if p == m.high and span else (p - h, p + h))
            slopes.append((v(b) - v(a)) / (b - a))
    except (AnalysisError, InputError, SingularCircuitError, ValueError, ArithmeticError):
        return None
    k = min(range(len(slopes)), key=lambda i: abs(slopes[i]))
    if not all(math.isfinite(x) for x in slopes) or slopes[k] == 0.0 or len({x > 0 for x in slopes}) > 1:
        return None  # no slope, or one that changes sign: the net does not follow the measurand one way
    return MeasurandScale(net, m, float(slopes[k]), float(points[k]), (float(slopes[0]), float(slopes[-1])))


def _number(value: float, unit: str) -> str:
    """``0.812 °C``, ``12.3 µε``: three significant figures in the sensor's own unit (no SI prefix added)."""
    return f"{value:.3g} {unit}"


def measurand_note(ctx: Context, net: str, value: float, unit: str, limit: float | None = None,
                   end: str | None = None) -> tuple[str, dict[str, Any]]:
    """For a finding at ``net`` whose error is ``value`` in ``unit`` (V, or "1" for a fraction of span): the text
    "equals 0.812 °C at TC1" and the structured numbers, or ``("", {})`` when no single sensor drives the net.
    With ``end`` ("low"/"high": an error at that end of the net's range, such as clipping) the slope there is used,
    a first-order statement ("about"): a shortfall large against the range's curvature is only roughly that much."""
    scale = ctx.memo(f"measurand-scale:{net}", lambda: net_scale(ctx.loaded, net))
    if scale is None:
        return "", {}
    m = scale.measurand
    if end is not None:
        where, slope = scale.net_end(end)
        amount = abs(value) / abs(slope)
        return (f"equals about {_number(amount, m.unit)} of {m.sensor}'s range at its {where:g} {m.unit} end (at the "
                f"slope there, {format_si(abs(slope), 'V', 3)}/{m.unit})",
                {"measurand_sensor": m.sensor, "measurand_unit": m.unit, "measurand_value": amount,
                 "measurand_slope_v_per_unit": slope, "measurand_slope_at": where})
    amount = scale.equivalent(value, unit)
    numbers: dict[str, Any] = {
        "measurand_sensor": m.sensor, "measurand_unit": m.unit, "measurand_value": amount,
        "measurand_slope_v_per_unit": scale.slope_v_per_unit, "measurand_slope_at": scale.at,
    }
    text = f"equals {_number(amount, m.unit)} at {m.sensor}"
    if limit is not None:
        numbers["measurand_limit"] = scale.equivalent(limit, unit)
        text += f" (limit {_number(numbers['measurand_limit'], m.unit)})"
    if unit != "1":
        text += (f"; {format_si(abs(scale.slope_v_per_unit), 'V', 3)}/{m.unit} at {net}, the smallest slope over "
                 f"the range, at {scale.at:g} {m.unit}")
    return text, numbers

def swept_refs(loaded: LoadedDesign, refs: Iterable[str]) -> tuple[str, ...]:
    """The swept resistors among ``refs`` (NTCs, RTDs, bridge arms), in order."""
    comps = loaded.design.components
    return tuple(r for r in refs if comps[r].kind in SWEPT_KINDS)


def thermocouple_refs(loaded: LoadedDesign, refs: Iterable[str]) -> tuple[str, ...]:
    """The thermocouples among ``refs`` (signal sources after loading; their declaration kept in ``sensors``)."""
    return tuple(r for r in refs if getattr(loaded.sensors.get(r), "kind", None) == "thermocouple")


def has_sensor(loaded: LoadedDesign, refs: Iterable[str]) -> bool:
    """Whether any of ``refs`` is a sensor of any kind."""
    refs = tuple(refs)
    return bool(swept_refs(loaded, refs) or thermocouple_refs(loaded, refs))


def at_point(loaded: LoadedDesign, refs: Iterable[str], point: float) -> dict[str, float]:
    """Each swept part's quantity at ``point`` (0 the low end, 1 the high end) of its declared range, keyed by its
    refdes as :class:`NetlistOptions` ``ntc_temperature_c`` takes it (°C, or fraction of full scale for an arm)."""
    comps = loaded.design.components
    out = {}
    for r in swept_refs(loaded, refs):
        lo, hi = sweep_range(comps[r])
        out[r] = lo + point * (hi - lo)
    return out


def thermocouple_volts(loaded: LoadedDesign, refs: Iterable[str], point: float) -> dict[str, float]:
    """Each thermocouple's terminal voltage with its hot junction at ``point`` of its hot range and its cold
    junction at the middle of its cold range (ITS-90 reference functions)."""
    out = {}
    for r in thermocouple_refs(loaded, refs):
        s = loaded.sensors[r]
        hot = float(s.hot[0]) + point * float(s.hot[1] - s.hot[0])
        out[r] = tc.measured_mv(s.type, hot, 0.5 * float(s.cold[0] + s.cold[1])) / 1000.0
    return out


def point_options(loaded: LoadedDesign, refs: Iterable[str], point: float, measurand: bool = False) -> NetlistOptions:
    """Netlist options with every declared signal and every sensor at ``point`` of its range (offsets left out).

    With ``measurand`` a thermocouple follows its hot junction's temperature (E(t) is curved); otherwise it sits at
    ``point`` of its terminal-voltage range, as any declared signal does."""
    from afecheck.analysis.netlist import NetlistOptions

    refs = tuple(refs)
    volts = thermocouple_volts(loaded, refs, point) if measurand else {}
    return NetlistOptions(signal_point=float(point), ntc_temperature_c=at_point(loaded, refs, point),
                          signal_dc=volts, include_offsets=False)


def own_tolerance(comp: Any) -> float | None:
    """A swept part's own accuracy as a fraction of its resistance: its declared ``tolerance``; else, for an RTD of
    a tolerance class, the class's ±°C (IEC 60751) times dR/dt over R, at whichever end of its range that is larger."""
    if comp.tolerance:
        return float(comp.tolerance)
    if comp.kind != "rtd" or comp.tolerance_class is None:
        return None
    worst = 0.0
    for t in sweep_range(comp):
        step = 0.01
        a, b = max(t - step, -200.0), min(t + step, 850.0)
        slope = (float(resistance(comp, b)[0]) - float(resistance(comp, a)[0])) / (b - a)
        worst = max(worst, rtd.tolerance_c(comp.tolerance_class, t) * abs(slope) / float(resistance(comp, t)[0]))
    return worst


def sensor_noise_kelvin(comp: Any, default_k: float) -> float:
    """Kelvin at which a part's thermal noise is taken: a thermometer (NTC, RTD) at the middle of its own range, any
    other part (a bridge arm, a resistor) at ``default_k``."""
    if comp is not None and comp.kind in ("ntc", "rtd"):
        return 0.5 * sum(sweep_range(comp)) + T0
    return default_k


def value_key(comp: Any) -> tuple:
    """Every value of a part that shapes the circuit (all its fields but pins, text and waivers), for cache keys."""
    return tuple((k, v) for k, v in comp.__dict__.items() if k not in _NOT_VALUES)
