"""Find one stage per op-amp, group op-amps whose feedback runs through each other, and classify each topology.

A stage is an op-amp plus the passives reached from its pins. The walk from ``in+``/``in-`` stops at ground, rails,
fixed-voltage nets, declared voltage and charge signal nets and other op-amps' outputs (a stiff node ends a stage);
a declared ``current`` signal's net is crossed, so the parts beside the current source (a sensor, a shunt, a bias
network) are in the stage and solved with it (a Norton source, not a held voltage); the walk from
``out`` also stops at other op-amps' ``in-`` nets (a virtual ground). Op-amps whose input walks reach each other's
outputs in a loop (instrumentation amplifiers, state-variable filters) form a group that is solved together.

Topology criteria, in the order they are tried:

- ``general`` when nothing connects the output back to the inputs;
- ``active-filter`` when a feedback part lands on an inner node of the input network (not on ``in+``/``in-``)
  and the stage holds at least two capacitors (Sallen-Key, multiple feedback);
- ``follower`` when ``in-`` is the output net, or is tied to it by one resistor and nothing else;
- ``charge-amplifier`` when a declared ``charge`` signal (a piezo) drives ``in-`` directly and the feedback holds
  a capacitor: the charge lands on that capacitor (gain −1/Cf in V/C), a resistor across it only bleeds it;
- ``transimpedance`` when a declared signal or signal source drives ``in-`` directly (no series part) and the
  feedback holds a resistor: the source's resistance is read as the sensor's shunt resistance;
- ``integrator`` when the feedback to ``in-`` is capacitors only and a signal reaches ``in-``;
- with resistive feedback: a signal on the ``in+`` side only -> ``non-inverting``; on the ``in-`` side only ->
  ``inverting`` (one signal) or ``summing`` (several); on both -> ``difference``; with no signal on either side,
  a rail or reference reaching only ``in+`` -> ``non-inverting`` (a reference amplifier), only the ``in-`` side
  -> ``inverting``;
- anything else is ``general``.

A signal is a declared signal net, a signal source, another op-amp's output outside the group, or a thermistor
in the walked network (on the ``in-`` side not one touching the pin: that is a temperature-dependent Rg).
"""

from __future__ import annotations

import heapq
from dataclasses import dataclass

from afecheck.analysis.results import Topology
from afecheck.graph.build import Circuit
from afecheck.graph.queries import Region, passive_region, stage_stop
from afecheck.sensors.resistive import SWEPT_KINDS

MAX_GROUP = 8
_EMPTY = Region(frozenset(), frozenset(), frozenset())


@dataclass(frozen=True)
class Stage:
    """One op-amp with its input network, feedback, output network and the group it is solved in."""

    opamp: str
    in_plus: str
    in_minus: str
    out: str
    supply_plus: str | None
    supply_minus: str | None
    plus_region: Region
    minus_region: Region
    output_region: Region
    feedback: tuple[str, ...]
    upstream: tuple[str, ...]
    group: tuple[str, ...]
    topology: Topology

    @property
    def refs(self) -> tuple[str, ...]:
        """Every passive of the stage, sorted."""
        return tuple(sorted(self.plus_region.refs | self.minus_region.refs | self.output_region.refs))

    @property
    def nets(self) -> frozenset[str]:
        """Every net the stage touches, boundaries included."""
        nets = {self.in_plus, self.in_minus, self.out}
        for r in (self.plus_region, self.minus_region, self.output_region):
            nets |= r.nets | r.boundary
        return frozenset(nets)


@dataclass(frozen=True)
class StagePlan:
    """All stages, the solve units (single op-amps or groups) in signal order, and loops that cannot be solved."""

    stages: dict[str, Stage]
    units: tuple[tuple[str, ...], ...]
    unsolved_loops: tuple[tuple[str, ...], ...]


def _input_regions(circuit: Circuit, ref: str) -> tuple[Region, Region]:
    pins = circuit.pins[ref]
    inp, inm, out = pins.get("in+"), pins.get("in-"), pins.get("out")
    stop = stage_stop(circuit, out or "")

    def walk(net: str | None, allow_signal: bool) -> Region:
        if net is None:
            return _EMPTY
        blocked = net in circuit.fixed or (net in circuit.opamp_outputs) or net == out
        if net in circuit.signal_nets and net not in circuit.norton_nets and not allow_signal:
            blocked = True
        if blocked:
            return Region(frozenset(), frozenset(), frozenset({net}))
        return passive_region(circuit, (net,), stop)

    return walk(inp, False), walk(inm, True)


def _signal_terminals(circuit: Circuit, region: Region, group: tuple[str, ...], start: str | None,
                      gain_side: bool = False) -> set[str]:
    """Signal-carrying nets a side of the stage reaches; a thermistor counts as one, except on the ``in-`` side
    (``gain_side``) where a thermistor touching the pin sets the gain rather than carrying a signal."""
    found = set()
    nets = set(region.boundary) | (region.nets & circuit.norton_nets)
    if start is not None:
        nets.add(start)
    for net in nets:
        if net in circuit.signal_nets:
            found.add(net)
        elif net in circuit.opamp_outputs and circuit.opamp_outputs[net] not in group:
            found.add(net)
    for ref in region.refs:
        if circuit.kinds[ref] in SWEPT_KINDS and not (gain_side and start in circuit.pins[ref].values()):
            found.add(f"ntc:{ref}")
    return found


def _charge_signal(circuit: Circuit, net: str | None) -> bool:
    """Whether ``net`` carries a declared charge-output sensor."""
    sig = circuit.loaded.design.signals.get(net) if net is not None else None
    return sig is not None and sig.kind == "charge"


def classify(
    circuit: Circuit, ref: str, plus: Region, minus: Region, group: tuple[str, ...]
) -> tuple[Topology, tuple[str, ...]]:
    """Topology of op-amp ``ref`` (criteria in the module docstring) and its feedback parts."""
    pins = circuit.pins[ref]
    inp, inm, out = pins.get("in+"), pins.get("in-"), pins.get("out")
    kinds = circuit.kinds
    side_refs = plus.refs | minus.refs
    feedback = tuple(sorted(r for r in side_refs if out in circuit.pins[r].values()))
    wire = inm is not None and inm == out
    if not feedback and not wire:
        return "general", feedback
    landing = {n for r in feedback for n in circuit.pins[r].values() if n != out}
    caps = [r for r in side_refs if kinds[r] == "capacitor"]
    if landing - {inp, inm} and len(caps) >= 2:
        return "active-filter", feedback
    fb_minus = [r for r in feedback if r in minus.refs]
    if wire or (len(fb_minus) == 1 and kinds[fb_minus[0]] != "capacitor" and minus.refs == {fb_minus[0]}
                and inm not in circuit.signal_nets):
        return "follower", feedback
    fb_minus_res = [r for r in fb_minus if kinds[r] != "capacitor"]
    minus_signals = _signal_terminals(circuit, minus, group, inm, gain_side=True)
    plus_signals = _signal_terminals(circuit, plus, group, inp)
    if _charge_signal(circuit, inm) and len(fb_minus_res) < len(fb_minus):
        return "charge-amplifier", feedback
    if inm in circuit.signal_nets and fb_minus_res:
        return "transimpedance", feedback
    if fb_minus and not fb_minus_res:
        return ("integrator" if minus_signals else "general"), feedback
    if not fb_minus_res:
        return "general", feedback
    if plus_signals and not minus_signals:
        return "non-inverting", feedback
    if minus_signals and not plus_signals:
        return ("inverting" if len(minus_signals) == 1 else "summing"), feedback
    if plus_signals and minus_signals:
        return "difference", feedback
    plus_ref = any(n != circuit.ground and n in circuit.fixed for n in plus.boundary | {inp})
    minus_ref = any(n != circuit.ground and n in circuit.fixed for n in minus.boundary)
    if plus_ref != minus_ref:
        return ("non-inverting" if plus_ref else "inverting"), feedback
    return "general", feedback


def find_stages(circuit: Circuit) -> StagePlan:
    """One :class:`Stage` per op-amp; groups from loops between stages; solve units in signal order."""
    opamps = circuit.opamps
    order = {r: i for i, r in enumerate(opamps)}
    regions = {r: _input_regions(circuit, r) for r in opamps}
    upstream: dict[str, tuple[str, ...]] = {}
    for r, (plus, minus) in regions.items():
        upstream[r] = tuple(sorted({circuit.opamp_outputs[n] for n in plus.boundary | minus.boundary
                                    if n in circuit.opamp_outputs and circuit.opamp_outputs[n] != r},
                                   key=order.__getitem__))
    signal_order = _acyclic_order(opamps, upstream, order)
    if signal_order is None:
        group_of, units, loops = _loop_units(opamps, upstream, order)
    else:
        group_of = {r: (r,) for r in opamps}
        units, loops = tuple(group_of[r] for r in signal_order), []
    minus_nets: dict[str, list[str]] = {}
    for o in opamps:
        if "in-" in circuit.pins[o]:
            minus_nets.setdefault(circuit.pins[o]["in-"], []).append(o)
    stages: dict[str, Stage] = {}
    for r in opamps:
        pins = circuit.pins[r]
        out = pins.get("out")
        group = group_of[r]
        plus, minus = regions[r]
        topology, feedback = classify(circuit, r, plus, minus, group)
        base_stop = stage_stop(circuit, out or "")

        def stop(net: str, base=base_stop, group=group, own=pins) -> bool:
            if base(net):
                return True
            owners = minus_nets.get(net)
            return bool(owners) and net not in (own.get("in+"), own.get("in-")) and any(
                o not in group for o in owners)

        if out is None or out in circuit.fixed:
            out_region = _EMPTY
        else:
            out_region = passive_region(circuit, (out,), lambda n, s=stop, o=out: n != o and s(n))
        stages[r] = Stage(
            opamp=r, in_plus=pins.get("in+", ""), in_minus=pins.get("in-", ""), out=out or "",
            supply_plus=pins.get("v+"), supply_minus=pins.get("v-"),
            plus_region=plus, minus_region=minus, output_region=out_region, feedback=feedback,
            upstream=upstream[r], group=group, topology=topology,
        )
    return StagePlan(stages=stages, units=units, unsolved_loops=tuple(loops))


def _acyclic_order(opamps: tuple[str, ...] | list[str], upstream: dict[str, tuple[str, ...]],
                   order: dict[str, int]) -> list[str] | None:
    """Op-amps in signal order, the earliest-listed ready one first; None when the stages feed back in a loop.

    The same order as a lexicographical topological sort keyed by ``order``, without importing networkx for the
    loop-free designs that make up nearly every check.
    """
    downstream: dict[str, list[str]] = {r: [] for r in opamps}
    waiting = {r: len(upstream[r]) for r in opamps}
    for r in opamps:
        for u in upstream[r]:
            downstream[u].append(r)
    ready = [(order[r], r) for r in opamps if not waiting[r]]
    heapq.heapify(ready)
    result: list[str] = []
    while ready:
        _, r = heapq.heappop(ready)
        result.append(r)
        for d in downstream[r]:
            waiting[d] -= 1
            if not waiting[d]:
                heapq.heappush(ready, (order[d], d))
    return result if len(result) == len(opamps) else None


def _loop_units(opamps: tuple[str, ...] | list[str], upstream: dict[str, tuple[str, ...]], order: dict[str, int]
                ) -> tuple[dict[str, tuple[str, ...]], tuple[tuple[str, ...], ...], list[tuple[str, ...]]]:
    """Groups of op-amps in loops, solve units in signal order and the loops too big to solve, via networkx."""
    import networkx as nx

    deps = nx.DiGraph()
    deps.add_nodes_from(opamps)
    for r in opamps:
        deps.add_edges_from((u, r) for u in upstream[r])
    group_of: dict[str, tuple[str, ...]] = {}
    loops: list[tuple[str, ...]] = []
    for scc in nx.strongly_connected_components(deps):
        members = tuple(sorted(scc, key=order.__getitem__))
        if len(members) > MAX_GROUP:
            loops.append(members)
        for m in members:
            group_of[m] = members if len(members) <= MAX_GROUP else (m,)
    units_graph = nx.DiGraph()
    unit_of = {r: group_of[r] for r in opamps}
    units_graph.add_nodes_from(set(unit_of.values()))
    for u, v in deps.edges:
        if unit_of[u] != unit_of[v]:
            units_graph.add_edge(unit_of[u], unit_of[v])
    if nx.is_directed_acyclic_graph(units_graph):
        units = tuple(nx.lexicographical_topological_sort(units_graph, key=lambda g: order[g[0]]))
    else:
        units = tuple(sorted(units_graph.nodes, key=lambda g: order[g[0]]))
    return group_of, units, loops
