"""DC ranges and output currents of a solve unit with its neighbouring stages in the circuit.

The first pass (:func:`afecheck.analysis.signals.propagate`) solves each unit with its upstream stages as
Thevenin sources and the downstream stages' inverting inputs as ideal virtual grounds. A real downstream
inverting input sits at in+ + Vos − Vout/A0 (and its bias currents and input resistance act on the nets around
it), so the current an output drives into the next stage's input resistor is off by Vos/R and Vout/(A0·R): over
a percent in a cascade with a few hundred ohms between stages. Here each unit is solved again together with
its downstream neighbours (op-amps whose inputs sit on its nets), each with its own macromodel and network,
fed from the first pass's forms; the unit's own nets and output currents take the result. An upstream stage
reaches the unit through its DC Thevenin equivalent (output form behind its closed-loop output resistance),
which is already exact at DC. One level is included: a stage beyond it reaches the unit only through a
neighbour's closed loop (below 1e-6 relative). A group too large to solve locally keeps the first pass.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from afecheck.analysis import solve_memo, unit_memo
from afecheck.analysis.affine import SweptForm
from afecheck.analysis.corners import Corners
from afecheck.analysis.ranges import solve_forms
from afecheck.analysis.results import StageResult
from afecheck.analysis.solve_memo import numeric_key, unit_system
from afecheck.analysis.stage_analysis import MAX_LOCAL_PARTS, _input_loads, _node, _unit_netlist, _unit_sources
from afecheck.errors import AnalysisError, InputError
from afecheck.graph.build import Circuit
from afecheck.graph.stages import Stage, StagePlan


@dataclass(frozen=True)
class CoupledDc:
    """A unit's DC values solved with its neighbours: each of its nets' form and (lowest, highest), and each of
    its op-amps' output current form."""

    nets: Mapping[str, tuple[SweptForm, float, float]]
    currents: Mapping[str, SweptForm]


def solve_with_neighbours(circuit: Circuit, plan: StagePlan, unit: tuple[str, ...],
                          results: Mapping[str, StageResult], forms: Mapping[str, SweptForm], corners: Corners,
                          cache: dict | None = None) -> CoupledDc | None:
    """The unit's DC forms with its closed-loop neighbours in the circuit; None when it has none (the first pass
    is then already the whole answer) or when the coupled circuit cannot be built or solved."""
    if any(results.get(r) is None or results[r].vout_min is None for r in unit):
        return None
    stages = [plan.stages[r] for r in unit]
    if _readers_bound(circuit, stages, cache) > MAX_LOCAL_PARTS + len(unit):
        return None  # a crowded net: too many neighbours to couple (and listing them per unit would cost O(n²))
    near = [r for r in downstream(circuit, unit, stages)
            if r in results and results[r].vout_min is not None and results[r].feedback == "negative"]
    if not near:
        return None
    group = stages + [plan.stages[r] for r in near]
    passives = frozenset().union(*(frozenset(s.refs) for s in group))
    held = set().union(*(s.output_region.boundary for s in group))
    if len(passives) + len(held) + len(group) > MAX_LOCAL_PARTS:
        return None
    ukey = None
    if cache is not None and solve_memo.MEMOISE:
        ukey = unit_memo.unit_key(circuit, group, results, forms, corners, _input_loads(circuit, cache), None, cache)
        if ukey is not None:
            ukey = unit_memo.UnitKey((len(unit), ukey.key), ukey.names)
            hit = unit_memo.remembered(cache, "coupled", ukey)
            if hit is not None:
                return _renamed(*hit)
    coupled = _solve_group(circuit, stages, group, unit, results, forms, corners, cache)
    if coupled is not None and ukey is not None:
        unit_memo.keep(cache, "coupled", ukey, coupled, [*coupled.nets, *coupled.currents],
                       [*(f for f, _, _ in coupled.nets.values()), *coupled.currents.values()])
    return coupled


def _renamed(coupled: CoupledDc, names: unit_memo.Renamer) -> CoupledDc:
    """A kept group's values under the names of another group with the same key."""
    return CoupledDc({names.names[n]: (names.form(f), lo, hi) for n, (f, lo, hi) in coupled.nets.items()},
                     {names.names[r]: names.form(f) for r, f in coupled.currents.items()})


def _solve_group(circuit: Circuit, stages: list[Stage], group: list[Stage], unit: tuple[str, ...],
                 results: Mapping[str, StageResult], forms: Mapping[str, SweptForm], corners: Corners,
                 cache: dict | None) -> CoupledDc | None:
    """Solve the unit with its neighbours ``group`` (None when the circuit cannot be built or solved)."""
    try:
        netlist, _inputs, notes, sources, ntcs = _unit_netlist(circuit, group, results, corners, forms, cache)
        if notes:
            return None
        # a repeated channel's coupled circuit is the same up to names: its arrays and solves are shared
        key = numeric_key(netlist) if cache is not None and solve_memo.MEMOISE else None
        system = unit_system(netlist, key, cache)
        source_forms, varying, grid = _unit_sources(circuit, netlist, system, corners, sources, ntcs)
        dc = solve_forms(system, source_forms, varying, grid, memo=None if key is None else (cache, key))
    except (InputError, AnalysisError, np.linalg.LinAlgError, ValueError, ArithmeticError):
        return None
    own = sorted(set().union(*(set(s.nets) for s in stages)) - set(circuit.fixed))
    rows = {net: system.index[_node(circuit, net)] for net in own if _node(circuit, net) in system.index}
    branches = {r: system.branch_index(netlist.opamps[r].loop_element) for r in unit}
    wanted = np.array(sorted(set(rows.values()) | set(branches.values())), dtype=int)
    lo, hi = dc.bounds(wanted)
    nets = {net: (dc.form(i), float(lo[i]), float(hi[i])) for net, i in rows.items()}
    return CoupledDc(nets, {r: dc.form(b, -1.0) for r, b in branches.items()})


def downstream(circuit: Circuit, unit: tuple[str, ...], stages: list[Stage]) -> list[str]:
    """Op-amps outside the unit whose inputs sit on the unit's nets (not on a fixed net, a charge signal's net or a
    voltage source's own net with no source resistance: a current signal's net, or one behind a source
    resistance, takes the voltage its neighbours give it).

    Only these change the unit's DC values: an upstream stage drives the unit through its DC Thevenin
    equivalent (its output form behind its closed-loop output resistance), which is exact at DC."""
    near: dict[str, None] = {}
    for s in stages:
        for net in sorted(s.nets):
            if not _couples(circuit, net):
                continue
            for ref, pin in circuit.net_pins.get(net, ()):
                if pin in ("in+", "in-") and circuit.kinds[ref] == "opamp" and ref not in unit:
                    near.setdefault(ref, None)
    return list(near)


def _couples(circuit: Circuit, net: str) -> bool:
    """Whether other op-amps' inputs on ``net`` move it (see :func:`downstream`)."""
    return not (net in circuit.fixed or (net in circuit.signal_nets and net not in circuit.norton_nets
                                         and not _behind_resistance(circuit, net)))


def _readers_bound(circuit: Circuit, stages: list[Stage], cache: dict | None) -> int:
    """An upper bound on the unit's neighbours plus its own op-amps: the op-amp input pins on its coupling nets,
    counted once a net per design (in ``cache``)."""
    counts = {} if cache is None else cache.setdefault("#coupling-readers", {})
    total = 0
    for net in {n for s in stages for n in s.nets}:
        n = counts.get(net)
        if n is None:
            n = counts[net] = (sum(1 for ref, pin in circuit.net_pins.get(net, ())
                                   if pin in ("in+", "in-") and circuit.kinds[ref] == "opamp")
                               if _couples(circuit, net) else 0)
        total += n
    return total


def _behind_resistance(circuit: Circuit, net: str) -> bool:
    """Whether the voltage signal or signal source on ``net`` drives it through a source resistance (so a
    neighbour's input current moves the net)."""
    ref = circuit.signal_nets[net]
    if ref == "signal":
        sig = circuit.loaded.design.signals[net]
        return sig.kind == "voltage" and sig.source_resistance > 0
    return circuit.loaded.design.components[ref].source_resistance > 0
