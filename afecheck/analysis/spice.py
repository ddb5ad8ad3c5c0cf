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
    Netlist,
    OpAmpCore,
    Resistor,
    Vccs,
    Vcvs,
    VoltageSource,
)

_PREFIX: dict[type, str] = {
    Resistor: "R", Capacitor: "C", VoltageSource: "V", CurrentSource: "I", Vcvs: "E", Vccs: "G",
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
    """The netlist as a SPICE deck (line 1 is the title, as SPICE requires)."""
    flat = expand_netlist(netlist)
    nodes = _Namer(reserved=("0", "gnd"))
    nodes.map[GROUND] = "0"
    elements = _Namer()
    lines = [_title(title), "* written by afecheck; op-amp cores expanded to standard elements"]
    for e in flat.elements:
        lines.append(_card(e, nodes, elements))
    lines.append("* node names: original -> deck")
    lines += [f"*   {orig} -> {new}" for orig, new in nodes.map.items() if orig != new]
    if control is not None:
        lines += _control_lines(control, flat, nodes, elements)
    lines.append(".end")
    return SpiceDeck("\n".join(lines) + "\n", dict(nodes.map), dict(elements.map))


def _title(title: str) -> str:
    text = " ".join(title.split()) or "afecheck netlist"
    return text if not text.startswith(".") else "* " + text


def _card(e: Element, nodes: _Namer, elements: _Namer) -> str:
    name = elements.name(e.name, _PREFIX[type(e)])
    if isinstance(e, (Resistor, Capacitor)):
        return f"{name} {nodes.name(e.a)} {nodes.name(e.b)} {_fmt(e.value)}"
    if isinstance(e, (VoltageSource, CurrentSource)):
        mag, ph = abs(complex(e.ac)), math.degrees(cmath.phase(complex(e.ac)))
        ac = f" AC {_fmt(mag)} {_fmt(ph)}" if mag else ""
        return f"{name} {nodes.name(e.pos)} {nodes.name(e.neg)} DC {_fmt(e.dc)}{ac}"
    value = e.gain if isinstance(e, Vcvs) else e.gm
    return f"{name} {nodes.name(e.pos)} {nodes.name(e.neg)} {nodes.name(e.cpos)} {nodes.name(e.cneg)} {_fmt(value)}"


def _control_lines(control: ControlBlock, flat: Netlist, nodes: _Namer, elements: _Namer) -> list[str]:
    all_nodes = flat.nodes()
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
