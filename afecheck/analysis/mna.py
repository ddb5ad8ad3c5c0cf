"""Modified nodal analysis: assemble a netlist once, then solve at DC or over many frequencies in one batch.

``solve_dc(netlist)`` gives node voltages and source currents; ``solve_ac(netlist, freqs)`` solves every
frequency as one batched ``numpy.linalg.solve`` over an array of shape (n_freq, n, n). ``transfer`` gives the
response at a node to one named source, ``impedance`` the impedance seen at a node (1 A test current, every
independent source zeroed). A floating node or a loop of voltage sources raises SingularCircuitError naming
the nodes or elements, found by a connectivity check before the solve.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from functools import cached_property

import numpy as np

from afecheck.analysis.netlist import (
    GROUND,
    Capacitor,
    CurrentSource,
    Netlist,
    OpAmpCore,
    Resistor,
    Vccs,
    Vcvs,
    VoltageSource,
    element_nodes,
)
from afecheck.analysis.stamps import BRANCH_KINDS, STAMPS, StampTarget
from afecheck.errors import SingularCircuitError

TWO_PI = 2.0 * np.pi
TEST_CURRENT = "#itest"


@dataclass(frozen=True, eq=False)
class MnaSystem:
    """An assembled system: G, C and the DC and AC right-hand sides, with the index of every unknown."""

    netlist: Netlist
    nodes: tuple[str, ...]
    branches: tuple[str, ...]
    index: Mapping[str, int]
    g: np.ndarray
    c: np.ndarray
    b_dc: np.ndarray
    b_ac: np.ndarray
    cores: tuple[tuple[int, int, int, OpAmpCore], ...] = ()

    @property
    def size(self) -> int:
        """Number of unknowns (node voltages plus branch currents)."""
        return len(self.nodes) + len(self.branches)

    def node_index(self, node: str) -> int:
        """Row of a node's voltage; -1 for ground. KeyError for an unknown node."""
        if node == GROUND:
            return -1
        return self.index[node]

    def branch_index(self, name: str) -> int:
        """Row of a voltage-defined element's branch current."""
        return len(self.nodes) + self.branches.index(name)

    def admittance(self, freqs: np.ndarray) -> np.ndarray:
        """The full matrix G + jωC + (A(jω) − A0) terms of every op-amp core, shape (n_freq, n, n)."""
        y = self.g[None, :, :] + (1j * TWO_PI * freqs)[:, None, None] * self.c[None, :, :]
        for k, cp, cn, core in self.cores:
            delta = core.gain(freqs) - core.a0
            if cp >= 0:
                y[:, k, cp] -= delta
            if cn >= 0:
                y[:, k, cn] += delta
        return y

    @cached_property
    def reduction(self) -> _Reduction:
        """Which unknowns the solver eliminates before the batched solve (see :class:`_Reduction`)."""
        return _plan_reduction(self)

    def solve_freqs(self, freqs: Sequence[float] | np.ndarray, check: bool = True,
                    rhs: np.ndarray | None = None) -> np.ndarray:
        """Unknowns at every frequency (Hz), shape (n_freq, n): one batched solve of (G + jωC) x = b_ac.

        ``rhs`` (shape (n,)) replaces ``b_ac``. Nodes held by grounded voltage sources and op-amp core outputs
        are eliminated first, so the batched matrices are small; the full vector is rebuilt afterwards.
        """
        f = np.atleast_1d(np.asarray(freqs, dtype=float))
        if check:
            check_connectivity(self.netlist, dc=bool(np.any(f == 0.0)))
        return _reduced_solve(self, f, self.admittance(f), self.b_ac if rhs is None else rhs)

    def solve_dc_vector(self, check: bool = True) -> np.ndarray:
        """Unknowns of the DC operating point (capacitors open, DC source values)."""
        if check:
            check_connectivity(self.netlist, dc=True)
        f = np.zeros(1)
        return _reduced_solve(self, f, self.g[None, :, :].copy(), self.b_dc)[0].real.copy()


@dataclass(frozen=True)
class _Reduction:
    """Unknown pairs the solver removes exactly before the batched solve.

    ``known``: (node, branch, sign) of voltage sources with one terminal on ground: the node voltage is the
    source value (times sign), the branch current follows from the node's KCL row afterwards.
    ``subs``: (node, branch, cpos, cneg, core) of op-amp cores whose output node controls nothing:
    v(node) = A(jω)·(v(cpos) − v(cneg)) + b[branch] is substituted into every other row.
    """

    keep: np.ndarray
    known: tuple[tuple[int, int, float], ...]
    subs: tuple[tuple[int, int, int, int, OpAmpCore], ...]


def _plan_reduction(system: MnaSystem) -> _Reduction:
    controls: set[str] = set()
    for e in system.netlist.elements:
        if isinstance(e, (Vcvs, Vccs, OpAmpCore)):
            controls.update((e.cpos, e.cneg))
    known: list[tuple[int, int, float]] = []
    held: set[int] = set()
    for e in system.netlist.elements:
        if isinstance(e, VoltageSource) and (e.pos == GROUND) != (e.neg == GROUND):
            node, sign = (e.pos, 1.0) if e.neg == GROUND else (e.neg, -1.0)
            p = system.index[node]
            if p not in held:
                held.add(p)
                known.append((p, system.branch_index(e.name), sign))
    subs: list[tuple[int, int, int, int, OpAmpCore]] = []
    for k, cp, cn, core in system.cores:
        if core.neg != GROUND or core.pos == GROUND or core.pos in controls:
            continue
        o = system.index[core.pos]
        if o in held or o in (cp, cn):
            continue
        held.add(o)
        subs.append((o, k, cp, cn, core))
    drop = {p for p, _, _ in known} | {k for _, k, _ in known} | {o for o, *_ in subs} | {s[1] for s in subs}
    keep = np.array([i for i in range(system.size) if i not in drop], dtype=int)
    return _Reduction(keep, tuple(known), tuple(subs))


def _reduced_solve(system: MnaSystem, f: np.ndarray, y: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Solve y x = b at every frequency after eliminating the planned unknowns; returns the full x (n_freq, n)."""
    red = system.reduction
    nf, n = y.shape[0], system.size
    dtype = np.result_type(y.dtype, np.asarray(b).dtype)
    bb = np.empty((nf, n), dtype=dtype)
    bb[:] = b
    rows = [p for p, _, _ in red.known] + [o for o, *_ in red.subs]
    kept_rows = y[:, rows, :].copy()
    gains = []
    for o, k, cp, cn, core in red.subs:
        a = core.gain(f) if np.any(f) else np.full(nf, core.a0)
        gains.append(a)
        col = y[:, :, o].copy()
        if cp >= 0:
            y[:, :, cp] += col * a[:, None]
        if cn >= 0:
            y[:, :, cn] -= col * a[:, None]
        bb -= col * b[k]
    values = []
    for p, k, sign in red.known:
        val = sign * b[k]
        values.append(val)
        bb -= y[:, :, p] * val
    keep = red.keep
    x = np.zeros((nf, n), dtype=np.result_type(dtype, complex) if np.iscomplexobj(y) else dtype)
    if keep.size:
        x[:, keep] = _solve(y[:, keep[:, None], keep[None, :]], bb[:, keep, None])[..., 0]
    for (p, _, _), val in zip(red.known, values, strict=True):
        x[:, p] = val
    for (o, k, cp, cn, _), a in zip(red.subs, gains, strict=True):
        vp = x[:, cp] if cp >= 0 else 0.0
        vn = x[:, cn] if cn >= 0 else 0.0
        x[:, o] = a * (vp - vn) + b[k]
    branches = [k for _, k, _ in red.known] + [s[1] for s in red.subs]
    for r, (row, k) in enumerate(zip(rows, branches, strict=True)):
        coeff = kept_rows[:, r, :]
        x[:, k] = (b[row] - np.einsum("fj,fj->f", coeff, x)) / coeff[:, k]
    return x


def _solve(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    try:
        x = np.linalg.solve(a, b)
    except np.linalg.LinAlgError:
        raise SingularCircuitError("the nodal matrix is singular (no unique operating point)") from None
    if not np.all(np.isfinite(x)):
        raise SingularCircuitError("the nodal matrix is singular (the solution is not finite)")
    return x


def assemble(netlist: Netlist, ac_excitation: Mapping[str, complex] | None = None) -> MnaSystem:
    """Stamp every element into G, C, b_dc and b_ac.

    ``ac_excitation`` (source name -> phasor) replaces the declared AC values: sources not named get 0.
    """
    nodes = netlist.nodes()
    branches = tuple(e.name for e in netlist.elements if isinstance(e, BRANCH_KINDS))
    node_map = {n: i for i, n in enumerate(nodes)}
    node_map[GROUND] = -1
    n = len(nodes) + len(branches)
    target = StampTarget(
        g=np.zeros((n, n)), c=np.zeros((n, n)), b_dc=np.zeros(n), b_ac=np.zeros(n, dtype=complex),
        node=node_map, branch={b: len(nodes) + i for i, b in enumerate(branches)},
        ac_override=None if ac_excitation is None else dict(ac_excitation),
    )
    if ac_excitation is not None:
        names = {e.name for e in netlist.elements if isinstance(e, (VoltageSource, CurrentSource))}
        unknown = sorted(set(ac_excitation) - names)
        if unknown:
            raise KeyError(f"no independent source named {', '.join(unknown)}")
    for e in netlist.elements:
        STAMPS[type(e)](target, e)
    index = {nd: i for i, nd in enumerate(nodes)}
    return MnaSystem(netlist, nodes, branches, index, target.g, target.c, target.b_dc, target.b_ac,
                     tuple(target.cores))


def check_connectivity(netlist: Netlist, dc: bool) -> None:
    """Raise SingularCircuitError for nodes with no path to ground or for a loop of voltage-defined branches.

    Paths are resistors, voltage sources, VCVS and op-amp core outputs and (unless ``dc``) capacitors; current sources,
    VCCS outputs and controlling inputs carry no defined path.
    """
    parent: dict[str, str] = {}

    def find(x: str) -> str:
        parent.setdefault(x, x)
        while parent[x] != x:
            parent[x] = parent[parent[x]]
            x = parent[x]
        return x

    vparent: dict[str, str] = {}

    def vfind(x: str) -> str:
        vparent.setdefault(x, x)
        while vparent[x] != x:
            vparent[x] = vparent[vparent[x]]
            x = vparent[x]
        return x

    loops: list[str] = []
    for e in netlist.elements:
        for nd in element_nodes(e):
            find(nd)
        if isinstance(e, Resistor) or (isinstance(e, Capacitor) and not dc):
            parent[find(e.a)] = find(e.b)
        elif isinstance(e, (VoltageSource, Vcvs, OpAmpCore)):
            parent[find(e.pos)] = find(e.neg)
            ra, rb = vfind(e.pos), vfind(e.neg)
            if ra == rb:
                loops.append(e.name)
            else:
                vparent[ra] = rb
        elif not isinstance(e, (CurrentSource, Vccs, Capacitor)):  # pragma: no cover - closed set of kinds
            raise TypeError(f"unknown element {e!r}")
    if loops:
        raise SingularCircuitError(
            f"loop of ideal voltage sources closed by {', '.join(loops)}: their currents are undefined")
    root = find(GROUND)
    floating = sorted(nd for nd in parent if find(nd) != root)
    if floating:
        where = "at DC (capacitors open)" if dc else "at any frequency"
        err = SingularCircuitError(f"no path to ground {where} from node(s) {', '.join(floating)}")
        err.nodes = tuple(floating)  # type: ignore[attr-defined]
        raise err


@dataclass(frozen=True, eq=False)
class DcSolution:
    """DC operating point: node voltages and the branch currents of voltage sources and VCVSs."""

    system: MnaSystem
    x: np.ndarray

    def voltage(self, node: str) -> float:
        """Voltage of ``node`` to ground (V)."""
        i = self.system.node_index(node)
        return 0.0 if i < 0 else float(self.x[i])

    def current(self, name: str) -> float:
        """Branch current of a voltage source or VCVS (A), flowing pos → source → neg."""
        return float(self.x[self.system.branch_index(name)])

    def voltages(self) -> dict[str, float]:
        """Every node voltage by name."""
        return {nd: float(self.x[i]) for i, nd in enumerate(self.system.nodes)}


@dataclass(frozen=True, eq=False)
class AcSolution:
    """Small-signal phasors at every frequency; arrays of shape (n_freq,)."""

    system: MnaSystem
    freqs: np.ndarray
    x: np.ndarray

    def voltage(self, node: str) -> np.ndarray:
        """Complex voltage of ``node`` at every frequency."""
        i = self.system.node_index(node)
        return np.zeros(self.freqs.size, dtype=complex) if i < 0 else self.x[:, i]

    def differential(self, pos: str, neg: str) -> np.ndarray:
        """v(pos) − v(neg) at every frequency."""
        return self.voltage(pos) - self.voltage(neg)

    def current(self, name: str) -> np.ndarray:
        """Complex branch current of a voltage source or VCVS at every frequency."""
        return self.x[:, self.system.branch_index(name)]

    def magnitude(self, node: str, freq_index: int) -> float:
        """|v(node)| at one grid point, as a Python float."""
        return float(abs(self.voltage(node)[freq_index]))


def solve_dc(netlist: Netlist) -> DcSolution:
    """DC operating point (capacitors open)."""
    system = assemble(netlist)
    return DcSolution(system, system.solve_dc_vector())


def solve_ac(
    netlist: Netlist,
    freqs: Sequence[float] | np.ndarray,
    ac_excitation: Mapping[str, complex] | None = None,
) -> AcSolution:
    """Small-signal response at every frequency (Hz), excited by the sources' AC values (or ``ac_excitation``)."""
    f = np.atleast_1d(np.asarray(freqs, dtype=float))
    system = assemble(netlist, ac_excitation)
    return AcSolution(system, f, system.solve_freqs(f))


def transfer(netlist: Netlist, source: str, node: str, freqs: Sequence[float] | np.ndarray,
             ref: str = GROUND) -> np.ndarray:
    """v(node) − v(ref) per unit AC excitation of the independent source ``source``, all other sources zeroed."""
    sol = solve_ac(netlist, freqs, {source: 1.0})
    return sol.differential(node, ref)


def impedance(netlist: Netlist, node: str, freqs: Sequence[float] | np.ndarray, ref: str = GROUND) -> np.ndarray:
    """Impedance seen between ``node`` and ``ref`` with every independent source zeroed (1 A test current)."""
    probe = CurrentSource(TEST_CURRENT, ref, node, dc=0.0, ac=1.0)
    sol = solve_ac(netlist.with_elements(probe), freqs, {TEST_CURRENT: 1.0})
    return sol.differential(node, ref)


def log_grid(f_lo: float, f_hi: float, per_decade: int = 20) -> np.ndarray:
    """Logarithmic frequency grid from ``f_lo`` to ``f_hi`` inclusive with ``per_decade`` points a decade."""
    if not (0 < f_lo < f_hi):
        raise ValueError(f"need 0 < f_lo < f_hi, got {f_lo!r}, {f_hi!r}")
    decades = np.log10(f_hi / f_lo)
    n = max(2, int(np.ceil(decades * per_decade)) + 1)
    return np.logspace(np.log10(f_lo), np.log10(f_hi), n)


def node_voltages(sol: DcSolution, nodes: Iterable[str]) -> dict[str, float]:
    """The DC voltage of each listed node as Python floats."""
    return {nd: sol.voltage(nd) for nd in nodes}
