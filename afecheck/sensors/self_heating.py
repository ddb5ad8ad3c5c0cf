"""Self-heating of a resistive temperature sensor: the power its excitation puts into it, over its range and corners.

The rest of the sensor's channel is linear, so the sensor sees a Norton source: its current is I = Isc − G·V with
G and Isc found from two DC solves at two sensor resistances (Norton's theorem). Isc is linear in every independent
source of the channel (each rail and reference within its tolerance, each declared signal over its range), so its
largest magnitude is exact: |Isc(mid)| + Σ|ΔIsc_k|/2 over each source's own swing. At each temperature on a fine grid
of the declared range the element then dissipates P = I²·R_element (an RTD's lead resistance is in the loop but
not in the element) and runs ΔT = P/δ above its surroundings (δ the declared dissipation constant). The sensor's
own accuracy at that temperature comes from its declared grade: an RTD's IEC 60751 class, else a resistance
tolerance turned into °C by the sensor's own slope dlnR/dT.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING

from afecheck.sensors import rtd
from afecheck.sensors.resistive import lead_ohm, resistance

if TYPE_CHECKING:
    import numpy as np

    from afecheck.analysis.netlist import Netlist
    from afecheck.model.loaded import LoadedDesign

GRID_POINTS = 201


@dataclass(frozen=True)
class SelfHeating:
    """The worst point of a sensor's range: where the rise ΔT takes the largest share of its accuracy (or, with no
    declared accuracy, where ΔT is largest), with the current, power and resistance there."""

    ref: str
    temperature_c: float
    resistance_ohm: float
    current_a: float
    power_w: float
    rise_k: float
    dissipation_w_per_k: float
    accuracy_k: float | None
    accuracy_source: str
    """what the accuracy comes from: ``class B (IEC 60751)``, ``1 % resistance tolerance`` or empty"""
    norton_current_a: float
    norton_conductance_s: float


def accuracy_k(comp, t_c: np.ndarray) -> tuple[np.ndarray | None, str]:  # noqa: ANN001 - an ntc or rtd component
    """The sensor's own accuracy ±°C at each temperature: the RTD class (IEC 60751), else the resistance tolerance
    over |dlnR/dT| (the sensor's slope, central difference over ±0.01 °C); None without either."""
    import numpy as np  # on first use: the rule set is imported by commands that solve nothing (start-up)

    if comp.kind == "rtd" and comp.tolerance_class is not None:
        return (np.array([rtd.tolerance_c(comp.tolerance_class, float(t)) for t in t_c]),
                f"class {comp.tolerance_class} (IEC 60751)")
    tol = getattr(comp, "tolerance", None)
    if not tol:
        return None, ""
    h = 0.01
    lead = lead_ohm(comp) if comp.kind == "rtd" else 0.0
    up = np.log(resistance(comp, t_c + h) - lead)
    down = np.log(resistance(comp, t_c - h) - lead)
    return float(tol) / np.abs((up - down) / (2 * h)), f"{100 * float(tol):.3g} % resistance tolerance"


def _source_ranges(loaded: LoadedDesign, netlist: Netlist) -> list[tuple[str, float, float]]:
    """(element, low dc, high dc) for every independent source of the netlist that has a declared swing."""
    from afecheck.analysis.netlist import CurrentSource, VoltageSource

    d = loaded.design
    out = []
    for e in netlist.elements:
        if not isinstance(e, (VoltageSource, CurrentSource)):
            continue
        base, _, tag = e.name.partition("#")
        if tag == "rail" and base in d.rails:
            tol = float(d.rails[base].tolerance or 0.0)
            out.append((e.name, e.dc * (1 - tol), e.dc * (1 + tol)))
        elif tag == "signal" and base in d.signals:
            out.append((e.name, *d.signals[base].dc_range))
        elif not tag and base in d.components and d.components[base].kind == "vsource":
            tol = float(d.components[base].tolerance or 0.0)
            out.append((e.name, e.dc * (1 - tol), e.dc * (1 + tol)))
        elif not tag and base in d.components and d.components[base].kind == "signal_source":
            lo, hi = d.components[base].dc
            out.append((e.name, float(lo), float(hi)))
    return [(n, min(lo, hi), max(lo, hi)) for n, lo, hi in out if lo != hi]


def self_heating(loaded: LoadedDesign, ref: str) -> SelfHeating:
    """The worst self-heating point of NTC or RTD ``ref`` (which must declare ``dissipation``) over its range."""
    import numpy as np

    from afecheck.analysis.channel import find_channels
    from afecheck.analysis.mna import solve_dc
    from afecheck.analysis.netlist import NetlistOptions, Resistor, netlist_from_design

    comp = loaded.design.components[ref]
    free = [n for n in comp.pins.values() if n not in loaded.fixed_nets]
    if not free:
        raise ValueError("both ends of the sensor sit on fixed nets (rails or ground)")
    channel = find_channels(loaded)[free[0]]
    base = netlist_from_design(loaded, channel.refs, NetlistOptions(include_offsets=False))
    sensor = base.element(ref)
    assert isinstance(sensor, Resistor)
    r1, r2 = sensor.value, 2.0 * sensor.value

    def voltage(nl: Netlist, r: float) -> float:
        sol = solve_dc(nl.replaced(replace(sensor, value=r)))
        return sol.voltage(sensor.a) - sol.voltage(sensor.b)

    v1, v2 = voltage(base, r1), voltage(base, r2)
    g = -(v2 / r2 - v1 / r1) / (v2 - v1) if v2 != v1 else 0.0
    isc_mid = v1 / r1 + g * v1
    swing = 0.0
    for name, lo, hi in _source_ranges(loaded, base):
        e = base.element(name)
        ends = [voltage(base.replaced(replace(e, dc=x)), r1) for x in (lo, hi)]
        swing += abs((ends[1] - ends[0]) * (1.0 / r1 + g)) / 2.0
    isc = abs(isc_mid) + swing
    lo, hi = (float(x) for x in comp.temperature)
    lead = lead_ohm(comp) if comp.kind == "rtd" else 0.0

    def at(t: np.ndarray) -> tuple[np.ndarray, ...]:
        r_loop = resistance(comp, t)
        current = isc / (1.0 + g * r_loop)
        rise = current ** 2 * (r_loop - lead) / float(comp.dissipation)
        acc, _ = accuracy_k(comp, t)
        return r_loop - lead, current, rise, (rise / acc if acc is not None else rise)

    grid = np.linspace(lo, hi, GRID_POINTS) if hi > lo else np.array([lo])
    if lo < 0.0 < hi:
        grid = np.sort(np.append(grid, 0.0))  # an RTD class's ±(a + b·|t|) has its kink there
    k = int(np.argmax(at(grid)[3]))
    t_best = float(grid[k])
    if grid.size > 2:
        t_best = _refine(lambda x: float(at(np.array([x]))[3][0]), float(grid[max(k - 1, 0)]),
                         float(grid[min(k + 1, grid.size - 1)]), t_best)
    r_element, current, rise, _ = (float(x[0]) for x in at(np.array([t_best])))
    acc, source = accuracy_k(comp, np.array([t_best]))
    return SelfHeating(ref, t_best, r_element, current, current ** 2 * r_element, rise, float(comp.dissipation),
                       None if acc is None else float(acc[0]), source, float(isc), float(g))


def _refine(f: Callable[[float], float], a: float, b: float, best: float) -> float:
    """The maximiser of ``f`` between grid neighbours ``a`` and ``b`` by golden-section search, kept only if it
    beats the grid's ``best`` point (the share is unimodal between neighbours of its grid maximum)."""
    ratio = (math.sqrt(5.0) - 1.0) / 2.0
    x1, x2 = b - ratio * (b - a), a + ratio * (b - a)
    f1, f2 = f(x1), f(x2)
    for _ in range(60):
        if f1 < f2:
            a, x1, f1 = x1, x2, f2
            x2 = a + ratio * (b - a)
            f2 = f(x2)
        else:
            b, x2, f2 = x2, x1, f1
            x1 = b - ratio * (b - a)
            f1 = f(x1)
    x = 0.5 * (a + b)
    return x if f(x) > f(best) else best


def is_finite(result: SelfHeating) -> bool:
    """True when every number of the result is finite (a floating sensor gives none)."""
    return all(math.isfinite(x) for x in (result.power_w, result.rise_k, result.current_a))
