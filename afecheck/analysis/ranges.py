"""DC values of a solve unit as affine forms over the design's quantities, on the unit's temperature grid.

Every independent source of the unit's netlist (rails, signals, Thevenin inputs, each op-amp's Vos and bias
currents) is one column of the DC solve; each column's solution times the source's own form, summed, gives
every node's form (superposition is exact in a linear circuit). Resistors that move with temperature (a
thermistor, a divider's Thevenin resistance) make the nodal matrix differ from point to point of the grid, so
the solve is batched over the grid points; the gains then depend on temperature jointly with the sources.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from afecheck.analysis.affine import SweptForm, refined_max
from afecheck.analysis.corners import UnitGrid
from afecheck.analysis.mna import MnaSystem
from afecheck.analysis.netlist import CurrentSource, OpAmpCore, Resistor, VoltageSource
from afecheck.analysis.solve_memo import shared
from afecheck.errors import SingularCircuitError

_REST = "#rest"


@dataclass(frozen=True, eq=False)
class DcForms:
    """Each unknown's form on the unit grid: ``nominal`` (P, n), ``gains`` (P, n, K); ``x`` (Px, n, m) is the
    solution per unit of each source in ``sources`` (Px = 1 when nothing in the unit moves with temperature)."""

    sources: tuple[str, ...]
    x: np.ndarray
    keys: tuple[str, ...]
    lo: np.ndarray
    hi: np.ndarray
    nominal: np.ndarray
    gains: np.ndarray
    grid: UnitGrid

    def form(self, i: int, scale: float = 1.0) -> SweptForm:
        """The form of unknown ``i`` (times ``scale``: −1 turns a branch current into the current it delivers)."""
        return SweptForm(self.keys, self.lo, self.hi, self.grid.swept, self.grid.step,
                         scale * self.nominal[:, i], scale * self.gains[:, i, :])

    def bounds(self, rows: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(lowest, highest) over the quantities and the grid, refined between grid points, of the unknowns
        ``rows`` (the others are NaN)."""
        g = self.gains[:, rows, :]
        a = g * self.lo
        b = g * self.hi
        nominal = self.nominal[:, rows]
        one = len(self.grid.swept) == 1
        low = np.full(self.nominal.shape[1], np.nan)
        high = low.copy()
        low[rows] = -refined_max(-(nominal + np.minimum(a, b).sum(axis=2)), one)
        high[rows] = refined_max(nominal + np.maximum(a, b).sum(axis=2), one)
        return low, high


def solve_forms(system: MnaSystem, forms: Mapping[str, SweptForm], varying: Mapping[str, np.ndarray],
                grid: UnitGrid, memo: tuple[dict, tuple] | None = None) -> DcForms:
    """Solve the unit at DC once per source and grid point and compose every unknown's form; ``memo`` (cache,
    the netlist's numeric key) shares the solve with an earlier unit of the same circuit (solve_memo)."""
    n = system.size
    names: list[str] = []
    entries: list[tuple[int, int, float]] = []
    values: list[float] = []
    node_index, branch_index = system.node_index, system.branch_index
    for e in system.netlist.elements:
        if e.name not in forms:
            continue
        j = len(names)
        if isinstance(e, CurrentSource):
            entries += [(node_index(e.pos), j, -1.0), (node_index(e.neg), j, 1.0)]
            values.append(e.dc)
        elif isinstance(e, OpAmpCore):
            entries.append((branch_index(e.name), j, e.a0))
            values.append(e.vos)
        elif isinstance(e, VoltageSource):
            entries.append((branch_index(e.name), j, 1.0))
            values.append(e.dc)
        else:
            continue
        names.append(e.name)
    bmat = np.zeros((n, len(names) + 1))
    for i, j, v in entries:
        if i >= 0:
            bmat[i, j] += v
    rest = system.b_dc - bmat[:, :-1] @ np.asarray(values, dtype=float)
    if np.any(rest):
        names.append(_REST)
        bmat[:, -1] = rest
    else:
        bmat = bmat[:, :-1]
    x = _solve_points(system, bmat, varying, grid.points) if memo is None else shared(memo[0], (
        "points", memo[1], bmat.shape, bmat.tobytes(), grid.points, *_varying_key(system, varying)),
        lambda: _solve_points(system, bmat, varying, grid.points))
    where: dict[str, int] = {}
    lo_parts, hi_parts = [], []
    for name in names:
        f = forms.get(name)
        if f is None:
            continue
        fresh = [i for i, k in enumerate(f.keys) if k not in where]
        for i in fresh:
            where[f.keys[i]] = len(where)
        if fresh:
            lo_parts.append(f.lo[fresh])
            hi_parts.append(f.hi[fresh])
    order = tuple(where)
    p = grid.points
    nom = np.zeros((p, len(names)))
    gs = np.zeros((p, len(names), len(order)))
    for j, name in enumerate(names):
        if name == _REST:
            nom[:, j] = 1.0
            continue
        f = forms[name]
        if f.swept:
            rows = grid.rows(f)
            nom[:, j] = f.nominal[rows]
            if f.keys:
                gs[:, j, [where[k] for k in f.keys]] = f.gains[rows]
        else:
            nom[:, j] = f.nominal[0]
            if f.keys:
                gs[:, j, [where[k] for k in f.keys]] = f.gains[0]
    nominal = (x @ nom[:, :, None])[..., 0]
    gains = x @ gs
    lo = np.concatenate(lo_parts) if lo_parts else np.zeros(0)
    hi = np.concatenate(hi_parts) if hi_parts else np.zeros(0)
    return DcForms(tuple(names), x, order, lo, hi, nominal, gains, grid)


def _varying_key(system: MnaSystem, varying: Mapping[str, np.ndarray]) -> list[tuple]:
    """The moving resistors by position and value, for the solve memo."""
    out = []
    for name, r in varying.items():
        el = system.netlist.element(name)
        if isinstance(el, Resistor):
            r = np.asarray(r, dtype=float)
            out.append((system.node_index(el.a), system.node_index(el.b), el.value, r.shape, r.tobytes()))
    return out


def _solve_points(system: MnaSystem, bmat: np.ndarray, varying: Mapping[str, np.ndarray], points: int) -> np.ndarray:
    """G⁻¹·B at every grid point, shape (P, n, m); (1, n, m) when no resistor moves.

    A resistor that moves adds dg·u·uᵀ to G (u = e_a − e_b), so one solve of G and the Woodbury identity give
    every point: X_p = X0 − Z·(I + D_p·UᵀZ)⁻¹·D_p·UᵀX0 with Z = G⁻¹U and D_p the conductance changes at p.
    """
    g = system.g
    cols: list[np.ndarray] = []
    changes: list[np.ndarray] = []
    for name, r in varying.items():
        el = system.netlist.element(name)
        if not isinstance(el, Resistor):
            continue
        u = np.zeros(g.shape[0])
        a, b = system.node_index(el.a), system.node_index(el.b)
        if a >= 0:
            u[a] = 1.0
        if b >= 0:
            u[b] = -1.0
        cols.append(u)
        changes.append(1.0 / np.asarray(r, dtype=float) - 1.0 / el.value)
    m = bmat.shape[1]
    try:
        sol = np.linalg.solve(g, np.column_stack([bmat, *cols]) if cols else bmat)
    except np.linalg.LinAlgError:
        raise SingularCircuitError("the DC nodal matrix is singular") from None
    x0 = sol[:, :m]
    if cols:
        u = np.column_stack(cols)
        z = sol[:, m:]
        d = np.stack(changes, axis=1)  # (P, k)
        k = u.shape[1]
        a = np.eye(k)[None] + d[:, :, None] * (u.T @ z)[None]
        rhs = d[:, :, None] * (u.T @ x0)[None]
        try:
            y = np.linalg.solve(a, rhs)
        except np.linalg.LinAlgError:
            raise SingularCircuitError("the DC nodal matrix is singular at a temperature point") from None
        x = x0[None] - z[None] @ y
    else:
        x = x0[None]
    if not np.all(np.isfinite(x)):
        raise SingularCircuitError("the DC solution is not finite")
    return x
