"""Share whole solve-unit results between units that are the same circuit up to names (channel after channel).

A unit's result depends on its stages, every part on its nets (kind, values, pins in file order), what each net
is (rail, signal, load, its DC path, the op-amp inputs on it), the upstream results and net forms it is fed
from, and the coupled loop circuit's signature. :func:`unit_key` writes all of that with every name replaced by
its rank among the names the unit sees (so equal keys also mean the same relative order of names, which decides
every sorted walk of the solve), before any netlist is built. A unit whose key was solved before takes that
result with the earlier unit's names replaced by its own, rank for rank (:func:`renamed`); nothing is
recomputed, so every number is the same object. Results that carry notes, or a name outside the ranked set,
are never kept.
"""

from __future__ import annotations

import hashlib
import weakref
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from afecheck.analysis.affine import SweptForm
from afecheck.analysis.results import NetSignal, StageInput, StageResult
from afecheck.graph.build import Circuit
from afecheck.graph.stages import Stage

MAX_PARTS = 64
"""Most parts a unit's nets may carry for its result to be shared (a net shared by many parts is keyed by none)."""
MAX_KEPT = 400
"""Most unit results kept per design (a design of all-different units gains nothing and must not hold them all)."""
_KEPT = "#unit-memo-kept"
_FORMS = "#unit-forms"
_VSOURCE = frozenset({"vsource"})
_PROSE = frozenset({"pins", "description", "waive"})
_FLAT = frozenset({str, int, bool, type(None)})
_LOW = "#"  # derived element and node names append '#...': a name holding a character at or below it is not keyed


@dataclass(frozen=True)
class UnitKey:
    """The unit's circuit up to names, and its names in rank order (the renaming table against another unit)."""

    key: tuple
    names: tuple[str, ...]


def _value(comp: Any) -> Any:
    """Every declared value of a component but its pins and prose: the values themselves when they hash and hold
    no zero (0.0 equals -0.0), else their exact text."""
    v = tuple((k, x) for k, x in comp.__dict__.items() if k not in _PROSE)
    plain = all(type(x) in _FLAT or (type(x) is float and x != 0) for _, x in v)
    return v if plain else repr(v)


def _form_parts(cache: dict, f: SweptForm) -> tuple:
    """A form's quantity kinds, the names its quantities and sweeps are about, and a digest of its numbers (kept
    while the form lives: a 128-bit BLAKE2 digest stands for the arrays, so the memo holds no copy of them)."""
    memo = cache.get(_FORMS)
    if memo is None:
        memo = cache[_FORMS] = weakref.WeakKeyDictionary()
    kept = memo.get(f)
    if kept is None:
        digest = hashlib.blake2b(digest_size=16)
        for a in (f.lo, f.hi, f.nominal, f.gains):
            digest.update(repr(a.shape).encode())
            digest.update(np.ascontiguousarray(a, dtype=float).tobytes())
        heads = tuple(k.partition(":")[0] if ":" in k else None for k in f.keys)
        kept = memo[f] = (heads, tuple(_named(k) for k in f.keys), f.swept, (f.step, digest.digest()))
    return kept


def _named(key: str) -> str:
    """The name a quantity key is about (``vos:U1`` -> ``U1``)."""
    return key.split(":", 1)[-1]


def _rekeyed(key: str, names: Mapping[str, str]) -> str:
    """A quantity key about the name ``names`` maps its own name to."""
    head, sep, tail = key.rpartition(":") if ":" not in key else key.partition(":")
    return f"{head}{sep}{names[tail]}"


def unit_key(circuit: Circuit, stages: list[Stage], done: Mapping[str, StageResult], forms: Mapping[str, SweptForm],
             corners: Any, input_loads: Mapping[str, tuple], loop_signature: tuple | None, cache: dict
             ) -> UnitKey | None:
    """The key of a unit (None when it is not to be shared: too many parts on its nets, an awkward name, or the
    memo already full, as in a design of all-different units, where keys would only cost)."""
    if cache.get(_KEPT, 0) >= MAX_KEPT:
        return None
    d = circuit.loaded.design
    fixed = circuit.fixed
    nets: set[str] = set()
    for s in stages:
        nets |= s.nets
    parts: dict[str, None] = {}
    for s in stages:
        parts[s.opamp] = None
        parts.update(dict.fromkeys(s.refs))
    on_net = cache.setdefault("#unit-on", {})
    for net in nets:
        on = on_net.get(net)
        if on is None:
            on = (circuit.pins_of_kinds(net, _VSOURCE) if net in fixed else tuple(circuit.net_pins.get(net, ())))
            on_net[net] = on = (on, len({r for r, _ in on}))
        if on[1] > MAX_PARTS:  # a crowded net: the unit's parts are more than MAX_PARTS whatever else it holds
            return None
        parts.update((r, None) for r, _ in on[0])
    if len(parts) > MAX_PARTS:
        return None
    statics = cache.setdefault("#unit-parts", {})
    far: set[str] = set()
    for r in parts:
        static = statics.get(r)
        if static is None:
            comp = d.components[r]
            statics[r] = static = (comp.kind, tuple(circuit.pins[r].items()), _value(comp), corners.key(r))
        far.update(n for _, n in static[1])
    far -= nets
    names: set[str] = set(nets) | far | set(parts)
    net_forms = {n: forms.get(n) for n in sorted(nets)}
    fixed_forms = {n: corners.fixed_form(n) for n in sorted(nets | far) if n in fixed}
    for f in (*net_forms.values(), *fixed_forms.values()):
        if f is not None:
            _, named, swept, _ = _form_parts(cache, f)
            names.update(named)
            names.update(swept)
    for net in nets:
        owner = circuit.opamp_outputs.get(net)
        if owner is not None:
            names.add(owner)
        ref = circuit.signal_nets.get(net)
        if ref is not None:
            names.add(ref)
    ranked = tuple(sorted(names))
    if any(min(n, default=_LOW) <= _LOW for n in ranked):
        return None
    rank = {n: i for i, n in enumerate(ranked)}

    def num(name: str | None) -> Any:
        return None if name is None else rank.get(name, name)

    def nums(items: Any) -> frozenset:
        return frozenset(rank.get(n, n) for n in items)

    def form_key(f: SweptForm | None) -> Any:
        if f is None:
            return None
        heads, named, swept, numbers = _form_parts(cache, f)
        return heads, tuple(map(rank.__getitem__, named)), tuple(map(rank.__getitem__, swept)), numbers

    key: list[Any] = [len(ranked), loop_signature]
    for s in stages:
        key.append((num(s.opamp), s.topology, num(s.in_plus), num(s.in_minus), num(s.out), num(s.supply_plus),
                    num(s.supply_minus), nums(s.feedback), nums(s.upstream), nums(s.group),
                    *((nums(r.nets), nums(r.refs), nums(r.boundary), r.truncated)
                      for r in (s.plus_region, s.minus_region, s.output_region))))
    for r in sorted(parts, key=rank.__getitem__):
        kind, pins, value, swept = statics[r]
        key.append((rank[r], kind, tuple((p, rank[n]) for p, n in pins), value, num(swept)))
    statics = cache.setdefault("#unit-nets", {})
    for net in sorted(nets | far, key=rank.__getitem__):
        static = statics.get(net)
        if static is None:
            statics[net] = static = _net_facts(circuit, net)
        facts: tuple = (rank[net], static, num(circuit.signal_nets.get(net)), num(circuit.opamp_outputs.get(net)),
                        form_key(fixed_forms.get(net)))
        if net in nets:
            owner = circuit.opamp_outputs.get(net)
            up = done.get(owner) if owner is not None else None
            facts += (tuple((rank[r], p) for r, p in on_net[net][0]),
                      corners.dc_path(net), input_loads.get(net),
                      form_key(net_forms[net]),
                      None if up is None else (up.vout_min, up.vout_max, up.output_resistance, up.vout_ac_peak,
                                               up.f_max))
        key.append(facts)
    return UnitKey(tuple(key), ranked)


def _net_facts(circuit: Circuit, net: str) -> tuple:
    """What a net is, apart from names: ground, fixed and at what voltage, its rail, signal and load declarations."""
    d = circuit.loaded.design
    sig, load, rail = d.signals.get(net), d.loads.get(net), d.rails.get(net)
    return (net == circuit.ground, net in circuit.fixed, circuit.fixed.get(net),
            None if rail is None else repr(rail.model_dump()), None if sig is None else repr(sig.model_dump()),
            None if load is None else repr(load.model_dump()), net in circuit.norton_nets)


def remembered(cache: dict, kind: str, key: UnitKey) -> tuple[Any, Renamer] | None:
    """A result kept for ``key`` and the renaming from its unit's names to this unit's (None when none is kept)."""
    kept = cache.get((kind, key.key))
    if kept is None:
        return None
    result, names = kept
    return result, Renamer(dict(zip(names, key.names, strict=True)))


def keep(cache: dict, kind: str, key: UnitKey, result: Any, names: list[str], forms: list[SweptForm]) -> None:
    """Keep ``result`` under ``key`` if every name in it (``names``, and those in its ``forms``) is one the key
    ranked; its forms' arrays become read-only, since every later unit of the key shares them."""
    count = cache.get(_KEPT, 0)
    if count >= MAX_KEPT or (kind, key.key) in cache:
        return
    for f in forms:
        names += [_named(k) for k in f.keys]
        names += f.swept
    known = set(key.names)
    if not all(n in known for n in names):
        return
    for f in forms:
        for a in (f.lo, f.hi, f.nominal, f.gains):
            a.flags.writeable = False
    cache[(kind, key.key)] = (result, key.names)
    cache[_KEPT] = count + 1


def unit_names(result: Any) -> list[str] | None:
    """Every name a UnitResult holds outside its forms (None when it carries notes: those are never shared)."""
    names: list[str] = []
    for s in result.stages:
        if s.not_evaluated:
            return None
        names += [s.opamp, s.in_plus, s.in_minus, s.out, *s.refs, *s.group]
        for i in s.inputs:
            names += [i.net, i.source.net, *i.source.refs, *i.via]
    names += [n.net for n in result.nets]
    return names + [*result.forms, *result.output_currents]


def _with(obj: Any, **changes: Any) -> Any:
    """A copy of a frozen dataclass with ``changes`` (every other field the same object)."""
    new = object.__new__(type(obj))
    new.__dict__.update(obj.__dict__)
    new.__dict__.update(changes)
    return new


class Renamer:
    """Names of one unit to the names of another with the same key (quantity keys and their tuples cached)."""

    def __init__(self, names: dict[str, str]) -> None:
        self.names = names
        self._keys: dict[tuple[str, ...], tuple[str, ...]] = {}

    def tup(self, items: tuple[str, ...]) -> tuple[str, ...]:
        """Each name of ``items`` renamed."""
        names = self.names
        return tuple(names[n] for n in items)

    def form(self, f: SweptForm) -> SweptForm:
        """The form over the renamed quantities (the same arrays)."""
        keys = self._keys.get(f.keys)
        if keys is None:
            self._keys[f.keys] = keys = tuple(_rekeyed(k, self.names) for k in f.keys)
        return SweptForm(keys, f.lo, f.hi, self.tup(f.swept), f.step, f.nominal, f.gains)

    def unit(self, result: Any) -> Any:
        """A UnitResult with every name replaced."""
        names, tup = self.names, self.tup

        def stage_input(i: StageInput) -> StageInput:
            src = _with(i.source, net=names[i.source.net], refs=tup(i.source.refs))
            return _with(i, net=names[i.net], source=src, via=tup(i.via))

        stages = tuple(_with(s, opamp=names[s.opamp], in_plus=names[s.in_plus], in_minus=names[s.in_minus],
                             out=names[s.out], refs=tup(s.refs), group=tup(s.group),
                             inputs=tuple(stage_input(i) for i in s.inputs)) for s in result.stages)
        nets = tuple(NetSignal(names[n.net], n.dc_min, n.dc_max, n.ac_amplitude, n.f_max) for n in result.nets)
        return _with(result, stages=stages, nets=nets,
                     forms={names[n]: self.form(f) for n, f in result.forms.items()},
                     output_currents={names[r]: self.form(f) for r, f in result.output_currents.items()})
