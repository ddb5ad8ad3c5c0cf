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

from afecheck.analysis.affine import SweptForm, combine, refined_max
from afecheck.analysis.corners import UnitGrid
from afecheck.analysis.mna import MnaSystem
from afecheck.analysis.netlist import CurrentSource, OpAmpCore, Resistor, VoltageSource
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
        return combine(self.keys, self.lo, self.hi, self.grid.swept, self.grid.step,
                       scale * self.nominal[:, i].copy(), scale * self.gains[:, i, :].copy())

    def bounds(self) -> tuple[np.ndarray, np.ndarray]:
        """(lowest, highest) of every unknown over the quantities and the grid, refined between grid points."""
        a = self.gains * self.lo
        b = self.gains * self.hi
        low = self.nominal + np.minimum(a, b).sum(axis=2)
        high = self.nominal + np.maximum(a, b).sum(axis=2)
        one = len(self.grid.swept) == 1
        return -refined_max(-low, one), refined_max(high, one)


def solve_forms(system: MnaSystem, forms: Mapping[str, SweptForm], varying: Mapping[str, np.ndarray],
                grid: UnitGrid) -> DcForms:
    """Solve the unit at DC once per source and grid point and compose every unknown's form."""
    n = system.size
    names: list[str] = []
    cols: list[np.ndarray] = []
    values: list[float] = []
    for e in system.netlist.elements:
        if e.name not in forms or not isinstance(e, (VoltageSource, CurrentSource, OpAmpCore)):
            continue
        b = np.zeros(n)
        if isinstance(e, CurrentSource):
            pos, neg = system.node_index(e.pos), system.node_index(e.neg)
            if pos >= 0:
                b[pos] -= 1.0
            if neg >= 0:
                b[neg] += 1.0
            values.append(e.dc)
        elif isinstance(e, OpAmpCore):
            b[system.branch_index(e.name)] = e.a0
            values.append(e.vos)
        else:
            b[system.branch_index(e.name)] = 1.0
            values.append(e.dc)
        names.append(e.name)
        cols.append(b)
    bmat = np.column_stack(cols) if cols else np.zeros((n, 0))
    rest = system.b_dc - bmat @ np.asarray(values, dtype=float)
    if np.any(rest):
        names.append(_REST)
        bmat = np.column_stack([bmat, rest])
    x = _solve_points(system, bmat, varying, grid.points)
    keys: dict[str, tuple[float, float]] = {}
    for f in forms.values():
        for k, lo, hi in zip(f.keys, f.lo, f.hi, strict=True):
            keys.setdefault(k, (float(lo), float(hi)))
    order = tuple(keys)
    where = {k: i for i, k in enumerate(order)}
    p = grid.points
    nom = np.zeros((p, len(names)))
    gs = np.zeros((p, len(names), len(order)))
    for j, name in enumerate(names):
        if name == _REST:
            nom[:, j] = 1.0
            continue
        f = forms[name]
        rows = grid.rows(f)
        nom[:, j] = f.nominal[rows]
        if f.keys:
            gs[:, j, [where[k] for k in f.keys]] = f.gains[rows]
    nominal = (x @ nom[:, :, None])[..., 0]
    gains = x @ gs
    if nominal.shape[0] != p:
        nominal = np.broadcast_to(nominal, (p, n)).copy()
        gains = np.broadcast_to(gains, (p, n, len(order))).copy()
    lo = np.array([keys[k][0] for k in order])
    hi = np.array([keys[k][1] for k in order])
    return DcForms(tuple(names), x, order, lo, hi, nominal, gains, grid)


def _solve_points(system: MnaSystem, bmat: np.ndarray, varying: Mapping[str, np.ndarray], points: int) -> np.ndarray:
    """G⁻¹·B at every grid point, shape (P, n, m); (1, n, m) when no resistor moves."""
    g = system.g
    if varying:
        mats = np.repeat(g[None, :, :], points, axis=0)
        for name, r in varying.items():
            el = system.netlist.element(name)
            if not isinstance(el, Resistor):
                continue
            dg = 1.0 / r - 1.0 / el.value
            a, b = system.node_index(el.a), system.node_index(el.b)
            for i, j, sgn in ((a, a, 1.0), (b, b, 1.0), (a, b, -1.0), (b, a, -1.0)):
                if i >= 0 and j >= 0:
                    mats[:, i, j] += sgn * dg
    else:
        mats = g[None, :, :]
    try:
        x = np.linalg.solve(mats, np.broadcast_to(bmat, (mats.shape[0], *bmat.shape)))
    except np.linalg.LinAlgError:
        raise SingularCircuitError("the DC nodal matrix is singular") from None
    if not np.all(np.isfinite(x)):
        raise SingularCircuitError("the DC solution is not finite")
    return x
