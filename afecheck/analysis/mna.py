"""Modified nodal analysis: assemble a netlist once, then solve at DC or over many frequencies in one batch.

``solve_dc(netlist)`` gives node voltages and source currents; ``solve_ac(netlist, freqs)`` solves every
frequency as one batched ``numpy.linalg.solve`` over an array of shape (n_freq, n, n). ``transfer`` gives the
response at a node to one named source, ``impedance`` the impedance seen at a node (1 A test current, every
independent source zeroed). A floating node or a loop of voltage sources raises SingularCircuitError naming
the nodes or elements, found by a connectivity check before the solve.

Before the batched solve, nodes held by a voltage source to ground and the output nodes of op-amp cores are
eliminated exactly (their voltages are known or follow from the kept unknowns; their branch currents follow
from their KCL rows afterwards), so a stage's matrices are a few rows; callers still see the full vector.
Each netlist object is assembled once and its connectivity verdict kept (:func:`system_of`).

Lower-level use (per-stage code that needs several right-hand sides): ``system_of(netlist)`` or
``assemble(netlist, ac_excitation)`` gives an :class:`MnaSystem` with ``g``, ``c``, ``b_dc``, ``b_ac``,
``cores`` and the index of every unknown; ``system.solve_freqs(freqs, rhs=...)`` solves for any right-hand side.
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
    Inductor,
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
    grounded: tuple[tuple[int, int, float], ...] = ()
    controls: frozenset[int] = frozenset()

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
        return _reduced_solve(self, f, self.b_ac if rhs is None else rhs)

    def solve_dc_vector(self, check: bool = True) -> np.ndarray:
        """Unknowns of the DC operating point (capacitors open, DC source values)."""
        if check:
            check_connectivity(self.netlist, dc=True)
        return _reduced_solve(self, np.zeros(1), self.b_dc)[0].real.copy()


@dataclass(frozen=True, eq=False)
class _Reduction:
    """Unknown pairs the solver removes exactly before the batched solve, and the pieces it needs.

    Known nodes: nodes held by a voltage source to ground; their voltage is the source value (times ``sign``).
    Substituted nodes (``subs``): outputs of op-amp cores that control nothing,
    v(node) = A(jω)·(v(cpos) − v(cneg)) + b[branch]. Each eliminated branch current follows afterwards from its
    node's KCL row. Only the kept rows and columns (``g_kk``, ``c_kk``) and the kept rows of the eliminated
    columns (``g_ke``, ``c_ke``: known nodes first, then substituted ones) are built per frequency.
    """

    keep: np.ndarray
    where: np.ndarray
    known_nodes: np.ndarray
    known_branches: np.ndarray
    known_signs: np.ndarray
    subs: tuple[tuple[int, int, int, int, OpAmpCore], ...]
    kept_cores: tuple[tuple[int, int, int, OpAmpCore], ...]
    g_kk: np.ndarray
    c_kk: np.ndarray
    g_ke: np.ndarray
    c_ke: np.ndarray
    rows: np.ndarray
    row_branch: np.ndarray
    row_diag: np.ndarray
    g_rows: np.ndarray
    c_rows: np.ndarray


def _plan_reduction(system: MnaSystem) -> _Reduction:
    known: list[tuple[int, int, float]] = []
    held: set[int] = set()
    for p, k, sign in system.grounded:
        if p not in held:
            held.add(p)
            known.append((p, k, sign))
    subs: list[tuple[int, int, int, int, OpAmpCore]] = []
    for k, cp, cn, core in system.cores:
        if core.neg != GROUND or core.pos == GROUND:
            continue
        o = system.index[core.pos]
        if o in system.controls or o in held or o in (cp, cn):
            continue
        held.add(o)
        subs.append((o, k, cp, cn, core))
    sub_branches = {s[1] for s in subs}
    known_nodes = [p for p, _, _ in known]
    rows = known_nodes + [o for o, *_ in subs]
    row_branch = [k for _, k, _ in known] + [s[1] for s in subs]
    drop = set(rows) | set(row_branch)
    keep = np.array([i for i in range(system.size) if i not in drop], dtype=int)
    where = np.full(system.size, -1, dtype=int)
    where[keep] = np.arange(keep.size)
    g_k, c_k = system.g[keep], system.c[keep]
    g_rows, c_rows = system.g[rows], system.c[rows]
    return _Reduction(
        keep=keep, where=where, known_nodes=np.array(known_nodes, dtype=int),
        known_branches=np.array([k for _, k, _ in known], dtype=int),
        known_signs=np.array([sg for _, _, sg in known], dtype=float), subs=tuple(subs),
        kept_cores=tuple(c for c in system.cores if c[0] not in sub_branches),
        g_kk=g_k[:, keep], c_kk=c_k[:, keep], g_ke=g_k[:, rows], c_ke=c_k[:, rows],
        rows=np.array(rows, dtype=int), row_branch=np.array(row_branch, dtype=int),
        row_diag=g_rows[np.arange(len(rows)), row_branch] if rows else np.zeros(0),
        g_rows=g_rows, c_rows=c_rows,
    )


def _reduced_solve(system: MnaSystem, f: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Solve (G + jωC + core terms) x = b at every frequency (Hz) on the kept unknowns; returns the full x."""
    red = system.reduction
    nf, n, m = f.size, system.size, red.keep.size
    n_known = red.known_nodes.size
    dc = not np.any(f)
    b = np.asarray(b)
    if dc:
        y = np.repeat(red.g_kk[None].astype(np.result_type(b.dtype, float)), nf, axis=0)
        cols = np.repeat(red.g_ke[None].astype(y.dtype), nf, axis=0)
    else:
        jw = (1j * TWO_PI * f)[:, None, None]
        y = red.g_kk + jw * red.c_kk
        cols = red.g_ke + jw * red.c_ke
    rhs = np.repeat(b[red.keep][None].astype(np.result_type(b.dtype, y.dtype)), nf, axis=0)
    where = red.where
    if not dc:
        for k, cp, cn, core in red.kept_cores:
            delta = core.gain(f) - core.a0
            for node, sgn in ((cp, -1.0), (cn, 1.0)):
                if node < 0:
                    continue
                if where[node] >= 0:
                    y[:, where[k], where[node]] += sgn * delta
                else:
                    slot = int(np.nonzero(red.rows == node)[0][0])
                    cols[:, where[k], slot] += sgn * delta
    values = red.known_signs * b[red.known_branches]
    value_of = dict(zip(red.known_nodes.tolist(), values.tolist(), strict=True))
    gains = []
    for i, (_, k, cp, cn, core) in enumerate(red.subs):
        a = np.full(nf, core.a0) if dc else core.gain(f)
        gains.append(a)
        col = cols[:, :, n_known + i]
        rhs -= col * b[k]
        for node, sgn in ((cp, 1.0), (cn, -1.0)):
            if node < 0:
                continue
            term = col * (sgn * a)[:, None]
            if where[node] >= 0:
                y[:, :, where[node]] += term
            else:
                rhs -= term * value_of[node]
    if n_known:
        rhs -= cols[:, :, :n_known] @ values
    x = np.zeros((nf, n), dtype=np.result_type(y.dtype, rhs.dtype))
    if m:
        x[:, red.keep] = _solve_small(y, rhs)
    x[:, red.known_nodes] = values
    for (o, k, cp, cn, _), a in zip(red.subs, gains, strict=True):
        vp = x[:, cp] if cp >= 0 else 0.0
        vn = x[:, cn] if cn >= 0 else 0.0
        x[:, o] = a * (vp - vn) + b[k]
    if red.rows.size:
        flow = x @ red.g_rows.T
        if not dc:
            flow = flow + (1j * TWO_PI * f)[:, None] * (x @ red.c_rows.T)
        x[:, red.row_branch] = (b[red.rows] - flow) / red.row_diag
    return x


def _solve_small(y: np.ndarray, rhs: np.ndarray) -> np.ndarray:
    """Batched y x = rhs; one and two unknowns in closed form (no per-matrix LAPACK call), else numpy."""
    m = y.shape[-1]
    if m > 2:
        return _solve(y, rhs[:, :, None])[..., 0]
    with np.errstate(divide="ignore", invalid="ignore"):
        if m == 1:
            det = y[:, 0, 0]
            x = rhs / det[:, None]
        else:
            det = y[:, 0, 0] * y[:, 1, 1] - y[:, 0, 1] * y[:, 1, 0]
            x = np.empty_like(rhs)
            x[:, 0] = (rhs[:, 0] * y[:, 1, 1] - y[:, 0, 1] * rhs[:, 1]) / det
            x[:, 1] = (y[:, 0, 0] * rhs[:, 1] - rhs[:, 0] * y[:, 1, 0]) / det
    if np.any(det == 0) or not np.all(np.isfinite(x)):
        raise SingularCircuitError("the nodal matrix is singular (no unique operating point)")
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
    grounded: list[tuple[int, int, float]] = []
    controls: set[int] = set()
    for e in netlist.elements:
        STAMPS[type(e)](target, e)
        if isinstance(e, VoltageSource) and (e.pos == GROUND) != (e.neg == GROUND):
            node, sign = (e.pos, 1.0) if e.neg == GROUND else (e.neg, -1.0)
            grounded.append((node_map[node], target.branch[e.name], sign))
        elif isinstance(e, (Vcvs, Vccs, OpAmpCore)):
            controls.update(i for i in (node_map[e.cpos], node_map[e.cneg]) if i >= 0)
    index = {nd: i for i, nd in enumerate(nodes)}
    return MnaSystem(netlist, nodes, branches, index, target.g, target.c, target.b_dc, target.b_ac,
                     tuple(target.cores), tuple(grounded), frozenset(controls))


def _memo(netlist: Netlist, key: str, make):  # noqa: ANN001, ANN202 - private cache helper
    """A value computed once per netlist object and kept in its ``__dict__`` (netlists are immutable)."""
    cache = netlist.__dict__.setdefault("_mna_cache", {})
    if key not in cache:
        cache[key] = make()
    return cache[key]


def check_connectivity(netlist: Netlist, dc: bool) -> None:
    """Raise SingularCircuitError for nodes with no path to ground or for a loop of voltage-defined branches.

    Paths are resistors, voltage sources, VCVS and op-amp core outputs and (unless ``dc``) capacitors; current
    sources, VCCS outputs and controlling inputs carry no defined path. The verdict is kept per netlist object.
    """
    error = _memo(netlist, f"connectivity-{dc}", lambda: _connectivity_error(netlist, dc))
    if error is not None:
        raise error


def _connectivity_error(netlist: Netlist, dc: bool) -> SingularCircuitError | None:
    try:
        _check_connectivity(netlist, dc)
    except SingularCircuitError as exc:
        return exc
    return None


def _check_connectivity(netlist: Netlist, dc: bool) -> None:
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
        elif isinstance(e, Inductor):
            parent[find(e.a)] = find(e.b)
            if dc and e.series_resistance == 0:  # a short at DC: a loop of them with sources has no defined current
                ra, rb = vfind(e.a), vfind(e.b)
                if ra == rb:
                    loops.append(e.name)
                else:
                    vparent[ra] = rb
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


def system_of(netlist: Netlist) -> MnaSystem:
    """The assembled system of ``netlist`` with its declared AC values, assembled once per netlist object."""
    return _memo(netlist, "system", lambda: assemble(netlist))


def solve_dc(netlist: Netlist) -> DcSolution:
    """DC operating point (capacitors open)."""
    system = system_of(netlist)
    return DcSolution(system, system.solve_dc_vector())


def solve_ac(
    netlist: Netlist,
    freqs: Sequence[float] | np.ndarray,
    ac_excitation: Mapping[str, complex] | None = None,
) -> AcSolution:
    """Small-signal response at every frequency (Hz), excited by the sources' AC values (or ``ac_excitation``)."""
    f = np.atleast_1d(np.asarray(freqs, dtype=float))
    if ac_excitation is None:
        system = system_of(netlist)
    else:
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
