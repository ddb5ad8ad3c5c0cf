"""Thevenin equivalents of what drives a stage: declared signals, signal sources, rails, dividers and NTC dividers.

A divider node is a net with two or more resistor or thermistor legs whose far ends sit on fixed nets of at
least two different names (a rail or reference over a resistor to ground, say). Its legs reduce to
Vth = Σ(Vi/Ri)/Σ(1/Ri) and Rth = 1/Σ(1/Ri) (RULES-REFERENCE R1). A thermistor leg follows the Beta model
R(T) = R25·exp(B·(1/T − 1/T25)) (IEC 60539, RULES-REFERENCE R5o), evaluated on a grid over its declared
temperature range; several thermistors on one node read the same fraction of their own ranges.
Rail tolerance widens each rail to V·(1 ± t).
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np

from afecheck.analysis.results import SourceEquivalent, StageResult
from afecheck.graph.build import CONDUCTIVE_KINDS, Circuit
from afecheck.sensors.resistive import SWEPT_KINDS, resistance, sweep_range

TEMPERATURE_POINTS = 9


@dataclass(frozen=True)
class Divider:
    """A divider node and its legs, with Vth (min/max over rail tolerance) and Rth at each grid point."""

    net: str
    legs: tuple[str, ...]
    has_ntc: bool
    temperatures_c: tuple[tuple[float, ...], ...]
    vth_min: tuple[float, ...]
    vth_max: tuple[float, ...]
    rth: tuple[float, ...]

    @property
    def nominal_index(self) -> int:
        """Grid point used where one value stands for the whole range (the middle of the temperature range)."""
        return len(self.rth) // 2

    def equivalent(self) -> SourceEquivalent:
        """The divider as a :class:`SourceEquivalent` (extremes over the grid)."""
        return SourceEquivalent(
            net=self.net, kind="ntc-divider" if self.has_ntc else "divider", refs=self.legs,
            v_min=float(min(self.vth_min)), v_max=float(max(self.vth_max)),
            r_min=float(min(self.rth)), r_max=float(max(self.rth)),
        )


def rail_range(circuit: Circuit, net: str) -> tuple[float, float] | None:
    """Voltage range of a fixed net: a rail's V·(1 ± tolerance), a source-held net's value; None if unknown."""
    v = circuit.fixed.get(net)
    if v is None:
        return None
    rail = circuit.loaded.design.rails.get(net)
    tol = float(rail.tolerance) if rail is not None else 0.0
    a, b = v * (1 - tol), v * (1 + tol)
    return (min(a, b), max(a, b))


def find_dividers(circuit: Circuit, nets: Iterable[str], refs: frozenset[str],
                  memo: dict | None = None) -> dict[str, Divider]:
    """Divider nodes among ``nets`` whose legs are among ``refs`` (see the module docstring for the test);
    ``memo`` keeps each divider once per design."""
    found: dict[str, Divider] = {}
    for net in sorted(nets):
        if net in circuit.fixed or net in circuit.signal_nets or net in circuit.opamp_outputs:
            continue
        legs = []
        for ref, _pin in circuit.net_pins.get(net, ()):
            if ref not in refs or circuit.kinds[ref] not in CONDUCTIVE_KINDS:
                continue
            far = circuit.other_pin_net(ref, net)
            if far is not None and far in circuit.fixed and circuit.fixed[far] is not None:
                legs.append((ref, far))
        if len(legs) < 2 or len({far for _, far in legs}) < 2:
            continue
        if memo is None:
            found[net] = divider(circuit, net, legs)
            continue
        key = (net, tuple(legs))
        if key not in memo:
            memo[key] = divider(circuit, net, legs)
        found[net] = memo[key]
    return found


def divider(circuit: Circuit, net: str, legs: list[tuple[str, str]]) -> Divider:
    """Reduce the legs (ref, far net) of a divider node to its Thevenin equivalent over the temperature grid."""
    comps = circuit.loaded.design.components
    has_ntc = any(circuit.kinds[r] in SWEPT_KINDS for r, _ in legs)
    s = np.linspace(0.0, 1.0, TEMPERATURE_POINTS) if has_ntc else np.array([0.5])
    g_rows, temps = [], []
    for ref, _far in legs:
        comp = comps[ref]
        if circuit.kinds[ref] in SWEPT_KINDS:
            lo, hi = sweep_range(comp)
            t = lo + s * (hi - lo)
            temps.append(tuple(float(x) for x in t))
            g_rows.append(1.0 / resistance(comp, t))
        else:
            g_rows.append(np.full(s.size, 1.0 / float(comp.value)))
    g = np.vstack(g_rows)
    ranges = np.array([rail_range(circuit, far) for _, far in legs])
    gsum = g.sum(axis=0)
    vth_min = (g * ranges[:, :1]).sum(axis=0) / gsum
    vth_max = (g * ranges[:, 1:]).sum(axis=0) / gsum
    return Divider(
        net=net, legs=tuple(sorted(r for r, _ in legs)), has_ntc=has_ntc, temperatures_c=tuple(temps),
        vth_min=tuple(float(v) for v in vth_min), vth_max=tuple(float(v) for v in vth_max),
        rth=tuple(float(r) for r in 1.0 / gsum),
    )


def boundary_source(circuit: Circuit, net: str, upstream: StageResult | None = None) -> SourceEquivalent | None:
    """The Thevenin equivalent of a net a stage walk stopped at (None for ground and unknown nets)."""
    d = circuit.loaded.design
    if net == circuit.ground:
        return None
    if net in d.signals and d.signals[net].kind != "voltage":
        sig = d.signals[net]
        lo, hi = sig.dc_range
        r = sig.shunt_resistance if sig.kind == "current" else sig.leakage_resistance
        r = math.inf if r is None else float(r)
        return SourceEquivalent(net=net, kind=sig.kind, refs=(), v_min=min(lo, hi), v_max=max(lo, hi), r_min=r,
                                r_max=r, ac_amplitude=sig.ac_value, f_max=float(sig.band[1]) if sig.band else 0.0)
    if net in d.signals:
        sig = d.signals[net]
        return SourceEquivalent(net=net, kind="signal", refs=(), v_min=float(min(sig.dc)), v_max=float(max(sig.dc)),
                                r_min=float(sig.source_resistance), r_max=float(sig.source_resistance),
                                ac_amplitude=float(sig.ac_amplitude), f_max=float(sig.band[1]) if sig.band else 0.0)
    if net in circuit.signal_nets:
        ref = circuit.signal_nets[net]
        comp = d.components[ref]
        return SourceEquivalent(net=net, kind="signal-source", refs=(ref,), v_min=float(min(comp.dc)),
                                v_max=float(max(comp.dc)), r_min=float(comp.source_resistance),
                                r_max=float(comp.source_resistance), ac_amplitude=float(comp.ac_amplitude),
                                f_max=float(comp.band[1]) if comp.band else 0.0)
    if net in circuit.fixed:
        rng = rail_range(circuit, net)
        if rng is None:
            return None
        kind = "rail" if net in d.rails else "vsource"
        refs = () if kind == "rail" else tuple(r for r, _ in circuit.net_pins.get(net, ())
                                               if circuit.kinds[r] == "vsource")
        return SourceEquivalent(net=net, kind=kind, refs=refs, v_min=rng[0], v_max=rng[1], r_min=0.0, r_max=0.0)
    if net in circuit.opamp_outputs:
        ref = circuit.opamp_outputs[net]
        if upstream is None or upstream.vout_min is None or upstream.vout_max is None:
            return SourceEquivalent(net=net, kind="unknown", refs=(ref,), v_min=0.0, v_max=0.0, r_min=0.0, r_max=0.0)
        rout = upstream.output_resistance or 0.0
        return SourceEquivalent(net=net, kind="stage-output", refs=(ref,), v_min=upstream.vout_min,
                                v_max=upstream.vout_max, r_min=rout, r_max=rout,
                                ac_amplitude=upstream.vout_ac_peak, f_max=upstream.f_max)
    return None
