"""Signal channels: the parts joined to a net through signal pins, as one netlist for whole-chain analyses.

Noise, DC error and ADC drive follow a signal through every stage to the net that is judged, so they solve the
whole chain at once rather than stage by stage. A channel is the set of parts whose signal pins (every pin but
an op-amp's supply pins) share nets that are not held at a fixed voltage (ground, rails, references); a
multi-channel design falls apart into one small channel per sensor, so cost grows with the design.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass
from typing import Any, TypeVar

from afecheck.analysis.netlist import Netlist, NetlistOptions, netlist_from_design
from afecheck.model.loaded import LoadedDesign
from afecheck.sensors.measurand import value_key

SUPPLY_PINS = ("v+", "v-")


@dataclass(frozen=True)
class Channel:
    """The parts of one channel (in file order), the nets they join, and the declared signals among them."""

    refs: tuple[str, ...]
    nets: frozenset[str]
    signal_branches: tuple[tuple[str, str], ...]
    """(signal name, netlist source element) for each declared signal or signal source driving the channel."""


def find_channels(loaded: LoadedDesign) -> Mapping[str, Channel]:
    """Every non-fixed net mapped to its channel (union-find over the signal pins of every part); found once per
    loaded design and kept with it (designs are immutable)."""
    cache = loaded.__dict__.setdefault("_channels", {})
    if "all" not in cache:
        cache["all"] = _find_channels(loaded)
    return cache["all"]


def _find_channels(loaded: LoadedDesign) -> Mapping[str, Channel]:
    fixed = loaded.fixed_nets
    parent: dict[str, str] = {}

    def find(x: str) -> str:
        parent.setdefault(x, x)
        while parent[x] != x:
            parent[x] = parent[parent[x]]
            x = parent[x]
        return x

    d = loaded.design
    free: dict[str, list[str]] = {}
    for ref, comp in d.components.items():
        nets = [n for p, n in comp.pins.items()
                if n not in fixed and not (comp.kind == "opamp" and p in SUPPLY_PINS)]
        free[ref] = nets
        if nets:
            root = find(nets[0])
            for n in nets[1:]:
                other = find(n)
                if other != root:
                    parent[other] = root
    for net in list(d.signals) + list(d.loads):
        if net not in fixed:
            find(net)
    refs: dict[str, list[str]] = {}
    for ref, nets in free.items():
        if nets:
            refs.setdefault(find(nets[0]), []).append(ref)
    members: dict[str, set[str]] = {}
    for net in parent:
        members.setdefault(find(net), set()).add(net)
    channels: dict[str, Channel] = {}
    for root, nets in members.items():
        chosen = refs.get(root, [])
        branches = [(n, f"{n}#signal") for n in sorted(nets) if n in d.signals]
        branches += [(r, r) for r in chosen if d.components[r].kind == "signal_source"]
        channel = Channel(tuple(chosen), frozenset(nets), tuple(branches))
        for net in nets:
            channels[net] = channel
    return channels


def channel_netlist(loaded: LoadedDesign, channel: Channel, include_offsets: bool = False) -> Netlist:
    """The channel's parts as one netlist, with the rails, signals and loads on its nets (signals at mid-range)."""
    return netlist_from_design(loaded, channel.refs, NetlistOptions(include_offsets=include_offsets))


def channel_key(loaded: LoadedDesign, channel: Channel, *nets: str) -> tuple:
    """The channel with its names replaced by first-seen numbers (fixed nets keep their names): equal keys mean
    the same circuit with the same values, so small-signal results computed for one serve every repeat of it."""
    d = loaded.design
    fixed = loaded.fixed_nets
    numbers: dict[str, int] = {}

    def num(net: str) -> int | str:
        return net if net in fixed else numbers.setdefault(net, len(numbers))

    key: list[object] = [tuple(num(n) for n in nets)]
    for ref in channel.refs:
        comp = d.components[ref]
        declared = loaded.sensors.get(ref, comp)  # a thermocouple as declared: its compensation is a value too
        key.append((comp.kind, value_key(declared), tuple((p, num(n)) for p, n in comp.pins.items())))
    for net in channel.nets:
        if net in d.signals or net in d.loads:
            key.append((num(net), d.signals.get(net), d.loads.get(net)))
    return tuple(key)


T = TypeVar("T")


def per_channel(loaded: LoadedDesign, nets: Iterable[str],
                solve: Callable[[LoadedDesign, Any, list[str]], Mapping[str, T]],
                errors: tuple[type[BaseException], ...]) -> tuple[dict[str, T], dict[str, str]]:
    """Solve ``nets`` channel by channel (one ``solve`` per channel with the nets it holds): the results, and the
    reason for each net that could not be evaluated (fixed nets, or ``errors`` raised by its channel's solve)."""
    from afecheck.errors import InputError

    channels = find_channels(loaded)
    groups: dict[int, tuple[Any, list[str]]] = {}
    missing: dict[str, str] = {}
    for net in dict.fromkeys(nets):
        ch = channels.get(net)
        if ch is None:
            missing[net] = "the net is held at a fixed voltage or joins no part"
            continue
        groups.setdefault(id(ch), (ch, []))[1].append(net)
    found: dict[str, T] = {}
    for ch, members in groups.values():
        try:
            found.update(solve(loaded, ch, members))
        except errors as exc:
            reason = exc.problems[0].message if isinstance(exc, InputError) else str(exc)
            missing.update({n: reason for n in members})
    return dict(sorted(found.items())), dict(sorted(missing.items()))
