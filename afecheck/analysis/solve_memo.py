"""Share the numeric work of solve units that are the same circuit up to names (channel after channel).

A unit's local netlist, with its nodes numbered in first-seen order and every element's kind and values kept
(:func:`numeric_key`), fixes its nodal arrays exactly: two netlists with equal keys assemble to the same G, C and
right-hand sides, entry for entry, and every solve on them gives the same bits. So the assembled arrays, the
connectivity verdict and the solves that depend only on them are computed once per key and handed to the next
unit with the same key, re-labelled with its own names. ``MEMOISE`` off (tests) takes the plain path throughout.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np

from afecheck.analysis.mna import MnaSystem, assemble, check_connectivity
from afecheck.analysis.netlist import (
    GROUND,
    Capacitor,
    CurrentSource,
    Inductor,
    Netlist,
    OpAmpCore,
    Resistor,
    Vccs,
    Vcvs,
    VoltageSource,
)
from afecheck.analysis.stamps import BRANCH_KINDS

MEMOISE = True
"""Share solves between units with equal keys; the equivalence test runs with this off and compares."""
MAX_KEPT = 400
"""Most shared results kept per design: a design whose units are all different gains nothing from the memo, and
must not hold every unit's arrays (a thermistor unit's grid solve is tens of kB) until the end of the run."""
_KEPT = "#solve-memo-kept"


def _keep(cache: dict, key: tuple, value: Any) -> None:
    """Store ``value`` under ``key`` while fewer than MAX_KEPT results are kept."""
    kept = cache.get(_KEPT, 0)
    if kept < MAX_KEPT:
        cache[key] = value
        cache[_KEPT] = kept + 1


def numeric_key(netlist: Netlist) -> tuple | None:
    """The netlist up to names: per element its kind, numbered nodes and every value it stamps (None for an element
    kind it does not know, so a new kind is solved plainly until its values are added here)."""
    numbers: dict[str, int] = {GROUND: -1}
    number = numbers.setdefault
    key: list[tuple] = []
    for e in netlist.elements:
        t = type(e)
        if t is Resistor or t is Capacitor:
            key.append((t, number(e.a, len(numbers)), number(e.b, len(numbers)), e.value))
            continue
        if t is Inductor:
            key.append((t, number(e.a, len(numbers)), number(e.b, len(numbers)), e.value, e.series_resistance))
            continue
        if t not in (VoltageSource, CurrentSource, OpAmpCore, Vcvs, Vccs):
            return None  # a kind this key does not know: nothing is shared
        nodes = (number(e.pos, len(numbers)), number(e.neg, len(numbers)))
        if t is VoltageSource or t is CurrentSource:
            key.append((t, nodes, e.dc, e.ac))
            continue
        nodes += (number(e.cpos, len(numbers)), number(e.cneg, len(numbers)))
        if t is OpAmpCore:
            key.append((t, nodes, e.a0, e.fp1, e.fp2, e.vos))
        elif t is Vcvs:
            key.append((t, nodes, e.gain))
        else:
            key.append((t, nodes, e.gm))
    return tuple(key)


def unit_system(netlist: Netlist, key: tuple | None, cache: dict | None) -> MnaSystem:
    """The DC-connectivity-checked, assembled system of ``netlist``; arrays shared (read-only) with an earlier
    netlist of the same key. Raises SingularCircuitError (with this netlist's names) when it is not connected."""
    if key is None or cache is None or not MEMOISE:
        check_connectivity(netlist, dc=True)
        return assemble(netlist)
    done = cache.get(("system", key))
    if done is None:
        check_connectivity(netlist, dc=True)  # a failure is not shared: its message names this netlist's nodes
        system = assemble(netlist)
        for a in (system.g, system.c, system.b_dc, system.b_ac):
            a.flags.writeable = False
        _keep(cache, ("system", key), system)
        return system
    nodes = netlist.nodes()
    branches = tuple(e.name for e in netlist.elements if isinstance(e, BRANCH_KINDS))
    cores = [e for e in netlist.elements if type(e) is OpAmpCore]
    return MnaSystem(netlist, nodes, branches, {nd: i for i, nd in enumerate(nodes)}, done.g, done.c, done.b_dc,
                     done.b_ac, tuple((k, cp, cn, cores[i]) for i, (k, cp, cn, _) in enumerate(done.cores)),
                     done.grounded, done.controls)


def shared(cache: dict | None, key: tuple | None, compute: Callable[[], Any]) -> Any:
    """``compute()`` once per ``key`` (whose first part is the unit's numeric key); exceptions are not kept."""
    if key is None or cache is None or not MEMOISE:
        return compute()
    if key in cache:
        return cache[key]
    value = compute()
    for a in value if isinstance(value, tuple) else (value,):
        if isinstance(a, np.ndarray):
            a.flags.writeable = False
    _keep(cache, key, value)
    return value
