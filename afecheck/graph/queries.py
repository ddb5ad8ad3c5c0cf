"""Questions asked of a circuit graph: what is on a pin's net, is there a DC path, which passives surround a node."""

from __future__ import annotations

from collections import deque
from collections.abc import Callable, Iterable
from dataclasses import dataclass

from afecheck.graph.build import CONDUCTIVE_KINDS, PASSIVE_KINDS, Circuit


def net_of(circuit: Circuit, ref: str, pin: str) -> str | None:
    """The net that pin ``pin`` of ``ref`` is on (None if the pin is unconnected)."""
    return circuit.pins.get(ref, {}).get(pin)


def connected_to(circuit: Circuit, ref: str, pin: str) -> tuple[tuple[str, str], ...]:
    """Every other (ref, pin) on the same net as ``ref``.``pin``."""
    net = net_of(circuit, ref, pin)
    if net is None:
        return ()
    return tuple(rp for rp in circuit.net_pins.get(net, ()) if rp != (ref, pin))


def _is_anchor(circuit: Circuit, net: str) -> bool:
    return net in circuit.fixed or net in circuit.opamp_outputs or net in circuit.signal_nets


_DC_KINDS = CONDUCTIVE_KINDS | {"vsource", "signal_source"}


def has_dc_path(circuit: Circuit, net: str) -> bool:
    """True if ``net`` reaches a defined voltage (ground, rail, source, signal, op-amp output) with capacitors open.

    Resistors, thermistors, voltage sources and signal sources conduct; capacitors do not (RULES-REFERENCE R5a).
    Answered from one walk out of every anchor at once, made on the first question, so n questions cost O(n).
    """
    return net in dc_anchored_nets(circuit)


def dc_anchored_nets(circuit: Circuit) -> frozenset[str]:
    """Every net joined to a defined-voltage net by DC-conducting parts (the nets that do not float)."""
    held = circuit.memo.get("dc-anchored")
    if held is not None:
        return held
    seen = {*circuit.fixed, *circuit.opamp_outputs, *circuit.signal_nets}
    queue = deque(seen)
    while queue:
        n = queue.popleft()
        for ref, _pin in circuit.pins_of_kinds(n, _DC_KINDS):
            for other in circuit.pins[ref].values():
                if other not in seen:
                    seen.add(other)
                    queue.append(other)
    circuit.memo["dc-anchored"] = result = frozenset(seen)
    return result


def dc_path_to_anchor(circuit: Circuit, net: str) -> tuple[str, ...] | None:
    """Nets from ``net`` to the nearest defined-voltage net along DC-conducting parts, or None if it floats."""
    conductive = _DC_KINDS
    prev: dict[str, str | None] = {net: None}
    queue = deque([net])
    while queue:
        n = queue.popleft()
        if _is_anchor(circuit, n):
            path = [n]
            while prev[path[-1]] is not None:
                path.append(prev[path[-1]])  # type: ignore[arg-type]
            return tuple(reversed(path))
        for ref, _pin in circuit.net_pins.get(n, ()):
            if circuit.kinds[ref] not in conductive:
                continue
            for other in circuit.pins[ref].values():
                if other not in prev:
                    prev[other] = n
                    queue.append(other)
    return None


@dataclass(frozen=True)
class Region:
    """Nets and passives reached from some start nets; ``boundary`` holds the nets where the walk stopped."""

    nets: frozenset[str]
    refs: frozenset[str]
    boundary: frozenset[str]
    truncated: bool = False
    """True when the walk stopped at MAX_REGION_PARTS: the region is incomplete and must not be analysed."""


MAX_REGION_PARTS = 100
"""Most passives one stage's region may gather; a stage wired into a network shared by more is not analysed stage
by stage (each such walk would cost O(n), and n stages O(n²))."""


def passive_region(
    circuit: Circuit, starts: Iterable[str], stop: Callable[[str], bool], kinds: frozenset[str] = PASSIVE_KINDS,
    limit: int = MAX_REGION_PARTS,
) -> Region:
    """Walk from ``starts`` through parts of ``kinds`` (resistors, capacitors, NTCs) until ``stop(net)`` is true.

    A start net is always expanded; a stop net is recorded in ``boundary`` and not crossed. The walk ends early,
    with ``truncated`` set, once it holds more than ``limit`` parts.
    """
    starts = tuple(starts)
    nets: set[str] = set(starts)
    refs: set[str] = set()
    boundary: set[str] = set()
    queue = deque(starts)
    while queue:
        n = queue.popleft()
        for ref, _pin in circuit.pins_of_kinds(n, kinds):
            if ref in refs:
                continue
            refs.add(ref)
            if len(refs) > limit:
                return Region(frozenset(nets), frozenset(refs), frozenset(boundary), truncated=True)
            for other in circuit.pins[ref].values():
                if other in nets or other in boundary:
                    continue
                if stop(other):
                    boundary.add(other)
                else:
                    nets.add(other)
                    queue.append(other)
    return Region(frozenset(nets), frozenset(refs), frozenset(boundary))


def stage_stop(circuit: Circuit, own_out: str) -> Callable[[str], bool]:
    """The stop test of a stage walk: rails, ground, fixed nets, declared voltage and charge signal nets and other
    op-amps' outputs. A current signal's net is crossed: its source is a Norton source solved with what is beside it."""
    fixed, signals, outputs, norton = circuit.fixed, circuit.signal_nets, circuit.opamp_outputs, circuit.norton_nets

    def stop(net: str) -> bool:
        return (net in fixed or (net in signals and net not in norton) or (net in outputs and net != own_out)
                or net == own_out)

    return stop
