"""Many copies of a netlist in one SPICE deck, so that ngspice solves every corner combination in one run."""

from __future__ import annotations

from dataclasses import fields, replace

from afecheck.analysis.netlist import GROUND, Element, Netlist

_NODE_FIELDS = ("a", "b", "pos", "neg", "cpos", "cneg")


def prefixed(netlist: Netlist, prefix: str) -> tuple[Element, ...]:
    """Every element with its name and its non-ground nodes prefixed (a disjoint copy sharing ground)."""
    out = []
    for e in netlist.elements:
        changes = {f.name: prefix + getattr(e, f.name) for f in fields(e)
                   if f.name in _NODE_FIELDS and getattr(e, f.name) != GROUND}
        out.append(replace(e, name=prefix + e.name, **changes))
    return tuple(out)


def copies(netlists: list[Netlist]) -> Netlist:
    """One netlist holding copy ``i`` of each netlist under the prefix ``c<i>_``."""
    elements: list[Element] = []
    for i, nl in enumerate(netlists):
        elements += prefixed(nl, f"c{i}_")
    return Netlist(tuple(elements))
