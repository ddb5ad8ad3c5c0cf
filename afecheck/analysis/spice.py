"""Write a netlist as a SPICE deck of standard elements (R, C, V, I, E, G), with an optional ``.control`` block.

Op-amp cores are written out as the macromodel's standard-element chain (Vos source, VCVS A0, two RC poles
each buffered by a unity VCVS). SPICE names are case-insensitive and take their kind from the first letter,
so every node and element gets a sanitised, unique name; the deck lists the original names in comments and
:class:`SpiceDeck` keeps both maps. :func:`loop_break_netlist` gives the deck form of the loop-gain
measurement: the last VCVS of an op-amp's chain replaced by a 1 V AC test source, T = −v(returned node).
"""

from __future__ import annotations

import cmath
import math
import re
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field, replace

from afecheck.analysis.macromodel import expand_core, expand_netlist
from afecheck.analysis.netlist import (
    GROUND,
    Capacitor,
    CurrentSource,
    Element,
    Inductor,
    Netlist,
    OpAmpCore,
    Resistor,
    Vccs,
    Vcvs,
    VoltageSource,
)

_PREFIX: dict[type, str] = {
    Resistor: "R", Capacitor: "C", VoltageSource: "V", CurrentSource: "I", Vcvs: "E", Vccs: "G", Inductor: "L",
}
_UNSAFE = re.compile(r"[^A-Za-z0-9_]")


@dataclass(frozen=True)
class AcSweep:
    """``ac dec points f_start f_stop``."""

    points_per_decade: int
    f_start: float
    f_stop: float


@dataclass(frozen=True)
class ControlBlock:
    """What the ``.control`` block runs: ``op`` with ``print`` of nodes, an AC sweep written to a binary raw file.

    ``op_nodes`` / ``ac_nodes`` are original node names (None: every node); ``op_currents`` names voltage
    sources whose operating-point current is printed (``i(name)``, flowing pos -> source -> neg). The AC
    vectors are listed on ``.save`` lines so that ``write`` is not limited by the length of one command line.
    """

    op: bool = True
    op_nodes: Sequence[str] | None = None
    op_currents: Sequence[str] = ()
    ac: AcSweep | None = None
    ac_nodes: Sequence[str] | None = None
    raw_file: str = "ac.raw"
    extra: Sequence[str] = field(default_factory=tuple)


@dataclass(frozen=True)
class SpiceDeck:
    """The deck text and the maps from original node / element names to the names in the deck."""

    text: str
    nodes: Mapping[str, str]
    elements: Mapping[str, str]

    def vector(self, node: str) -> str:
        """The lower-cased vector name ngspice gives the voltage of an original node, e.g. ``v(out)``."""
        return f"v({self.nodes[node]})".lower()

    def current(self, source: str) -> str:
        """The lower-cased vector name of a voltage source's current, e.g. ``i(v1)``."""
        return f"i({self.elements[source]})".lower()


def _fmt(x: float) -> str:
    return repr(float(x)) if math.isfinite(x) else "0"


class _Namer:
    """Unique, case-insensitive SPICE-safe names."""

    def __init__(self, reserved: Iterable[str] = ()) -> None:
        self.used: set[str] = {r.lower() for r in reserved}
        self.map: dict[str, str] = {}

    def name(self, original: str, prefix: str = "") -> str:
        if original in self.map:
            return self.map[original]
        base = _UNSAFE.sub("_", original.replace("+", "p").replace("-", "m")) or "n"
        if prefix and not base.upper().startswith(prefix):
            base = prefix + base
        if not prefix and not base[0].isalpha():
            base = "n" + base
        candidate, i = base, 1
        while candidate.lower() in self.used:
            i += 1
            candidate = f"{base}_{i}"
        self.used.add(candidate.lower())
        self.map[original] = candidate
        return candidate


def spice_deck(netlist: Netlist, title: str = "afecheck netlist", control: ControlBlock | None = None) -> SpiceDeck:
    """The netlist as a SPICE deck (line 1 is the title, as SPICE requires).

    Each op-amp whose macromodel is intact is an X instance of a ``.subckt`` named after its part model, with
    ports ``in+ in- out v+ v-`` (names afecheck's netlist reader recognises, so the deck reads back with no map).
    """
    boxed = _boxed_opamps(netlist)
    inside = tuple(f"{ref}#" for ref in boxed)
    top = expand_netlist(Netlist(tuple(e for e in netlist.elements if not e.name.startswith(inside) or not inside),
                                 netlist.opamps))
    nodes = _Namer(reserved=("0", "gnd"))
    nodes.map[GROUND] = "0"
    elements = _Namer()
    lines = [_title(title), "* written by afecheck; op-amps are subcircuits of standard elements named after their "
             "part model"]
    subckts, defs, inner = _subcircuits(netlist, boxed)
    for e in top.elements:
        lines.append(_card(e, nodes, elements))
    all_nodes = dict.fromkeys(top.nodes())
    internal: dict[str, str] = {}
    for ref in boxed:
        op = netlist.opamps[ref]
        pins = (op.in_plus, op.in_minus, op.out, *op.supplies)
        name = elements.name(ref, "X")
        lines.append(f"{name} {' '.join(nodes.name(n) for n in pins)} {subckts[ref]}")
        all_nodes.update(dict.fromkeys(n for n in pins[:3] if n != GROUND))
        for local, deck_name in inner[subckts[ref]].items():
            internal[ref + local] = f"{name}.{deck_name}"
            all_nodes[ref + local] = None
    lines += defs
    lines.append("* node names: original -> deck")
    lines += [f"*   {orig} -> {new}" for orig, new in nodes.map.items() if orig != new]
    nodes.map.update(internal)
    if control is not None:
        lines += _control_lines(control, tuple(all_nodes), nodes, elements)
    lines.append(".end")
    return SpiceDeck("\n".join(lines) + "\n", dict(nodes.map), dict(elements.map))


def _boxed_opamps(netlist: Netlist) -> list[str]:
    """Op-amps written as subcircuit instances: those with a part name whose gain core is still in the netlist."""
    cores = {e.name for e in netlist.elements if isinstance(e, OpAmpCore)}
    return [ref for ref, op in netlist.opamps.items() if op.part and op.template and op.loop_element in cores]


def _subcircuits(netlist: Netlist, boxed: list[str]
                 ) -> tuple[dict[str, str], list[str], dict[str, dict[str, str]]]:
    """The subcircuit name of each boxed op-amp, the ``.subckt`` definitions (one per part and macromodel), and
    per subcircuit its internal nodes: template name (``#o``) -> name inside the subcircuit."""
    names: dict[tuple, str] = {}
    used: set[str] = set()
    of: dict[str, str] = {}
    defs: list[str] = []
    inner: dict[str, dict[str, str]] = {}
    for ref in boxed:
        op = netlist.opamps[ref]
        key = (op.part, op.template)
        if key not in names:
            base = re.sub(r"[^A-Za-z0-9_.\-]", "_", op.part) or "opamp"
            name, i = base, 1
            while name.lower() in used:
                i += 1
                name = f"{base}_{i}"
            used.add(name.lower())
            names[key] = name
            lines, inner[name] = _subcircuit_lines(name, op.template)
            defs += lines
        of[ref] = names[key]
    return of, defs, inner


def _subcircuit_lines(name: str, template: tuple[Element, ...]) -> tuple[list[str], dict[str, str]]:
    ports = {GROUND: "0", "in+": "in+", "in-": "in-", "out": "out"}
    nodes = _Namer(reserved=("0", "gnd", "in+", "in-", "out", "v+", "v-"))
    nodes.map.update(ports)
    elements = _Namer()
    body = expand_netlist(Netlist(template)).elements
    lines = [f".subckt {name} in+ in- out v+ v-", *(_card(e, nodes, elements) for e in body), f".ends {name}"]
    return lines, {n: d for n, d in nodes.map.items() if n not in ports}


def _title(title: str) -> str:
    text = " ".join(title.split()) or "afecheck netlist"
    return text if not text.startswith(".") else "* " + text


def _card(e: Element, nodes: _Namer, elements: _Namer) -> str:
    name = elements.name(e.name, _PREFIX[type(e)])
    if isinstance(e, (Resistor, Capacitor)):
        return f"{name} {nodes.name(e.a)} {nodes.name(e.b)} {_fmt(e.value)}"
    if isinstance(e, Inductor):
        if e.series_resistance == 0:
            return f"{name} {nodes.name(e.a)} {nodes.name(e.b)} {_fmt(e.value)}"
        mid = nodes.name(f"{e.name}#winding")
        return (f"{name} {nodes.name(e.a)} {mid} {_fmt(e.value)}\n"
                f"{elements.name(e.name + '#winding', 'R')} {mid} {nodes.name(e.b)} {_fmt(e.series_resistance)}")
    if isinstance(e, (VoltageSource, CurrentSource)):
        mag, ph = abs(complex(e.ac)), math.degrees(cmath.phase(complex(e.ac)))
        ac = f" AC {_fmt(mag)} {_fmt(ph)}" if mag else ""
        return f"{name} {nodes.name(e.pos)} {nodes.name(e.neg)} DC {_fmt(e.dc)}{ac}"
    value = e.gain if isinstance(e, Vcvs) else e.gm
    return f"{name} {nodes.name(e.pos)} {nodes.name(e.neg)} {nodes.name(e.cpos)} {nodes.name(e.cneg)} {_fmt(value)}"


def _control_lines(control: ControlBlock, all_nodes: tuple[str, ...], nodes: _Namer, elements: _Namer) -> list[str]:
    currents = [f"i({elements.map[name]})" for name in control.op_currents] if control.op else []
    lines: list[str] = []
    if control.ac is not None:
        ac_nodes = all_nodes if control.ac_nodes is None else tuple(control.ac_nodes)
        vecs = [f"v({nodes.name(n)})" for n in ac_nodes if n != GROUND]
        if control.op:
            op_nodes = all_nodes if control.op_nodes is None else tuple(control.op_nodes)
            vecs += [f"v({nodes.name(n)})" for n in op_nodes if n != GROUND] + currents
        vecs = list(dict.fromkeys(vecs))
        lines += [".save " + " ".join(vecs[i:i + 10]) for i in range(0, len(vecs), 10)]
    lines += [".control", "set numdgt=15"]
    if control.op:
        op_nodes = all_nodes if control.op_nodes is None else tuple(control.op_nodes)
        vecs = [f"v({nodes.name(n)})" for n in op_nodes if n != GROUND] + currents
        lines.append("op")
        lines += ["print " + " ".join(vecs[i:i + 10]) for i in range(0, len(vecs), 10)]
    if control.ac is not None:
        sweep = control.ac
        lines += [f"ac dec {int(sweep.points_per_decade)} {_fmt(sweep.f_start)} {_fmt(sweep.f_stop)}",
                  "set filetype=binary", f"write {control.raw_file}"]
    lines += list(control.extra)
    lines += ["quit", ".endc"]
    return lines


def loop_break_netlist(netlist: Netlist, refdes: str) -> tuple[Netlist, str]:
    """The expanded netlist with op-amp ``refdes``'s last VCVS replaced by a 1 V AC test source.

    Every other independent source has its AC value zeroed. Returns the netlist and the node whose voltage
    is what comes back: T(jf) = −v(node) (a VCVS has zero output impedance, so the break is exact).
    """
    op = netlist.opamps[refdes]
    core = netlist.element(op.loop_element)
    if not isinstance(core, OpAmpCore):
        raise TypeError(f"{op.loop_element} is not an op-amp core")
    chain = expand_core(core)
    last = chain[-1]
    if not isinstance(last, Vcvs) or last.cneg != last.neg or last.gain != 1.0:
        raise TypeError(f"unexpected end of the macromodel chain of {refdes}")
    flat = expand_netlist(netlist)
    out: list[Element] = []
    for e in flat.elements:
        if e.name == last.name:
            out.append(VoltageSource(e.name, last.pos, last.neg, dc=0.0, ac=1.0))
        elif isinstance(e, (VoltageSource, CurrentSource)):
            out.append(replace(e, ac=0.0))
        else:
            out.append(e)
    return Netlist(tuple(out), netlist.opamps), last.cpos
