"""Build the circuit graph of a loaded design: nets, components, pins, ground, fixed-voltage and signal nets.

The networkx graph is bipartite (net nodes ``("net", name)`` and component nodes ``("comp", ref)``, one edge per
pin carrying the pin name). Plain dictionaries beside it answer the hot queries (what sits on a net, which net a
pin is on) without walking networkx, so per-stage work stays cheap on large designs.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from functools import cached_property
from typing import TYPE_CHECKING

from afecheck.model.loaded import LoadedDesign

if TYPE_CHECKING:
    import networkx as nx

PASSIVE_KINDS = frozenset({"resistor", "capacitor", "ntc", "rtd", "bridge_arm", "inductor"})
CONDUCTIVE_KINDS = frozenset({"resistor", "ntc", "rtd", "bridge_arm", "inductor"})


@dataclass(frozen=True)
class Circuit:
    """A design as a graph plus lookup tables; built once, read by stage finding and the analyses."""

    loaded: LoadedDesign
    ground: str
    kinds: Mapping[str, str]
    pins: Mapping[str, Mapping[str, str]]
    net_pins: Mapping[str, tuple[tuple[str, str], ...]]
    fixed: Mapping[str, float | None]
    signal_nets: Mapping[str, str]
    opamp_outputs: Mapping[str, str]

    @cached_property
    def graph(self) -> nx.MultiGraph:
        """Bipartite multigraph of nets and components; each edge is one pin (attribute ``pin``).

        networkx is imported here, when the graph is first asked for, so a plain check does not pay for it.
        """
        import networkx as nx

        g = nx.MultiGraph()
        for net in self.net_pins:
            g.add_node(("net", net), kind="net")
        for ref, pins in self.pins.items():
            g.add_node(("comp", ref), kind=self.kinds[ref])
            for pin, net in pins.items():
                g.add_edge(("comp", ref), ("net", net), pin=pin)
        return g

    @cached_property
    def norton_nets(self) -> frozenset[str]:
        """Nets of declared ``current`` signals: a current source into a node, not a held voltage, so a stage walk
        crosses them and the parts beside the source (a sensor, a shunt, a bias network) join the stage's solve."""
        return frozenset(net for net, sig in self.loaded.design.signals.items() if sig.kind == "current")

    @cached_property
    def memo(self) -> dict:
        """Answers of whole-circuit queries, computed once (see graph/queries.py); the circuit never changes."""
        return {}

    def pins_of_kinds(self, net: str, kinds: frozenset[str]) -> tuple[tuple[str, str], ...]:
        """The (ref, pin) on ``net`` whose component kind is in ``kinds``; the index is built once per ``kinds``,
        so a walk through passives never scans the hundreds of op-amp pins a shared net may carry."""
        index = self.memo.get(("pins", kinds))
        if index is None:
            index = {}
            for n, pins in self.net_pins.items():
                chosen = tuple(rp for rp in pins if self.kinds[rp[0]] in kinds)
                if chosen:
                    index[n] = chosen
            self.memo[("pins", kinds)] = index
        return index.get(net, ())

    @property
    def opamps(self) -> tuple[str, ...]:
        """Reference designators of every op-amp, in file order."""
        return tuple(r for r, k in self.kinds.items() if k == "opamp")

    def is_fixed(self, net: str) -> bool:
        """True for ground, rails and nets held by a voltage source."""
        return net in self.fixed

    def other_pin_net(self, ref: str, net: str) -> str | None:
        """For a two-pin part touching ``net``, the net on its other pin (None if both pins are on ``net``)."""
        for n in self.pins[ref].values():
            if n != net:
                return n
        return None


def _fixed_nets(loaded: LoadedDesign, ground: str) -> dict[str, float | None]:
    """Ground at 0 V, rails at their declared voltage, and nets a voltage source ties to a known voltage."""
    d = loaded.design
    fixed: dict[str, float | None] = {ground: 0.0}
    for name, rail in d.rails.items():
        if name != ground:
            fixed[name] = None if rail.voltage is None else float(rail.voltage)
    vsources = [(c.pins.get("p"), c.pins.get("n"), float(c.value)) for c in d.components.values()
                if c.kind == "vsource"]
    changed = True
    while changed:
        changed = False
        for p, n, v in vsources:
            if p is None or n is None:
                continue
            if n in fixed and p not in fixed:
                fixed[p] = None if fixed[n] is None else fixed[n] + v
                changed = True
            elif p in fixed and n not in fixed:
                fixed[n] = None if fixed[p] is None else fixed[p] - v
                changed = True
    return fixed


def circuit_of(loaded: LoadedDesign) -> Circuit:
    """The :class:`Circuit` of ``loaded``, built once per loaded design and shared by the analysis and the rules
    (both are immutable, so sharing changes nothing but the time)."""
    circuit = loaded.__dict__.get("_circuit")
    if circuit is None:
        circuit = loaded.__dict__["_circuit"] = build_circuit(loaded)
    return circuit


def build_circuit(loaded: LoadedDesign) -> Circuit:
    """Make the :class:`Circuit` of ``loaded``: every pin on its net, fixed nets, signal nets, op-amp outputs."""
    d = loaded.design
    ground = d.ground
    kinds: dict[str, str] = {}
    pins: dict[str, Mapping[str, str]] = {}
    net_pins: dict[str, list[tuple[str, str]]] = {}
    for ref, comp in d.components.items():
        kinds[ref] = comp.kind
        pins[ref] = comp.pins  # the validated model's own mapping, never changed: no copy per part (memory)
        for pin, net in comp.pins.items():
            net_pins.setdefault(net, []).append((ref, pin))
    for net in (ground, *d.rails, *d.signals, *d.loads):
        net_pins.setdefault(net, [])
    fixed = _fixed_nets(loaded, ground)
    signal_nets: dict[str, str] = {}
    for ref, comp in d.components.items():
        if comp.kind == "signal_source" and "p" in comp.pins:
            signal_nets.setdefault(comp.pins["p"], ref)
    for net in d.signals:
        signal_nets[net] = "signal"
    outputs = {comp.pins["out"]: ref for ref, comp in d.components.items()
               if comp.kind == "opamp" and "out" in comp.pins}
    return Circuit(
        loaded=loaded,
        ground=ground,
        kinds=kinds,
        pins=pins,
        net_pins={k: tuple(v) for k, v in net_pins.items()},
        fixed=fixed,
        signal_nets=signal_nets,
        opamp_outputs=outputs,
    )
