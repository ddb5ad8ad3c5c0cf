"""Nonlinearity at a net: how far the channel's DC output strays from the straight line through its end points while
the measurand (or, with no sensor, the declared input) crosses its declared range.

Definition: end-point (terminal-based) nonlinearity, the largest deviation of the output from the line through the
outputs at the low and high ends of the range, signed, and as a fraction of the output span between those ends
(ISA-51.1, "Process Instrumentation Terminology", terminal-based linearity; from memory). Offset and gain error are
that same line's errors (:mod:`afecheck.analysis.dc_error`), so the three parts split the DC error without overlap.

Every declared signal and every sensor of the channel moves together from the low (0) to the high (1) end of its
range: a thermistor, RTD or bridge arm over its own range, a thermocouple over its hot-junction range with the cold
junction at mid-range (so E(t)'s curvature counts), a declared signal over its DC range. The nominal circuit is
solved (finite open-loop gain kept; tolerances and offsets left out: in a linear circuit they change the line, not
its straightness) at :data:`POINTS` evenly spaced points; around the largest deviation the vertex of the parabola
through its neighbours is solved too, so the figure is always a solved point (deviations below :data:`ROUNDING` of
the largest output are the solver's rounding and count as zero). A channel with no sensor is a linear circuit driven
by its declared signals: by superposition its output is an affine function of them, so its nonlinearity is exactly
zero and only the two ends are solved.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

from afecheck.analysis.channel import Channel
from afecheck.analysis.mna import solve_dc
from afecheck.analysis.netlist import GROUND, netlist_from_design
from afecheck.model.loaded import LoadedDesign
from afecheck.sensors.measurand import has_sensor, point_options, swept_refs, thermocouple_refs
from afecheck.sensors.resistive import sweep_key, sweep_range

POINTS = 17
ROUNDING = 1e-9
"""a deviation below this fraction of the largest output is the solver's rounding, not the circuit's: shown as 0"""


@dataclass(frozen=True)
class Nonlinearity:
    """End-point nonlinearity at one net: the swept points (fractions of the range), output and deviation at each,
    the worst deviation (signed, V) and where, the output span, and the worst as a fraction of that span."""

    over: str
    refs: tuple[str, ...]
    """the parts that move (sensors; a bridge by its own refdes; signal sources)"""
    points: tuple[float, ...]
    outputs: tuple[float, ...]
    deviations: tuple[float, ...]
    worst: float
    at: float
    span: float
    fraction: float | None
    """|worst| / |span|; None when the output does not move across the range"""


def _over(loaded: LoadedDesign, channel: Channel) -> tuple[str, tuple[str, ...]]:
    """What moves across its range, in words (``RT1 -40 °C to 85 °C; IN over its declared range``), and the parts
    among them."""
    d = loaded.design
    said: dict[str, str] = {}
    for ref in swept_refs(loaded, channel.refs):
        comp = d.components[ref]
        key = sweep_key(ref, comp)
        lo, hi = sweep_range(comp)
        unit = " of full scale" if comp.kind == "bridge_arm" else " °C"
        said.setdefault(key, f"{key} {lo:g} to {hi:g}{unit}")
    for ref in thermocouple_refs(loaded, channel.refs):
        s = loaded.sensors[ref]
        said[ref] = f"{ref} hot junction {float(s.hot[0]):g} to {float(s.hot[1]):g} °C"
    for name, _ in channel.signal_branches:
        said.setdefault(name, f"{name} over its declared range")
    parts = tuple(k for k in said if k in d.components or k in loaded.sensors)
    return "; ".join(said.values()), parts


def _solve(loaded: LoadedDesign, channel: Channel, point: float, nodes: Sequence[str]) -> list[float]:
    sol = solve_dc(netlist_from_design(loaded, channel.refs, point_options(loaded, channel.refs, point, True)))
    return [sol.voltage(n) for n in nodes]


def channel_nonlinearity(loaded: LoadedDesign, channel: Channel, nets: Sequence[str]) -> dict[str, Nonlinearity]:
    """End-point nonlinearity at each of ``nets`` (all in ``channel``)."""
    gnd = loaded.design.ground
    nodes = [GROUND if n == gnd else n for n in nets]
    curved = has_sensor(loaded, channel.refs)
    grid = [k / (POINTS - 1) for k in range(POINTS)] if curved else [0.0, 1.0]
    values = [_solve(loaded, channel, p, nodes) for p in grid]
    over, refs = _over(loaded, channel)
    out: dict[str, Nonlinearity] = {}
    for j, net in enumerate(nets):
        pts = list(grid)
        vs = [row[j] for row in values]
        floor = ROUNDING * max(abs(v) for v in vs) if curved else math.inf
        k = _worst_index(pts, vs)
        if 0 < k < len(pts) - 1 and abs(_deviations(pts, vs)[k]) > floor:
            extra = _vertex(pts[k - 1:k + 2], _deviations(pts, vs)[k - 1:k + 2])
            if extra is not None:
                v = _solve(loaded, channel, extra, [nodes[j]])[0]
                at = next(i for i, p in enumerate(pts) if p > extra)
                pts.insert(at, extra)
                vs.insert(at, v)
        dev = [d if abs(d) > floor else 0.0 for d in _deviations(pts, vs)]
        k = max(range(len(dev)), key=lambda i: abs(dev[i]))
        span = vs[-1] - vs[0]
        scale = max(abs(v) for v in vs) or 1.0
        out[net] = Nonlinearity(
            over=over, refs=refs, points=tuple(pts), outputs=tuple(vs), deviations=tuple(dev), worst=dev[k], at=pts[k],
            span=span, fraction=abs(dev[k]) / abs(span) if abs(span) > 1e-12 * scale else None)
    return out


def _deviations(pts: Sequence[float], vs: Sequence[float]) -> list[float]:
    """Each output less the straight line through the first and last (points as fractions 0..1)."""
    a, b = vs[0], vs[-1]
    return [v - (a + p * (b - a)) for p, v in zip(pts, vs, strict=True)]


def _worst_index(pts: Sequence[float], vs: Sequence[float]) -> int:
    dev = _deviations(pts, vs)
    return max(range(len(dev)), key=lambda i: abs(dev[i]))


def _vertex(p: Sequence[float], d: Sequence[float]) -> float | None:
    """The abscissa of the vertex of the parabola through three points, when it lies strictly between the outer two."""
    (x0, x1, x2), (y0, y1, y2) = p, d
    den = (x0 - x1) * (x0 - x2) * (x1 - x2)
    a = (x2 * (y1 - y0) + x1 * (y0 - y2) + x0 * (y2 - y1)) / den
    b = (x2 * x2 * (y0 - y1) + x1 * x1 * (y2 - y0) + x0 * x0 * (y1 - y2)) / den
    if a == 0:
        return None
    x = -b / (2 * a)
    return x if x0 < x < x2 and x != x1 else None
