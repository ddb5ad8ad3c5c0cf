"""One MNA stamp per element kind: each adds its element's terms to G (conductance), C (capacitance) and b.

Unknowns are the non-ground node voltages followed by one branch current per voltage-defined element
(independent V source, VCVS). Rows are KCL (currents leaving a node = sources into it) and, for branches,
the element's voltage law. Ground has index -1 and is skipped. AC admittance is ``G + jωC`` plus, for each
op-amp core, its gain's departure from the DC value, A(jω) − A0, added per frequency at solve time.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from afecheck.analysis.netlist import (
    Capacitor,
    CurrentSource,
    Element,
    Inductor,
    OpAmpCore,
    Resistor,
    Vccs,
    Vcvs,
    VoltageSource,
)


@dataclass
class StampTarget:
    """The arrays being assembled and the index of every node and branch (ground = -1)."""

    g: np.ndarray
    c: np.ndarray
    b_dc: np.ndarray
    b_ac: np.ndarray
    node: dict[str, int]
    branch: dict[str, int]
    ac_override: dict[str, complex] | None = None
    cores: list[tuple[int, int, int, OpAmpCore]] = field(default_factory=list)

    def ac_value(self, name: str, declared: complex) -> complex:
        """The AC excitation of an independent source: its declared value unless an override set is given."""
        if self.ac_override is None:
            return declared
        return self.ac_override.get(name, 0.0)


def _add(m: np.ndarray, i: int, j: int, v: float) -> None:
    if i >= 0 and j >= 0:
        m[i, j] += v


def _two_terminal(m: np.ndarray, a: int, b: int, y: float) -> None:
    _add(m, a, a, y)
    _add(m, b, b, y)
    _add(m, a, b, -y)
    _add(m, b, a, -y)


def stamp_resistor(t: StampTarget, e: Resistor) -> None:
    """Conductance 1/R between its nodes."""
    if not e.value > 0:
        raise ValueError(f"{e.name}: resistance must be positive, got {e.value!r}")
    _two_terminal(t.g, t.node[e.a], t.node[e.b], 1.0 / e.value)


def stamp_capacitor(t: StampTarget, e: Capacitor) -> None:
    """Capacitance C between its nodes (admittance jωC; open at DC)."""
    _two_terminal(t.c, t.node[e.a], t.node[e.b], e.value)


def _branch_incidence(t: StampTarget, k: int, pos: int, neg: int) -> None:
    _add(t.g, pos, k, 1.0)
    _add(t.g, neg, k, -1.0)
    _add(t.g, k, pos, 1.0)
    _add(t.g, k, neg, -1.0)


def stamp_voltage_source(t: StampTarget, e: VoltageSource) -> None:
    """v(pos) − v(neg) = value; its branch current flows pos → source → neg."""
    k = t.branch[e.name]
    _branch_incidence(t, k, t.node[e.pos], t.node[e.neg])
    t.b_dc[k] += e.dc
    t.b_ac[k] += t.ac_value(e.name, e.ac)


def stamp_current_source(t: StampTarget, e: CurrentSource) -> None:
    """Current leaves ``pos`` and enters ``neg``."""
    pos, neg = t.node[e.pos], t.node[e.neg]
    ac = t.ac_value(e.name, e.ac)
    if pos >= 0:
        t.b_dc[pos] -= e.dc
        t.b_ac[pos] -= ac
    if neg >= 0:
        t.b_dc[neg] += e.dc
        t.b_ac[neg] += ac


def stamp_inductor(t: StampTarget, e: Inductor) -> None:
    """v(a) − v(b) − (R + jωL)·i = 0 with a branch current a → b: −R in G and −L in C on the branch's diagonal."""
    if not e.value > 0:
        raise ValueError(f"{e.name}: inductance must be positive, got {e.value!r}")
    k = t.branch[e.name]
    _branch_incidence(t, k, t.node[e.a], t.node[e.b])
    t.g[k, k] -= e.series_resistance
    t.c[k, k] -= e.value


def stamp_vcvs(t: StampTarget, e: Vcvs) -> None:
    """v(pos) − v(neg) − gain·(v(cpos) − v(cneg)) = 0 with a branch current like a voltage source."""
    k = t.branch[e.name]
    _branch_incidence(t, k, t.node[e.pos], t.node[e.neg])
    _add(t.g, k, t.node[e.cpos], -e.gain)
    _add(t.g, k, t.node[e.cneg], e.gain)


def stamp_vccs(t: StampTarget, e: Vccs) -> None:
    """gm·(v(cpos) − v(cneg)) leaves ``pos`` and enters ``neg``."""
    pos, neg, cp, cn = t.node[e.pos], t.node[e.neg], t.node[e.cpos], t.node[e.cneg]
    _add(t.g, pos, cp, e.gm)
    _add(t.g, pos, cn, -e.gm)
    _add(t.g, neg, cp, -e.gm)
    _add(t.g, neg, cn, e.gm)


def stamp_opamp_core(t: StampTarget, e: OpAmpCore) -> None:
    """Like a VCVS of gain a0 (its DC value) with ``a0·vos`` on the right; the frequency part is added per solve."""
    k = t.branch[e.name]
    cp, cn = t.node[e.cpos], t.node[e.cneg]
    _branch_incidence(t, k, t.node[e.pos], t.node[e.neg])
    _add(t.g, k, cp, -e.a0)
    _add(t.g, k, cn, e.a0)
    t.b_dc[k] += e.a0 * e.vos
    t.cores.append((k, cp, cn, e))


STAMPS: dict[type, Callable[[StampTarget, Element], None]] = {
    Resistor: stamp_resistor,
    Capacitor: stamp_capacitor,
    VoltageSource: stamp_voltage_source,
    CurrentSource: stamp_current_source,
    Vcvs: stamp_vcvs,
    Vccs: stamp_vccs,
    OpAmpCore: stamp_opamp_core,
    Inductor: stamp_inductor,
}

BRANCH_KINDS: tuple[type, ...] = (VoltageSource, Vcvs, OpAmpCore, Inductor)
