"""Load a design file (YAML or JSON) into a LoadedDesign: read, validate, merge intent and parts, check structure.

Every problem is reported as ``file:line:column: path: message`` in one InputError, so a user fixes
all of them in one round. The input files are only read, never written.
"""

from __future__ import annotations

import contextlib
import difflib
import gc
from collections.abc import Callable, Iterator
from functools import partial
from pathlib import Path

from afecheck.errors import InputError, Problem
from afecheck.model.input_kind import is_netlist
from afecheck.model.loaded import LoadedDesign, PathKey, path_text
from afecheck.model.paths import PathRefusedError, referenced_file
from afecheck.model.positions import Positions
from afecheck.model.reader import Document, read_file
from afecheck.model.schema import PIN_NAMES, Design, Intent
from afecheck.model.validate import validate
from afecheck.parts.library import PartEntry, PartSet, builtin_entries, combine, read_library
from afecheck.sensors.expand import expand_sensors

INTENT_SECTIONS = ("signals", "loads", "budgets")


def load_design(
    path: str | Path, intent: str | Path | None = None, libraries: tuple[str | Path, ...] = (),
    input_format: str | None = None, netlist_map: str | Path | None = None,
) -> LoadedDesign:
    """Read, validate and merge a design file (YAML, JSON or a SPICE netlist), its intent file(s) and part
    libraries; raise InputError."""
    with _collector_paused():
        return _load(Path(path), intent, libraries, input_format, netlist_map)


@contextlib.contextmanager
def _collector_paused() -> Iterator[None]:
    """The cyclic garbage collector off while a design's data and models are built: they hold no reference
    cycles, and each collection would walk every object built so far (measured: about a third of the load time
    of a 1000-channel design, docs/BENCHMARK.md)."""
    was_on = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_on:
            gc.enable()


def _load(path: Path, intent: str | Path | None, libraries: tuple[str | Path, ...], input_format: str | None,
          netlist_map: str | Path | None) -> LoadedDesign:
    if is_netlist(path, input_format):
        doc = _read_netlist(path, intent, libraries, netlist_map)
    else:
        doc = read_file(path, str(path))
        if netlist_map is not None:
            raise InputError([Problem(str(netlist_map), None, None, "", "a map file applies to SPICE netlist input "
                                      f"only, and {path} is read as a YAML/JSON design")])
    if not isinstance(doc.data, dict):
        raise InputError([doc.problem((), "the top level must be a mapping that starts with 'afecheck: 1'")])
    design = validate(doc, Design)
    problems: list[Problem] = []
    intents = _intent_documents(design, doc, intent, problems)
    groups = _library_groups(design, doc, libraries, problems)
    if problems:
        raise InputError(problems)
    kept = doc.positions_only()  # what the loaded design keeps: the data read is freed once validated
    inline = [PartEntry(name, model, doc.file, place=partial(_key_place, kept, ("parts", name)))
              for name, model in design.parts.items()]
    parts = combine(groups, inline)
    positions = Positions(kept)
    design = _merge_intent(design, doc, intents, positions, problems, doc.defaults)
    if problems:
        raise InputError(problems)

    def locate(key: PathKey, message: str) -> Problem:
        file, line, column = positions.get(key) or _nearest(positions, key, doc.file)
        return Problem(file, line, column, path_text(key), message)

    problems = structure_problems(design, parts, locate)
    if problems:
        raise InputError(sorted(problems, key=lambda p: (p.file, p.line or 0, p.column or 0, p.path)))
    declared = {ref: c for ref, c in design.components.items() if c.kind in ("thermocouple", "bridge")}
    design = expand_sensors(design)
    for ref, comp in design.components.items():
        if comp.kind == "bridge_arm":
            positions.same_as(("components", ref), ("components", comp.bridge))
    return LoadedDesign(
        design=design,
        sensors=declared,
        file=doc.file,
        parts=parts.models,
        positions=positions,
        part_origins=parts.origins,
        shipped_parts=parts.shipped,
        intent_files=tuple(d.file for d, _ in intents),
        notes=doc.notes,
    )


def _read_netlist(path: Path, intent: str | Path | None, libraries: tuple[str | Path, ...],
                  netlist_map: str | Path | None) -> Document:
    """A SPICE netlist as a design Document; the part names it may map to come from the built-ins and
    ``libraries`` (a library's own errors are reported where libraries are loaded)."""
    from afecheck.model.spice_reader import read_netlist

    names = {e.name: e.name for e in builtin_entries()}
    for lib in libraries:
        try:
            names.update({e.name: e.name for e in read_library(Path(lib), str(lib))})
        except InputError:
            pass
    return read_netlist(path, str(path), map_file=netlist_map, intent_files=(intent,) if intent else (),
                        part_names=names)


def _intent_documents(design: Design, doc: Document, intent: str | Path | None,
                      problems: list[Problem]) -> list[tuple[Document, Intent]]:
    """The intent files named by the design's ``intent:`` key and by ``intent`` (one file read once)."""
    paths: list[Path] = []
    if design.intent is not None:
        inside = _inside(Path(doc.file).parent, design.intent, doc, ("intent",), problems)
        if inside is not None:
            paths.append(inside)
    if intent is not None and not any(_same(Path(intent), p) for p in paths):
        paths.append(Path(intent))
    read = [_collect(problems, _read_intent, p) for p in paths]
    return [r for r in read if r is not None]


def _library_groups(design: Design, doc: Document, libraries: tuple[str | Path, ...],
                    problems: list[Problem]) -> list[list[PartEntry]]:
    """Part entries in precedence order: built-ins, the design's ``part_libraries:``, then ``libraries``."""
    paths: list[Path] = []
    for i, text in enumerate(design.part_libraries):
        inside = _inside(Path(doc.file).parent, text, doc, ("part_libraries", i), problems)
        if inside is not None:
            paths.append(inside)
    unique: list[Path] = []
    for p in paths + [Path(lib) for lib in libraries]:
        if not any(_same(p, q) for q in unique):
            unique.append(p)
    groups: list[list[PartEntry]] = [builtin_entries()]
    for p in unique:
        groups.append(_collect(problems, read_library, p, str(p)) or [])
    return groups


def _collect(problems: list[Problem], fn: Callable, *args: object) -> object:
    """``fn(*args)``, or None with its InputError's problems added to ``problems``."""
    try:
        return fn(*args)
    except InputError as exc:
        problems.extend(exc.problems)
        return None


def _same(a: Path, b: Path) -> bool:
    try:
        return a.resolve() == b.resolve()
    except (OSError, ValueError, RuntimeError):
        return False


def _inside(folder: Path, text: str, doc: Document, key: PathKey, problems: list[Problem]) -> Path | None:
    """``folder/text`` if it is a regular file inside the design file's folder; else a problem at ``key``."""
    try:
        return referenced_file(folder, text, "the design file's folder")
    except PathRefusedError as exc:
        problems.append(doc.problem(key, str(exc)))
        return None


def _read_intent(path: Path) -> tuple[Document, Intent]:
    doc = read_file(path, str(path))
    if not isinstance(doc.data, dict):
        raise InputError([doc.problem((), "the top level must be a mapping that starts with 'afecheck-intent: 1'")])
    return doc, validate(doc, Intent)


def _key_place(doc: Document, path: PathKey) -> tuple[int | None, int | None]:
    """(line, column) of the key at ``path`` in ``doc``, or (None, None)."""
    return doc.keys.get(path, (None, None))


def _nearest(positions: Positions, key: PathKey, file: str) -> tuple[str, int | None,
                                                                                                 int | None]:
    while key:
        key = key[:-1]
        if key in positions:
            return positions[key]
    return (file, None, None)


def _merge_intent(
    design: Design,
    doc: Document,
    intents: list[tuple[Document, Intent]],
    positions: Positions,
    problems: list[Problem],
    defaults: frozenset[PathKey] = frozenset(),
) -> Design:
    """The design with each intent file's signals, loads and budgets added; a net declared twice is a problem,
    except where the design's entry is a default (a netlist source's values): the intent's keys then win."""
    if not intents:
        return design
    merged = {section: dict(getattr(design, section)) for section in INTENT_SECTIONS}
    for idoc, intent in intents:
        kept = idoc.positions_only()
        for section in INTENT_SECTIONS:
            for net, entry in getattr(intent, section).items():
                if net in merged[section] and (section, net) in defaults:
                    given = {k: getattr(entry, k) for k in entry.model_fields_set}
                    merged[section][net] = merged[section][net].model_copy(update=given)
                    positions.overlay(kept, (section, net), with_prefix=False)
                    continue
                if net in merged[section]:
                    file, line, _ = positions.get((section, net), (doc.file, None, None))
                    where = f"{file}:{line}" if line is not None else file
                    problems.append(idoc.problem(
                        (section, net), f"{section} for net {net!r} are declared here and at {where}; keep one"))
                    continue
                merged[section][net] = entry
                positions.overlay(kept, (section, net))
        if intent.operating_temperature is not None:
            if design.operating_temperature is not None or "operating_temperature" in merged:
                problems.append(idoc.problem(("operating_temperature",),
                                             "the operating temperature is declared twice (design and intent, or two "
                                             "intent files); keep one"))
            else:
                merged["operating_temperature"] = intent.operating_temperature
                positions.overlay(kept, ("operating_temperature",), keys_only=True)
    return design.model_copy(update=merged)


def structure_problems(design: Design, parts: PartSet, locate: Callable[[PathKey, str], Problem]) -> list[Problem]:
    """What validation per field cannot see: pins, connections, part models, rails and intent nets."""
    problems: list[Problem] = []
    connections: dict[str, list[tuple[str, str]]] = {}
    for ref, comp in design.components.items():
        allowed = PIN_NAMES[comp.kind]
        for pin, net in comp.pins.items():
            if pin not in allowed:
                problems.append(locate(("components", ref, "pins", pin),
                                       f"a {comp.kind} has no pin {pin!r}; its pins are {', '.join(allowed)}"))
            else:
                connections.setdefault(net, []).append((ref, pin))
        missing = [p for p in allowed if p not in comp.pins]
        if missing:
            advice = (" (an unused op-amp section is wired as a follower with in+ at a mid-supply node)"
                      if comp.kind == "opamp" else "")
            problems.append(locate(("components", ref, "pins"),
                                   f"pin {', '.join(missing)} of {ref} is not connected; every {comp.kind} pin must "
                                   f"name a net{advice}"))
        if len(allowed) == 2 and not missing:
            a, b = (comp.pins[p] for p in allowed)
            if a == b:
                problems.append(locate(("components", ref, "pins"),
                                       f"both pins of {ref} are on net {a!r}: the {comp.kind} is shorted"))
        if comp.kind == "opamp":
            if "v+" in comp.pins and comp.pins.get("v+") == comp.pins.get("v-"):
                problems.append(locate(("components", ref, "pins"),
                                       f"v+ and v- of {ref} are both on net {comp.pins['v+']!r}: no supply"))
            if comp.part not in parts.entries:
                close = difflib.get_close_matches(comp.part, list(parts.entries), n=3, cutoff=0.6)
                hint = f"; did you mean {', '.join(repr(c) for c in close)}?" if close else (
                    "; define it under parts:, in a part_libraries: file, or with --parts")
                problems.append(locate(("components", ref, "part"), f"unknown part model {comp.part!r}{hint}"))

    external = {design.ground} | set(design.rails) | set(design.signals) | set(design.loads)
    external |= {load.reference for load in design.loads.values() if load.reference is not None}
    for net, pins in connections.items():
        if len(pins) == 1 and net not in external:
            ref, pin = pins[0]
            problems.append(locate(("components", ref, "pins", pin),
                                   f"net {net!r} connects only to {ref} pin {pin}: nothing else drives or reads it "
                                   "(declare it under signals or loads if it leaves the board)"))

    for name, rail in design.rails.items():
        if name == design.ground:
            if rail.voltage not in (None, 0.0):
                problems.append(locate(("rails", name, "voltage"), f"{name!r} is the ground net, which is 0 V"))
        elif rail.voltage is None:
            problems.append(locate(("rails", name), f"rail {name!r} has no voltage"))

    problems += _source_conflicts(design, locate)

    used = set(connections) | {design.ground} | set(design.rails)
    for section in INTENT_SECTIONS:
        for net in getattr(design, section):
            if net not in connections:
                what = {"signals": "a signal", "loads": "a load", "budgets": "a budget"}[section]
                problems.append(locate((section, net), f"{what} is declared on net {net!r}, which no component uses"))
    for net, load in design.loads.items():
        if load.reference is not None and load.reference not in used:
            problems.append(locate(("loads", net, "reference"),
                                   f"reference net {load.reference!r} is not a rail, the ground or a component net"))
    return problems


def _source_conflicts(design: Design, locate: Callable[[PathKey, str], Problem]) -> list[Problem]:
    """Ideal voltage sources (rails, vsources) that set one net to two voltages: a loop no circuit can satisfy.

    Kirchhoff's voltage law around a loop of ideal sources must sum to zero; the potentials are spread from
    ground (and from an arbitrary root in a floating group) and each source that disagrees is named.
    """
    edges: dict[str, list[tuple[str, float, PathKey, str]]] = {}

    def link(pos: str, neg: str, volts: float, key: PathKey, name: str) -> None:
        edges.setdefault(neg, []).append((pos, volts, key, name))
        edges.setdefault(pos, []).append((neg, -volts, key, name))

    for name, rail in design.rails.items():
        if name != design.ground and rail.voltage is not None:
            link(name, design.ground, rail.voltage, ("rails", name, "voltage"), f"rail {name}")
    for ref, comp in design.components.items():
        if comp.kind == "vsource" and "p" in comp.pins and "n" in comp.pins and comp.pins["p"] != comp.pins["n"]:
            link(comp.pins["p"], comp.pins["n"], comp.value, ("components", ref), ref)
    potential: dict[str, float] = {}
    problems: list[Problem] = []
    reported: set[PathKey] = set()
    roots = [design.ground] + sorted(n for n in edges if n != design.ground)
    for root in roots:
        if root in potential or root not in edges:
            continue
        potential[root] = 0.0
        queue = [root]
        while queue:
            net = queue.pop()
            for other, volts, key, name in edges[net]:
                want = potential[net] + volts
                if other not in potential:
                    potential[other] = want
                    queue.append(other)
                elif abs(potential[other] - want) > 1e-9 * max(1.0, abs(want)) and key not in reported:
                    reported.add(key)
                    problems.append(locate(key, (
                        f"{name} sets {other!r} to {want:.6g} V against {net!r}, but other ideal sources already "
                        f"hold it at {potential[other]:.6g} V: ideal sources in a loop must agree (Kirchhoff's "
                        "voltage law); remove one or put a resistance between them")))
    return problems
