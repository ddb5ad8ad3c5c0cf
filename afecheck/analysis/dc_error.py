"""DC error and drift at a net: offset, gain error and temperature drift, term by term, worst case and RSS.

Independent quantities of the channel that feeds the net: each op-amp's offset voltage (±Vos), bias current
(±Ib into both inputs) and offset current (±Ios/2, opposite at the two inputs), each resistor's and thermistor's
tolerance, each rail's and reference's tolerance; and, as a systematic term, each op-amp's finite open-loop gain (the
output with the declared A0 against A0 a million times larger). Each term is the change of the net's voltage
when that quantity alone moves to its limit, found by a DC solve of the whole channel (exact for the linear
circuit, first order in the product of two tolerances), at both ends of the declared range (every signal and every
sensor of any kind, :mod:`afecheck.sensors.measurand`, at its low end, then at its high end). The straight line
through the two ends splits each term into an offset (its error at zero scale, where the ideal output crosses
0 V, if the range holds that point, else at mid-scale) and a gain error (the change of its error across the span
over the ideal span); how far the nominal output strays from that line in between is the nonlinearity
(:mod:`afecheck.analysis.nonlinearity`). A channel driven by neither a signal nor a sensor (a reference alone)
has no span: its offset is the term's larger error at the two ends and no gain error is given. A sensor's own
tolerance (an NTC's or bridge's ``tolerance``, an RTD's tolerance class) is the sensor's accuracy, not the
electronics': it is listed (kind ``sensor``) but left out of the totals. A thermocouple's cold-junction error
(:mod:`afecheck.sensors.cold_junction`: the compensation's ±``cjc_accuracy`` times the Seebeck coefficient at the
cold junction, or without compensation the whole E(t_cold)) is a shift of its terminal voltage, counted like any
other term, with its size in °C at the hot junction beside it.

Totals: worst case is the linear sum Σ|term|, statistical the root-sum-square √Σ term² (treating each limit as
the same confidence bound, common practice). The exact worst case is also solved: every quantity at the limit
whose term has the sign that pushes the error one way, at each end (the vertex a linear sum points at).
Drift over the operating range, from 25 °C to the further end: offset drift of each op-amp, each resistor's and
rail's temperature coefficient, each moving on its own (worst case: no tracking).
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, replace
from functools import partial
from typing import Any

from afecheck.analysis.channel import Channel, per_channel
from afecheck.analysis.mna import solve_dc
from afecheck.analysis.netlist import (
    GROUND,
    CurrentSource,
    Netlist,
    NetlistOptions,
    OpAmpCore,
    Resistor,
    VoltageSource,
    netlist_from_design,
)
from afecheck.analysis.nonlinearity import Nonlinearity, channel_nonlinearity
from afecheck.errors import AnalysisError, InputError, SingularCircuitError
from afecheck.model.loaded import LoadedDesign
from afecheck.sensors.cold_junction import cold_junction_error
from afecheck.sensors.measurand import has_sensor, own_tolerance, point_options
from afecheck.sensors.resistive import SWEPT_KINDS

COLD_JUNCTION = "cold junction"
"""Kind of a thermocouple's cold-junction term: counted in the totals (the reading's error, not the sensor's)."""
REFERENCE_C = 25.0
IDEAL_GAIN_FACTOR = 1e6
IDEAL_STEPS = (10.0, 100.0)
"""Open-loop gains (times A0) the ideal-amplifier reference is extrapolated from: one solve at A0 x 1e6 loses the
digits the finite-gain term lives in (at A0 = 1e7 it came out +0.44 mV instead of -7.5 uV at 7.5 V)."""
ASSUMED_RESISTOR_TOLERANCE = 0.01  # a resistor with no declared tolerance: 1 %, the common chip-resistor grade


@dataclass(frozen=True)
class Quantity:
    """One independent quantity: name, kind, parts, its limit (±), and how it changes the netlist."""

    name: str
    kind: str
    refs: tuple[str, ...]
    limit: float
    element: str
    how: str
    """``scale`` (resistor or source value × (1 + x)), ``shift`` (source value + x), ``vos`` (core offset = x),
    ``ib``/``ios`` (pin currents)"""
    hot_junction_c: float | None = None
    """a thermocouple's cold-junction term: its limit as °C at the hot junction"""


@dataclass(frozen=True)
class DcTerm:
    """One quantity's effect at the net: output change at each signal end, offset and gain-error parts."""

    name: str
    kind: str
    refs: tuple[str, ...]
    limit: float
    error_low: float
    error_high: float
    offset: float
    gain_error: float | None
    hot_junction_c: float | None = None
    """a thermocouple's cold-junction term: its limit as °C at the hot junction (first order)"""


@dataclass(frozen=True)
class NetDcError:
    """DC error at one net: ideal outputs at the signal ends, terms ranked, totals, exact corners, drift."""

    net: str
    ideal_low: float
    ideal_high: float
    terms: tuple[DcTerm, ...]
    offset_worst: float
    offset_rss: float
    gain_error_worst: float | None
    gain_error_rss: float | None
    corner_low: float
    corner_high: float
    """exact worst-case error (V), sensor tolerance left out: the most negative and most positive over both ends"""
    drift_terms: tuple[DcTerm, ...] = ()
    drift_worst: float = 0.0
    drift_rss: float = 0.0
    temperature_range: tuple[float, float] | None = None
    assumed: tuple[str, ...] = ()
    """assumed part values the offset and gain-error terms rest on"""
    nonlinearity: Nonlinearity | None = None
    """end-point nonlinearity of the nominal channel over its measurand or input range"""
    drift_assumed: tuple[str, ...] = ()
    """assumed part values the drift terms rest on"""


@dataclass(frozen=True)
class DcErrorResult:
    """DC error at each requested net, and the reason for each net that could not be evaluated."""

    nets: Mapping[str, NetDcError]
    not_evaluated: Mapping[str, str]


def _end_options(loaded: LoadedDesign, channel: Channel, end: int) -> NetlistOptions:
    """Netlist options for one end of the range: every signal and sensor at its low (0) or high (1) end."""
    return point_options(loaded, channel.refs, float(end))


def quantities(loaded: LoadedDesign, netlist: Netlist, drift: bool = False) -> tuple[list[Quantity], list[str]]:
    """The channel's independent quantities and their limits (tolerances, or temperature coefficients × ΔT)."""
    d = loaded.design
    span = _delta_t(loaded) if drift else 1.0
    out: list[Quantity] = []
    assumed: list[str] = []
    for e in netlist.elements:
        if isinstance(e, Resistor) and e.name in d.components and d.components[e.name].kind in SWEPT_KINDS:
            tol = own_tolerance(d.components[e.name])
            if tol and not drift:
                out.append(Quantity(f"{e.name} tolerance", "sensor", (e.name,), tol, e.name, "scale"))
        elif isinstance(e, Resistor) and e.name in d.components and d.components[e.name].kind == "resistor":
            comp = d.components[e.name]
            if drift:
                if comp.tempco:
                    out.append(Quantity(f"{e.name} tempco", "resistor tempco", (e.name,), comp.tempco * span, e.name,
                                        "scale"))
                continue
            tol = comp.tolerance
            if tol is None:
                tol = ASSUMED_RESISTOR_TOLERANCE
                assumed.append(f"{e.name}.tolerance")
            if tol > 0:
                out.append(Quantity(f"{e.name} tolerance", "resistor", (e.name,), tol, e.name, "scale"))
        elif isinstance(e, VoltageSource) and getattr(loaded.sensors.get(e.name), "kind", None) == "thermocouple":
            q = None if drift else cold_junction_quantity(e.name, loaded.sensors[e.name])
            if q is not None and q.limit > 0:
                out.append(q)
        elif isinstance(e, VoltageSource) and e.dc != 0.0:
            base = e.name.split("#")[0]
            src = d.rails.get(base) if e.name.endswith("#rail") else d.components.get(e.name)
            if src is None or getattr(src, "kind", "vsource") != "vsource":
                continue
            value = (src.tempco or 0.0) * span if drift else (src.tolerance or 0.0)
            label = "tempco" if drift else "tolerance"
            if value > 0:
                out.append(Quantity(f"{base} {label}", "reference", (base,) if base in d.components else (), value,
                                    e.name, "scale"))
    for ref, op in netlist.opamps.items():
        model = loaded.part(ref)
        names = ("offset_drift",) if drift else ("offset_voltage", "bias_current", "offset_current")
        for name in names:
            value, was = model.get(name)
            if was:
                assumed.append(f"{ref}.{name}")
            value = abs(value) * (span if drift else 1.0)
            if name == "offset_current":
                value /= 2.0
            if value > 0:
                how = {"offset_voltage": "vos", "offset_drift": "vos", "bias_current": "ib", "offset_current": "ios"}
                label = {"offset_voltage": "offset voltage", "offset_drift": "offset drift",
                         "bias_current": "bias current", "offset_current": "offset current"}[name]
                out.append(Quantity(f"{ref} {label}", "op-amp", (ref,), value, op.loop_element, how[name]))
    return out, assumed


def cold_junction_quantity(ref: str, comp: Any) -> Quantity:
    """A thermocouple's cold-junction error as a quantity: ± its terminal-voltage error added to its source
    (:mod:`afecheck.sensors.cold_junction`), named for what the reading does about the cold junction."""
    cj = cold_junction_error(ref, comp)
    name = f"{ref} cold-junction compensation" if cj.compensated else f"{ref} cold junction, uncompensated"
    return Quantity(name, COLD_JUNCTION, (ref,), cj.emf_v, ref, "shift", cj.at_hot_c)


def _delta_t(loaded: LoadedDesign) -> float:
    rng = loaded.design.operating_temperature
    if not rng:
        return 0.0
    return max(abs(rng[0] - REFERENCE_C), abs(rng[1] - REFERENCE_C))


def perturbed(netlist: Netlist, moves: Iterable[tuple[Quantity, float]]) -> Netlist:
    """The netlist with each quantity moved by its value ``x`` (a fraction for ``scale``, volts or amperes else)."""
    by_name = {e.name: e for e in netlist.elements}
    extra = []
    for q, x in moves:
        e = by_name[q.element]
        if q.how == "scale":
            if isinstance(e, Resistor):
                by_name[e.name] = replace(e, value=e.value * (1.0 + x))
            elif isinstance(e, VoltageSource):
                by_name[e.name] = replace(e, dc=e.dc * (1.0 + x))
        elif q.how == "shift":
            assert isinstance(e, VoltageSource)
            by_name[e.name] = replace(e, dc=e.dc + x)
        elif q.how == "vos":
            assert isinstance(e, OpAmpCore)
            by_name[e.name] = replace(e, vos=e.vos + x)
            e = by_name[e.name]
        else:
            assert isinstance(e, OpAmpCore)
            sign = -1.0 if q.how == "ios" else 1.0
            tag = f"{q.name}#{len(extra)}"
            if e.cpos != GROUND:
                extra.append(CurrentSource(f"{tag}+", e.cpos, GROUND, dc=x))
            if e.cneg != GROUND:
                extra.append(CurrentSource(f"{tag}-", e.cneg, GROUND, dc=sign * x))
    return Netlist(tuple(by_name[e.name] for e in netlist.elements) + tuple(extra), netlist.opamps)


def ideal(netlist: Netlist, factor: float = IDEAL_GAIN_FACTOR) -> Netlist:
    """The netlist with every op-amp's open-loop gain ``factor`` times larger (a near-ideal amplifier)."""
    out = netlist
    for op in netlist.opamps.values():
        core = out.element(op.loop_element)
        assert isinstance(core, OpAmpCore)
        out = out.replaced(replace(core, a0=core.a0 * factor))
    return out


def _v(netlist: Netlist, node: str) -> float:
    return solve_dc(netlist).voltage(node)


def ideal_voltages(netlist: Netlist, nodes: dict[str, str]) -> dict[str, float]:
    """Each net's voltage with ideal op-amps: V(k) = V_inf + c/k + O(1/k^2) for every open-loop gain scaled by k, so
    two well-conditioned solves at k1 < k2 give V_inf = (k2 V(k2) - k1 V(k1)) / (k2 - k1) (Richardson extrapolation)."""
    k1, k2 = IDEAL_STEPS
    s1, s2 = solve_dc(ideal(netlist, k1)), solve_dc(ideal(netlist, k2))
    return {n: (k2 * s2.voltage(node) - k1 * s1.voltage(node)) / (k2 - k1) for n, node in nodes.items()}


def _split(ideal_low: float, ideal_high: float, low: float, high: float,
           linear: bool = True) -> tuple[float, float | None]:
    """(offset, gain error as a fraction of the ideal span) of one term. The offset is the error at zero scale (where
    the ideal output crosses 0 V) when that lies inside the range, else at mid-scale; without a straight-line
    transfer (``linear`` false) or a span, the larger end error and no gain error."""
    span = ideal_high - ideal_low
    if not linear or abs(span) < 1e-12 * max(1.0, abs(ideal_low)):
        return (low if abs(low) >= abs(high) else high), None
    at = -ideal_low / span
    if not 0.0 <= at <= 1.0:
        at = 0.5
    return low + at * (high - low), (high - low) / span


def channel_dc_error(loaded: LoadedDesign, channel: Channel, nets: Iterable[str],
                     nonlinearity: bool = True) -> dict[str, NetDcError]:
    """DC error and drift at each of ``nets`` in ``channel``; with ``nonlinearity``, the end-point nonlinearity too
    (a sensor's channel is solved at 17 more points for it, so callers that judge no nonlinearity leave it out)."""
    gnd = loaded.design.ground
    targets = [(n, GROUND if n == gnd else n) for n in nets]
    ends = [netlist_from_design(loaded, channel.refs, _end_options(loaded, channel, k)) for k in (0, 1)]
    qs, assumed = quantities(loaded, ends[0])
    dqs, dassumed = quantities(loaded, ends[0], drift=True)
    ideal_v = [ideal_voltages(nl, dict(targets)) for nl in ends]
    base_v = [{n: _v(nl, node) for n, node in targets} for nl in ends]
    results: dict[str, NetDcError] = {}

    def deltas(qlist: list[Quantity]) -> list[list[dict[str, float]]]:
        return [[{n: _v(perturbed(nl, [(q, q.limit)]), node) - base_v[k][n] for n, node in targets}
                 for k, nl in enumerate(ends)] for q in qlist]

    moved = deltas(qs)
    drifted = deltas(dqs)
    gain_terms = [[{n: base_v[k][n] - ideal_v[k][n] for n, _ in targets} for k in range(2)]]
    corner = {}
    for k, nl in enumerate(ends):
        for n, node in targets:
            for s in (-1.0, 1.0):
                moves = [(q, math.copysign(q.limit, s * m[k][n]) if m[k][n] != 0 else 0.0)
                         for q, m in zip(qs, moved, strict=True) if q.kind != "sensor"]
                err = _v(perturbed(nl, moves), node) - ideal_v[k][n]
                corner.setdefault(n, []).append(err)
    linear = bool(channel.signal_branches) or has_sensor(loaded, channel.refs)
    straightness = channel_nonlinearity(loaded, channel, [n for n, _ in targets]) if nonlinearity else {}
    for n, _ in targets:
        lo_i, hi_i = ideal_v[0][n], ideal_v[1][n]
        terms = []
        for q, m in zip(qs, moved, strict=True):
            off, gain = _split(lo_i, hi_i, m[0][n], m[1][n], linear)
            terms.append(DcTerm(q.name, q.kind, q.refs, q.limit, m[0][n], m[1][n], off, gain, q.hot_junction_c))
        for ref, op in ends[0].opamps.items():
            g = gain_terms[0]
            off, gain = _split(lo_i, hi_i, g[0][n], g[1][n], linear)
            terms.append(DcTerm(f"{ref} finite open-loop gain", "open-loop gain", (ref,), op.open_loop_gain,
                                g[0][n], g[1][n], off, gain))
            break
        if len(ends[0].opamps) > 1:
            terms[-1] = replace(terms[-1], name="finite open-loop gain", refs=tuple(ends[0].opamps))
        terms.sort(key=lambda t: (-max(abs(t.error_low), abs(t.error_high)), t.name))
        counted = [t for t in terms if t.kind != "sensor"]
        has_gain = all(t.gain_error is not None for t in counted)
        dterms = []
        for q, m in zip(dqs, drifted, strict=True):
            off, gain = _split(lo_i, hi_i, m[0][n], m[1][n], linear)
            dterms.append(DcTerm(q.name, q.kind, q.refs, q.limit, m[0][n], m[1][n], off, gain))
        dterms.sort(key=lambda t: (-max(abs(t.error_low), abs(t.error_high)), t.name))
        drift_each = [max(abs(t.error_low), abs(t.error_high)) for t in dterms]
        rng = loaded.design.operating_temperature
        results[n] = NetDcError(
            net=n, ideal_low=lo_i, ideal_high=hi_i, terms=tuple(terms),
            offset_worst=sum(abs(t.offset) for t in counted),
            offset_rss=math.sqrt(sum(t.offset**2 for t in counted)),
            gain_error_worst=sum(abs(t.gain_error) for t in counted) if has_gain else None,  # type: ignore[arg-type]
            gain_error_rss=(math.sqrt(sum(t.gain_error**2 for t in counted))  # type: ignore[operator]
                            if has_gain else None),
            corner_low=min(corner[n]), corner_high=max(corner[n]), drift_terms=tuple(dterms),
            drift_worst=sum(drift_each), drift_rss=math.sqrt(sum(x * x for x in drift_each)),
            temperature_range=(float(rng[0]), float(rng[1])) if rng else None,
            assumed=tuple(sorted(set(assumed))), drift_assumed=tuple(sorted(set(dassumed))),
            nonlinearity=straightness.get(n),
        )
    return results


def analyse_dc_error(loaded: LoadedDesign, nets: Iterable[str], nonlinearity: bool = True) -> DcErrorResult:
    """DC error and drift (and, with ``nonlinearity``, end-point nonlinearity) at each of ``nets``, channel by
    channel; reasons for the nets that cannot be evaluated."""
    nets = list(dict.fromkeys(nets))
    if not nets:
        return DcErrorResult({}, {})
    found, missing = per_channel(loaded, nets, partial(channel_dc_error, nonlinearity=nonlinearity),
                                 (AnalysisError, InputError, SingularCircuitError, ValueError, ArithmeticError))
    return DcErrorResult(found, missing)
