"""Read a SPICE netlist into the same plain design data a YAML design file gives, with netlist positions.

Berkeley SPICE 3 syntax as ngspice accepts it (cards from :mod:`afecheck.model.spice_cards`): R and C
elements, independent V sources, ``.subckt`` definitions flattened under hierarchical names (``X1.R3``,
net ``X1.mid``), X instances, ``.param`` with numbers and ``{...}`` expressions (:mod:`afecheck.model.expr`),
``.global``. An X instance whose subcircuit is an op-amp becomes an ``opamp`` component through the map
(:mod:`afecheck.model.netlist_map`). V sources: from a net to ground with a DC value only, a rail named by
its net; with an AC or SIN part (or on a net the intent declares a signal on), a signal whose netlist
values are defaults the intent may refine; between two other nets, a ``vsource`` (DC) or ``signal_source``.
Anything else is an error at its file:line, never a guess. The result is a
:class:`~afecheck.model.reader.Document`, so validation, intent merge and everything after loading are
the ones a YAML design goes through.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from afecheck.errors import InputError, Problem
from afecheck.model.input_kind import SPICE_SUFFIXES, is_netlist  # noqa: F401 (both were defined here)
from afecheck.model.netlist_map import OpAmpMap, Refinement, infer_pins, read_map, skeleton
from afecheck.model.reader import Document, PathKey
from afecheck.model.spice_cards import Card, Token, read_netlist_cards, token
from afecheck.model.spice_values import CardError, NetlistStop, Params, number, source_spec, split_params

"""File name endings read as SPICE netlists (any other name with ``--input-format spice``)."""
GROUND = "0"
MAX_ELEMENTS = 100_000
"""Most elements after flattening subcircuits (stops instance trees that multiply without end)."""
MAX_SUBCIRCUIT_DEPTH = 50
MAX_PROBLEMS = 50

_READABLE = frozenset("rclvix")
_ELEMENT_NAMES = {"d": "diode", "q": "bipolar transistor", "m": "MOSFET", "j": "JFET", "e": "voltage-controlled "
                  "voltage source", "f": "current-controlled current source", "g": "voltage-controlled current "
                  "source", "h": "current-controlled voltage source", "b": "behavioural source", "k": "coupled "
                  "inductor", "t": "transmission line", "s": "switch", "w": "switch", "u": "RC line", "o": "lossy "
                  "line", "a": "XSPICE model", "z": "MESFET", "y": "transmission line", "p": "coupled line",
                  "n": "device model"}
_IGNORED_PARAMS = {"tc", "tc1", "tc2", "temp", "dtemp", "noisy", "ic", "scale", "nt"}
_PASSIVE_KINDS = {"r": "resistor", "c": "capacitor", "l": "inductor"}
_VALUE_NAMES = {"resistor": ("r", "resistance"), "capacitor": ("c", "capacitance"), "inductor": ("l", "inductance")}
_MILLI_TRAP = re.compile(r"^[0-9.]+M(?:ohm|Ω)?$")


@dataclass
class _Subckt:
    name: str
    ports: tuple[Token, ...]
    params: list[tuple[Token, Token]]
    card: Card
    body: list[Card] = field(default_factory=list)
    local: dict[str, _Subckt] = field(default_factory=dict)
    parent: _Subckt | None = None
    size: int | None = None
    """Elements one instance adds once flattened (counted before flattening, to stop trees that multiply)."""

    @property
    def readable(self) -> bool:
        """True when every element of the body is one afecheck reads (R, C, L, V, X): a block to flatten."""
        return all(c.key[0] in _READABLE for c in self.body if not c.key.startswith("."))

    def find(self, name: str, top: dict[str, _Subckt]) -> _Subckt | None:
        """The definition ``name`` as seen from inside this one: its own, its parents', then the top level."""
        owner: _Subckt | None = self
        while owner is not None:
            if name.lower() in owner.local:
                return owner.local[name.lower()]
            owner = owner.parent
        return top.get(name.lower())


@dataclass(frozen=True)
class _Source:
    """An independent source card read: its tokens, DC value, AC magnitude, SIN (offset, amplitude, frequency)."""

    toks: list[Token]
    dc: float
    ac: float
    sine: tuple[float, float, float] | None
    pos: str
    neg: str


@dataclass
class _Instance:
    """Where flattening stands: name prefix, port -> outer net, parameter scope, definitions in reach, depth."""

    prefix: str
    ports: dict[str, str]
    params: Params
    owner: _Subckt | None
    stack: tuple[str, ...]


class NetlistReader:
    """Cards -> plain design data with the position (file, line, column) of every key."""

    def __init__(self, display: str, omap: OpAmpMap, part_names: Mapping[str, str]):
        self.file = display
        self.map = omap
        self.part_names = part_names
        self.subckts: dict[str, _Subckt] = {}
        self.globals: set[str] = {"0", "gnd"}
        self.params = Params(None, "top level")
        self.nets: dict[str, str] = {}
        self.components: dict[str, dict[str, Any]] = {}
        self.rails: dict[str, dict[str, Any]] = {}
        self.signals: dict[str, dict[str, Any]] = {}
        self.keys: dict[PathKey, tuple[int, int]] = {}
        self.values: dict[PathKey, tuple[int, int]] = {}
        self.origins: dict[PathKey, str] = {}
        self.refs: dict[str, Card] = {}
        self.problems: list[Problem] = []
        self.notes: list[str] = []
        self.unmapped: dict[str, tuple[tuple[str, ...] | None, list[str]]] = {}
        self.count = 0
        self.all_names: frozenset[str] = frozenset()
        self.absorbed: dict[str, str] = {}
        """V source name -> the rail or signal it became."""
        self.aliases: dict[str, str] = {}
        """Op-amp instance name as written (``XU1``) -> its refdes (``U1``)."""

    # ---- positions -------------------------------------------------------------------------------------
    def at(self, path: PathKey, token: Token, key: bool = True) -> None:
        (self.keys if key else self.values)[path] = (token.line, token.column)
        if token.file != self.file:
            self.origins[path] = token.file

    def problem(self, token: Token, message: str) -> None:
        self.problems.append(Problem(token.file, token.line, token.column, "", message))
        if len(self.problems) >= MAX_PROBLEMS:
            raise NetlistStop(Problem(token.file, token.line, None, "", f"more than {MAX_PROBLEMS} problems; stopping"))

    def note(self, text: str) -> None:
        if text not in self.notes:
            self.notes.append(text)

    # ---- definitions -----------------------------------------------------------------------------------
    def collect(self, cards: tuple[Card, ...]) -> list[Card]:
        """Top-level cards with ``.subckt`` bodies taken out into definitions (nested ones kept local)."""
        top: list[Card] = []
        open_defs: list[_Subckt] = []
        for card in cards:
            key = card.key
            if key == ".subckt":
                d = self.definition(card, open_defs[-1] if open_defs else None)
                if d is not None:
                    table = open_defs[-1].local if open_defs else self.subckts
                    if d.name.lower() in table:
                        first = table[d.name.lower()].card
                        self.problem(card.tokens[1], f"subcircuit {d.name!r} is defined twice (first at "
                                                     f"{first.file}:{first.line})")
                    table[d.name.lower()] = d
                    open_defs.append(d)
                else:
                    open_defs.append(_Subckt("?", (), [], card))
                continue
            if key == ".ends":
                if not open_defs:
                    self.problem(card.tokens[0], ".ends with no .subckt before it")
                else:
                    open_defs.pop()
                continue
            (open_defs[-1].body if open_defs else top).append(card)
        if open_defs:
            d = open_defs[-1]
            raise NetlistStop(d.card.problem(f".subckt {d.name} has no .ends: the definition runs to the end"))
        return top

    def definition(self, card: Card, parent: _Subckt | None) -> _Subckt | None:
        toks = card.tokens
        if len(toks) < 2:
            self.problem(toks[0], ".subckt needs a name and its ports: .subckt NAME PORT...")
            return None
        ports, params = split_params(toks[2:])
        if params is None:
            self.problem(toks[0], "cannot read the parameters of this .subckt (expected NAME=VALUE pairs)")
            return None
        return _Subckt(toks[1].text, tuple(ports), params, card, parent=parent)

    def dot_card(self, card: Card, scope: _Instance) -> None:
        key, toks = card.key, card.tokens
        if key == ".param":
            _, pairs = split_params(toks[1:], params_only=True)
            if pairs is None or not pairs:
                self.problem(toks[0], "cannot read this .param (expected NAME=VALUE ...)")
                return
            for name, value in pairs:
                scope.params.define(name, value)
        elif key == ".global":
            self.globals |= {t.low for t in toks[1:]}
        elif key == ".model":
            self.note(f"{card.file}:{card.line}: .model {toks[1].text if len(toks) > 1 else ''} is read and ignored "
                      "(device models belong to elements afecheck does not read)")
        elif key == ".func":
            self.problem(toks[0], ".func (user functions) is not supported; write the expression out in {...}")
        else:
            self.problem(toks[0], f"unknown or unsupported command {toks[0].text!r}; afecheck reads R, C, L, V, I, X, "
                                  ".subckt/.ends, .param, .global, .include, .lib and ignores analysis commands")

    # ---- nets and names --------------------------------------------------------------------------------
    def net(self, token: Token, scope: _Instance) -> str:
        low = token.low
        if low in ("0", "gnd"):
            return GROUND
        if low in scope.ports:
            return scope.ports[low]
        if low in self.globals or not scope.prefix:
            key, spelled = low, token.text
        else:
            key, spelled = f"{scope.prefix.lower()}.{low}", f"{scope.prefix}.{token.text}"
        if key not in self.nets:
            self.nets[key] = self.map.signal_nets.get(key, spelled)
        return self.nets[key]

    def refdes(self, token: Token, scope: _Instance, card: Card, strip_x: bool = False) -> str | None:
        name = token.text
        if strip_x and len(name) > 1 and name[1].isalpha() and not self._taken(scope, name[1:]):
            name = name[1:]
        ref = f"{scope.prefix}.{name}" if scope.prefix else name
        if ref.lower() in self.refs:
            first = self.refs[ref.lower()]
            self.problem(token, f"element name {ref!r} is used twice (first at {first.file}:{first.line}); SPICE "
                                "names are not case-sensitive")
            return None
        self.refs[ref.lower()] = card
        self.count += 1
        if self.count > MAX_ELEMENTS:
            raise NetlistStop(card.problem(f"more than {MAX_ELEMENTS} elements after flattening subcircuits"))
        return ref

    def _taken(self, scope: _Instance, name: str) -> bool:
        ref = f"{scope.prefix}.{name}" if scope.prefix else name
        return ref.lower() in self.refs or name.lower() in self.all_names

    # ---- elements --------------------------------------------------------------------------------------
    def expand(self, cards: list[Card], scope: _Instance) -> None:
        for card in cards:
            if card.key == ".param":
                self.dot_card(card, scope)
        for name in list(scope.params.exprs):
            try:
                scope.params.value(name)
            except CardError as bad:
                self.problems.append(bad.problem)
        for card in cards:
            key = card.key
            try:
                if key.startswith("."):
                    if key != ".param":
                        self.dot_card(card, scope)
                    continue
                letter = key[0]
                if letter in "rcl":
                    self.passive(card, scope)
                elif letter == "v":
                    self.vsource(card, scope)
                elif letter == "i":
                    self.isource(card, scope)
                elif letter == "x":
                    self.instance(card, scope)
                else:
                    what = _ELEMENT_NAMES.get(letter, "element")
                    self.problem(card.tokens[0], f"{card.tokens[0].text}: a {what} is not something afecheck "
                                 "reads; op-amp internals belong in a .subckt mapped to a part model (--map)")
            except CardError as bad:
                self.problems.append(bad.problem)

    def passive(self, card: Card, scope: _Instance) -> None:
        toks = card.tokens
        kind = _PASSIVE_KINDS[card.key[0]]
        args, pairs = split_params(list(toks[1:]))
        if pairs is None or len(args) < 2:
            self.problem(toks[0], f"{toks[0].text}: expected NAME NODE NODE VALUE")
            return
        value_tok: Token | None = args[2] if len(args) > 2 else None
        if len(args) > 3:
            self.problem(args[3], f"{toks[0].text}: unexpected {args[3].text!r} after the value (a model name? "
                                  "semiconductor resistors and capacitors are not read)")
            return
        multiplier = 1.0
        for name, value in pairs:
            if name.low in _VALUE_NAMES[kind] and value_tok is None:
                value_tok = value
            elif name.low == "m":
                multiplier = number(value, scope.params)
            elif name.low in _IGNORED_PARAMS:
                self.note(f"{name.file}:{name.line}: {name.text}= is read and ignored")
            else:
                self.problem(name, f"{toks[0].text}: unknown parameter {name.text!r}")
                return
        if value_tok is None:
            self.problem(toks[0], f"{toks[0].text}: no value")
            return
        value = number(value_tok, scope.params)
        if not multiplier > 0:
            self.problem(toks[0], f"{toks[0].text}: m= must be positive")
            return
        value = value * multiplier if kind == "capacitor" else value / multiplier  # m= parts in parallel
        if kind == "resistor" and _MILLI_TRAP.match(value_tok.text):
            self.note(f"{value_tok.file}:{value_tok.line}: {toks[0].text} = {value_tok.text} is {value:g} Ω: in "
                      "SPICE 'M' means milli; mega is 'Meg'")
        a, b = self.net(args[0], scope), self.net(args[1], scope)
        ref = self.refdes(toks[0], scope, card)
        if ref is None:
            return
        path = ("components", ref)
        self.components[ref] = {"kind": kind, "value": value, "pins": {"1": a, "2": b}}
        self.at(path, toks[0])
        self.at(path + ("kind",), toks[0])
        self.at(path + ("value",), value_tok, key=False)
        self.at(path + ("pins", "1"), args[0])
        self.at(path + ("pins", "2"), args[1])

    def source(self, card: Card, scope: _Instance) -> _Source | None:
        """An independent source card's values and nets (None, with the problem noted, when it has no nodes)."""
        toks = list(card.tokens)
        if len(toks) < 3:
            self.problem(toks[0], f"{toks[0].text}: expected NAME NODE+ NODE- [DC value] [AC mag] [SIN(...)]")
            return None
        dc, ac, sine, notes = source_spec(toks, scope.params)
        for text in notes:
            self.note(text)
        return _Source(toks, dc, ac, sine, self.net(toks[1], scope), self.net(toks[2], scope))

    def vsource(self, card: Card, scope: _Instance) -> None:
        src = self.source(card, scope)
        if src is None:
            return
        toks, dc, ac, sine, pos, neg = src.toks, src.dc, src.ac, src.sine, src.pos, src.neg
        name = toks[0]
        refine = self.map.components.get(self._full(scope, name.text).lower())
        keep = refine is not None and refine[1].fields.get("kind") in ("vsource", "signal_source")
        if pos == neg:
            self.problem(name, f"{name.text}: both nodes are {pos!r}: the source is shorted")
            return
        to_ground = GROUND in (pos, neg) and not keep
        net, sign = (pos, 1.0) if neg == GROUND else (neg, -1.0)
        signal = ac > 0 or sine is not None or (to_ground and net.lower() in self.map.declared_signals)
        if to_ground and not signal:
            if net in self.rails:
                self.problem(name, f"{name.text} holds net {net!r}, which another source already holds")
                return
            self.refs[self._full(scope, name.text).lower()] = card
            self.absorbed[self._full(scope, name.text).lower()] = f"rail {net!r}"
            self.rails[net] = {"voltage": sign * dc}
            self.at(("rails", net), name)
            self.at(("rails", net, "voltage"), toks[3] if len(toks) > 3 else name, key=False)
            return
        amplitude = sine[1] if sine is not None else ac
        if to_ground:
            if net in self.signals:
                self.problem(name, f"{name.text} drives net {net!r}, which another source already drives")
                return
            self.refs[self._full(scope, name.text).lower()] = card
            self.absorbed[self._full(scope, name.text).lower()] = f"signal on net {net!r}"
            entry: dict[str, Any] = {"dc": [sign * dc, sign * dc], "ac_amplitude": amplitude}
            if sine is not None and sine[2] > 0:
                entry["band"] = [sine[2], sine[2]]
            self.signals[net] = entry
            self.at(("signals", net), name)
            return
        ref = self.refdes(name, scope, card)
        if ref is None:
            return
        path = ("components", ref)
        if signal or (keep and refine[1].fields.get("kind") == "signal_source"):  # type: ignore[index]
            entry = {"kind": "signal_source", "dc": [dc, dc], "ac_amplitude": amplitude, "pins": {"p": pos, "n": neg}}
            if sine is not None and sine[2] > 0:
                entry["band"] = [sine[2], sine[2]]
        else:
            entry = {"kind": "vsource", "value": dc, "pins": {"p": pos, "n": neg}}
        self.components[ref] = entry
        self.at(path, name)
        self.at(path + ("pins", "p"), toks[1])
        self.at(path + ("pins", "n"), toks[2])

    def isource(self, card: Card, scope: _Instance) -> None:
        """A current source with one node on ground: a ``current`` signal on the other net (DC value as its
        range, AC magnitude or SIN amplitude as ``ac_current``, SIN frequency as its band); DC only, it is a bias
        current (a current signal with no AC part). SPICE's current flows from n+ through the source to n-."""
        src = self.source(card, scope)
        if src is None:
            return
        dc, ac, sine, pos, neg = src.dc, src.ac, src.sine, src.pos, src.neg
        name = src.toks[0]
        if pos == neg:
            self.problem(name, f"{name.text}: both nodes are {pos!r}: the source is shorted")
            return
        if GROUND not in (pos, neg):
            self.problem(name, f"{name.text}: a current source between {pos!r} and {neg!r}: afecheck reads current "
                               "sources from or to ground only (a current signal into a net)")
            return
        net, sign = (neg, 1.0) if pos == GROUND else (pos, -1.0)
        if net in self.signals:
            self.problem(name, f"{name.text} drives net {net!r}, which another source already drives")
            return
        self.refs[self._full(scope, name.text).lower()] = card
        self.absorbed[self._full(scope, name.text).lower()] = f"current signal on net {net!r}"
        entry: dict[str, Any] = {"kind": "current", "current": [sign * dc, sign * dc],
                                 "ac_current": sine[1] if sine is not None else ac}
        if sine is not None and sine[2] > 0:
            entry["band"] = [sine[2], sine[2]]
        self.signals[net] = entry
        self.at(("signals", net), name)

    def _full(self, scope: _Instance, name: str) -> str:
        return f"{scope.prefix}.{name}" if scope.prefix else name

    def find_subckt(self, name: str, scope: _Instance) -> _Subckt | None:
        return scope.owner.find(name, self.subckts) if scope.owner is not None else self.subckts.get(name.lower())

    def size(self, d: _Subckt, visiting: frozenset[str] = frozenset()) -> int:
        """Elements an instance of ``d`` adds when flattened (a recursive definition counts once; it is refused
        when expanded)."""
        if d.size is not None:
            return d.size
        total = 0
        for card in d.body:
            if card.key.startswith("."):
                continue
            total += 1
            if card.key[0] == "x":
                args, _ = split_params(list(card.tokens[1:]))
                inner = d.find(args[-1].text, self.subckts) if args else None
                if inner is not None and inner.readable and inner.name.lower() not in visiting:
                    total += self.size(inner, visiting | {d.name.lower()})
            if total > MAX_ELEMENTS:
                break
        d.size = total
        return total

    def instance(self, card: Card, scope: _Instance) -> None:
        toks = card.tokens
        args, pairs = split_params(list(toks[1:]))
        if pairs is None or len(args) < 2:
            self.problem(toks[0], f"{toks[0].text}: expected NAME NODE... SUBCIRCUIT [PARAM=VALUE ...]")
            return
        sub_tok, node_toks = args[-1], args[:-1]
        definition = self.find_subckt(sub_tok.text, scope)
        ports = tuple(t.text for t in definition.ports) if definition is not None else None
        entry = self.map.find(sub_tok.text)
        part, pins, part_at = None, None, None
        if entry is not None:
            part = entry.entry.part
            pins = entry.entry.pins or (infer_pins(ports) if ports else None)
            part_at = entry
            if pins is None:
                self.problem(sub_tok, f"{toks[0].text}: subcircuit {sub_tok.text!r} is mapped to {part!r} but its "
                             "pin order is unknown: give pins: [...] in the map (one afecheck pin per port)")
                return
        elif sub_tok.low in self.part_names:
            part = self.part_names[sub_tok.low]
            pins = infer_pins(ports) if ports else None
            if pins is None:
                why = "its port names do not say which pin is which" if ports else "no .subckt gives its ports"
                self.problem(sub_tok, f"{toks[0].text}: subcircuit {sub_tok.text!r} is named like part model "
                             f"{part!r} but {why}; map it with pins: [...] (one afecheck pin per port)")
                return
        elif definition is not None and definition.readable:
            self.flatten(card, definition, node_toks, pairs, scope)
            return
        else:
            users = self.unmapped.setdefault(sub_tok.text, (ports, []))[1]
            users.append(f"{self._full(scope, toks[0].text)} ({card.file}:{card.line})")
            return
        if len(node_toks) != len(pins):
            self.problem(toks[0], f"{toks[0].text}: {len(node_toks)} nodes given, but subcircuit {sub_tok.text!r} "
                                  f"has {len(pins)} ports")
            return
        ref = self.refdes(toks[0], scope, card, strip_x=True)
        if ref is None:
            return
        self.aliases[self._full(scope, toks[0].text).lower()] = ref
        path = ("components", ref)
        connected = {pin: (self.net(t, scope), t) for pin, t in zip(pins, node_toks, strict=True) if pin is not None}
        self.components[ref] = {"kind": "opamp", "part": part, "pins": {p: n for p, (n, _) in connected.items()}}
        self.at(path, toks[0])
        for pin, (_, t) in connected.items():
            self.at(path + ("pins", pin), t)
        if part_at is not None and part_at.line is not None:
            self.keys[path + ("part",)] = (part_at.line, part_at.column or 1)
            if part_at.file != self.file:
                self.origins[path + ("part",)] = part_at.file
        else:
            self.at(path + ("part",), sub_tok, key=False)

    def flatten(self, card: Card, d: _Subckt, node_toks: list[Token], pairs: list[tuple[Token, Token]],
                scope: _Instance) -> None:
        name = card.tokens[0]
        if len(node_toks) != len(d.ports):
            self.problem(name, f"{name.text}: {len(node_toks)} nodes given, but subcircuit {d.name!r} has "
                               f"{len(d.ports)} ports ({' '.join(p.text for p in d.ports)})")
            return
        if d.name.lower() in scope.stack:
            chain = " -> ".join((*scope.stack, d.name.lower()))
            raise NetlistStop(card.problem(f"subcircuit {d.name!r} contains itself ({chain}): a recursive definition "
                                     "never ends"))
        if len(scope.stack) >= MAX_SUBCIRCUIT_DEPTH:
            raise NetlistStop(card.problem(f"subcircuits nested deeper than {MAX_SUBCIRCUIT_DEPTH} levels"))
        if self.count + self.size(d) > MAX_ELEMENTS:
            raise NetlistStop(card.problem(f"more than {MAX_ELEMENTS} elements after flattening subcircuits "
                                          f"({d.name} alone would add {self.size(d)})"))
        params = Params(scope.params if d.parent is not None else self.params, d.name)  # lexical scope
        for pname, value in d.params:
            params.define(pname, value)
        for pname, value in pairs:
            if pname.low not in params.exprs:
                self.problem(pname, f"{name.text}: subcircuit {d.name!r} has no parameter {pname.text!r}")
                continue
            params.exprs[pname.low] = (token(repr(number(value, scope.params, bare_expression=True)), value.file,
                                              value.line, value.column), params)
        ports = {}
        for port, t in zip(d.ports, node_toks, strict=True):
            ports[port.low] = self.net(t, scope)
        self.refs[self._full(scope, name.text).lower()] = card
        inner = _Instance(self._full(scope, name.text), ports, params, d, (*scope.stack, d.name.lower()))
        self.expand(d.body, inner)

    # ---- the whole netlist -----------------------------------------------------------------------------
    def refine(self) -> None:
        """Apply the map's ``components:`` and ``rails:`` refinements at their own positions."""
        by_low = {ref.lower(): ref for ref in self.components} | self.aliases
        for low, (name, r) in self.map.components.items():
            ref = by_low.get(low)
            if ref is None:
                what = (f"{name} is read as the {self.absorbed[low]}: refine it under rails: or signals:, or give "
                        "kind: vsource to keep it a component") if low in self.absorbed else (
                        f"no element {name!r} in the netlist")
                self.problems.append(_refinement_problem(r, name, what))
                continue
            comp = self.components[ref]
            fields = dict(r.fields)
            if "pins" in fields:
                self.problems.append(_refinement_problem(r, name, "pins come from the netlist; remove pins:"))
                continue
            if fields.get("kind") in ("ntc", "rtd", "bridge_arm"):
                if comp["kind"] != "resistor":
                    self.problems.append(_refinement_problem(r, name, f"{ref} is a {comp['kind']}, not a resistor"))
                    continue
                comp.pop("value")
                self.values.pop(("components", ref, "value"), None)
            elif fields.get("kind") in ("vsource", "signal_source"):
                fields.pop("kind")
            comp.update(fields)
            self._place(("components", ref), r)
        for low, (name, r) in self.map.rails.items():
            net = next((n for n in self.rails if n.lower() == low), None)
            if net is None:
                self.problems.append(_refinement_problem(r, name, f"no rail {name!r}: a rail is a V source from a "
                                                                  "net to ground with a DC value only"))
                continue
            self.rails[net].update(r.fields)
            self._place(("rails", net), r)

    def _place(self, base: PathKey, r: Refinement) -> None:
        for rel, pos in r.keys.items():
            if rel:
                self.keys[base + rel] = pos
                self.origins[base + rel] = r.file

    def read(self, title: str, cards: tuple[Card, ...]) -> dict[str, Any]:
        try:
            top = self.collect(cards)
            self.all_names = frozenset(c.key for c in cards if not c.key.startswith("."))
            self.expand(top, _Instance("", {}, self.params, None, ()))
        except NetlistStop as stop:
            raise InputError([*self.problems, stop.problem]) from None
        if self.unmapped:
            for name, (_ports, users) in self.unmapped.items():
                first = users[0].rsplit("(", 1)[1].rstrip(")")
                file, _, line = first.rpartition(":")
                self.problems.append(Problem(file, int(line), None, "", (
                    f"subcircuit {name!r} (used by {', '.join(u.split(' (')[0] for u in users)}) is not a block "
                    "afecheck can read and no map entry names it; if it is an op-amp, map it to a part model")))
            self.problems.append(Problem(self.file, None, None, "", "unmapped subcircuits; a map file to fill in "
                                         "and pass with --map:\n" + skeleton(self.unmapped)))
        if not self.problems:
            self.refine()
        if self.problems:
            raise InputError(self.problems)
        if not self.components:
            raise InputError([Problem(self.file, 1, None, "", "no circuit elements: expected a SPICE netlist "
                                                              "(title line, then R, C, L, V, I, X cards)")])
        return {"afecheck": 1, "name": title or Path(self.file).stem, "ground": GROUND, "rails": self.rails,
                "components": self.components, "signals": self.signals}


def _refinement_problem(r: Refinement, name: str, message: str) -> Problem:
    line, column = r.keys.get((), (None, None))
    return Problem(r.file, line, column, name, message)


def read_netlist(path: Path, display: str | None = None, *, map_file: str | Path | None = None,
                 intent_files: tuple[str | Path, ...] = (), part_names: Mapping[str, str] | None = None) -> Document:
    """The netlist at ``path`` as a design Document (positions in the netlist, its includes and the map)."""
    shown = display or str(path)
    netlist = read_netlist_cards(path, shown)
    omap = read_map(map_file, intent_files)
    reader = NetlistReader(shown, omap, {k.lower(): v for k, v in (part_names or {}).items()})
    data = reader.read(netlist.title, netlist.cards)
    return Document(shown, data, reader.keys, reader.values, origins=reader.origins,
                    defaults=frozenset(("signals", net) for net in reader.signals),
                    notes=tuple(netlist.notes) + tuple(reader.notes))
