"""The map for SPICE netlist input: which subcircuits are op-amps (part model and pin order), and refinements.

It comes from a map file (``--map``, ``afecheck-map: 1``) and/or the ``netlist:`` key of an intent file,
both read by the safe YAML reader. Subcircuit keys are names or glob patterns (``*``, ``?``), matched
without regard to case: an exact name first, then patterns in the order written. Where a ``.subckt``'s
port names say what they are (``IN+ IN- V+ V- OUT``, ``INP INN VCC VEE OUT`` ...), the pin order is
inferred and the map needs only the part model.
"""

from __future__ import annotations

import fnmatch
import re
from dataclasses import dataclass, field
from pathlib import Path

from afecheck.errors import InputError, Problem
from afecheck.model.reader import Document, PathKey, read_file
from afecheck.model.schema import Intent, NetlistMap, NetlistMapBody, SubcircuitMap
from afecheck.model.validate import validate

OPAMP_PINS = ("in+", "in-", "out", "v+", "v-")

_PORT_ROLES: dict[str, tuple[str, ...]] = {
    "in+": ("in+", "+in", "inp", "in_p", "inplus", "vin+", "vinp", "ninv", "noninv", "non_inv", "plus", "+"),
    "in-": ("in-", "-in", "inn", "inm", "in_n", "in_m", "inminus", "vin-", "vinn", "vinm", "inv", "minus", "-"),
    "out": ("out", "vout", "output", "vo", "o", "outp"),
    "v+": ("v+", "+v", "vcc", "vdd", "vs+", "+vs", "vsp", "vpos", "vplus", "vp", "vccp", "avdd", "supply+"),
    "v-": ("v-", "-v", "vee", "vss", "vs-", "-vs", "vsn", "vneg", "vminus", "vn", "avss", "supply-"),
}
_ROLE_OF = {name: role for role, names in _PORT_ROLES.items() for name in names}


def infer_pins(ports: tuple[str, ...]) -> tuple[str, ...] | None:
    """The afecheck pin of each port when the five port names say what they are; None otherwise."""
    roles = tuple(_ROLE_OF.get(p.lower()) for p in ports)
    if len(ports) != 5 or None in roles or len(set(roles)) != 5:
        return None
    return roles  # type: ignore[return-value]


@dataclass(frozen=True)
class MapEntry:
    """One subcircuit mapping and where it was written."""

    pattern: str
    entry: SubcircuitMap
    file: str
    line: int | None
    column: int | None


@dataclass
class Refinement:
    """Fields a map adds to one element or rail, with the positions of its keys (in the map's file)."""

    fields: dict
    file: str
    keys: dict[PathKey, tuple[int, int]] = field(default_factory=dict)


@dataclass
class OpAmpMap:
    """Every map source combined: subcircuit entries, element and rail refinements (by lower-cased name)."""

    subcircuits: list[MapEntry] = field(default_factory=list)
    components: dict[str, tuple[str, Refinement]] = field(default_factory=dict)
    rails: dict[str, tuple[str, Refinement]] = field(default_factory=dict)
    signal_nets: dict[str, str] = field(default_factory=dict)
    """Lower-cased net -> the spelling an intent file gives it (signals, loads, budgets)."""
    declared_signals: set[str] = field(default_factory=set)

    def find(self, name: str) -> MapEntry | None:
        """The entry for subcircuit ``name``: an exact (case-blind) name first, then the first matching pattern."""
        low = name.lower()
        for e in self.subcircuits:
            if e.pattern.lower() == low:
                return e
        for e in self.subcircuits:
            if any(c in e.pattern for c in "*?[") and fnmatch.fnmatchcase(low, e.pattern.lower()):
                return e
        return None


def _add_body(result: OpAmpMap, body: NetlistMapBody, doc: Document, prefix: PathKey,
              problems: list[Problem]) -> None:
    for name, entry in body.subcircuits.items():
        line, column = doc.where(prefix + ("subcircuits", name)) or (None, None)
        if any(e.pattern.lower() == name.lower() for e in result.subcircuits):
            problems.append(doc.problem(prefix + ("subcircuits", name), f"subcircuit {name!r} is mapped twice"))
            continue
        if entry.pins is not None:
            named = [p for p in entry.pins if p is not None]
            if sorted(named) != sorted(OPAMP_PINS):
                problems.append(doc.problem(prefix + ("subcircuits", name, "pins"),
                                            "pins must name each of in+, in-, out, v+, v- once (null for a port "
                                            f"afecheck does not use); read {list(entry.pins)}"))
                continue
        result.subcircuits.append(MapEntry(name, entry, doc.file, line, column))
    for section in ("components", "rails"):
        table = getattr(result, section)
        for name, fields in getattr(body, section).items():
            if name.lower() in table:
                problems.append(doc.problem(prefix + (section, name), f"{section} entry {name!r} is given twice"))
                continue
            base = prefix + (section, name)
            keys = {p[len(base):]: pos for p, pos in {**doc.values, **doc.keys}.items() if p[:len(base)] == base}
            table[name.lower()] = (name, Refinement(dict(fields), doc.file, keys))


def read_map(map_file: str | Path | None, intent_files: tuple[str | Path, ...]) -> OpAmpMap:
    """The map from ``map_file`` and the ``netlist:`` key of each intent file; raise InputError on bad input."""
    result = OpAmpMap()
    problems: list[Problem] = []
    if map_file is not None:
        try:
            doc = read_file(Path(map_file), str(map_file))
            if not isinstance(doc.data, dict):
                raise InputError([doc.problem((), "the top level must be a mapping starting 'afecheck-map: 1'")])
            _add_body(result, validate(doc, NetlistMap), doc, (), problems)
        except InputError as exc:
            problems.extend(exc.problems)
    for path in intent_files:
        try:
            doc = read_file(Path(path), str(path))
            if not isinstance(doc.data, dict):
                continue  # the intent loader reports it
            intent = validate(doc, Intent)
        except InputError:
            continue  # reported once, by the intent loader
        if intent.netlist is not None:
            _add_body(result, intent.netlist, doc, ("netlist",), problems)
        for section in ("signals", "loads", "budgets"):
            for net in getattr(intent, section):
                result.signal_nets.setdefault(net.lower(), net)
        result.declared_signals |= {net.lower() for net in intent.signals}
    if problems:
        raise InputError(problems)
    return result


def skeleton(unmapped: dict[str, tuple[tuple[str, ...] | None, list[str]]]) -> str:
    """A map file to fill in for the unmapped subcircuits: name -> (ports if defined, instances using it)."""
    lines = ["afecheck-map: 1", "subcircuits:"]
    for name, (ports, users) in unmapped.items():
        key = name if re.fullmatch(r"[A-Za-z_][A-Za-z0-9_.\-]*", name) else f'"{name}"'
        lines.append(f"  {key}:    # used by {', '.join(users[:5])}{' ...' if len(users) > 5 else ''}")
        lines.append("    part: FILL-IN    # an op-amp part model: `afecheck parts` lists them; --parts adds yours")
        inferred = infer_pins(ports) if ports else None
        if ports is None:
            lines.append("    pins: [in+, in-, v+, v-, out]    # the afecheck pin of each port, in port order")
        elif inferred is None:
            lines.append(f"    pins: [{', '.join('FILL-IN' for _ in ports)}]    # ports: {' '.join(ports)}; "
                         "in+ in- out v+ v- or null")
    return "\n".join(lines)
