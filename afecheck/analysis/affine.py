"""Affine forms: a net's DC value as a nominal plus a gain times each independent quantity's deviation.

A design's independent quantities (see :mod:`afecheck.analysis.corners`) are each one value per corner
wherever they appear: a rail (``rail:VCC``), a declared signal (``signal:IN`` for a net, ``source:V1`` for a
signal-source component), an op-amp's offset voltage, bias current and offset current (``vos:U1``, ``ib:U1``,
``ios:U1``). A quantity's deviation δ from its nominal lies in [lo, hi] (offsets and bias currents at both
signs). Through a linear circuit every node is

    v = v0 + Σ_k g_k·δ_k,

so its extremes are exact: v0 + Σ_k min/max(g_k·lo_k, g_k·hi_k) (:meth:`AffineForm.extremes`). The same form
gives a DC-error budget: the worst case Σ|g_k|·Δ_k (:meth:`AffineForm.worst_case`) or, with each quantity's
σ, the root-sum-square √Σ(g_k·σ_k)².

Where a gain itself depends on a swept element (a thermistor's temperature), a :class:`SweptForm` holds one
affine form per point of a joint grid over those temperatures (the swept thermistors' product grid), and its
extremes are the extremes over that grid, refined by a parabola through the three points around an interior
extreme when one thermistor is swept.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

BASE_POINTS = 33  # points of a thermistor's own temperature grid; unit grids take every 1st, 2nd, 4th... point


@dataclass(frozen=True)
class Term:
    """One independent quantity in a form: the gain from its deviation, and the deviation's range [lo, hi]."""

    gain: float
    lo: float
    hi: float

    def extremes(self) -> tuple[float, float]:
        """(least, largest) contribution gain·δ over δ ∈ [lo, hi]."""
        a, b = self.gain * self.lo, self.gain * self.hi
        return (a, b) if a <= b else (b, a)


@dataclass(frozen=True)
class AffineForm:
    """v = nominal + Σ gain·δ over the terms (keyed by quantity); every number a Python float."""

    nominal: float
    terms: Mapping[str, Term]

    def extremes(self) -> tuple[float, float]:
        """The exact (lowest, highest) value over every quantity's range: each term at its own extreme."""
        lo = hi = self.nominal
        for t in self.terms.values():
            a, b = t.extremes()
            lo += a
            hi += b
        return float(lo), float(hi)

    def worst_case(self) -> float:
        """Σ |gain|·max(|lo|, |hi|): the largest departure from nominal any corner can make."""
        return float(sum(abs(t.gain) * max(abs(t.lo), abs(t.hi)) for t in self.terms.values()))

    def contribution(self, key: str) -> tuple[float, float]:
        """(least, largest) contribution of one quantity (0, 0 when the form does not depend on it)."""
        t = self.terms.get(key)
        return (0.0, 0.0) if t is None else t.extremes()


@dataclass(frozen=True, eq=False)
class SweptForm:
    """A net's value over a joint grid of swept thermistor temperatures: one affine form per grid point.

    ``swept`` are the thermistors (sorted refs) the value depends on, ``step`` the stride into each one's
    :data:`BASE_POINTS`-point temperature grid, ``nominal`` shape (P,) and ``gains`` shape (P, K) over ``keys``
    with deviation ranges ``lo``/``hi`` (K,). Points are in row-major order of the product grid, so the middle
    point P // 2 is every thermistor at mid-range. Without swept thermistors P = 1.
    """

    keys: tuple[str, ...]
    lo: np.ndarray
    hi: np.ndarray
    swept: tuple[str, ...]
    step: int
    nominal: np.ndarray
    gains: np.ndarray

    @property
    def points(self) -> int:
        """Number of grid points P."""
        return int(self.nominal.shape[0])

    def at(self, point: int | None = None) -> AffineForm:
        """The affine form at one grid point (default: every thermistor at mid-range)."""
        p = self.points // 2 if point is None else point
        terms = {k: Term(float(self.gains[p, i]), float(self.lo[i]), float(self.hi[i]))
                 for i, k in enumerate(self.keys) if self.gains[p, i] != 0.0}
        return AffineForm(float(self.nominal[p]), terms)

    def bounds(self) -> tuple[np.ndarray, np.ndarray]:
        """(lowest, highest) at each grid point, exact over the quantities: shape (P,) each."""
        a = self.gains * self.lo
        b = self.gains * self.hi
        return self.nominal + np.minimum(a, b).sum(axis=1), self.nominal + np.maximum(a, b).sum(axis=1)

    def extremes(self) -> tuple[float, float]:
        """(lowest, highest) over every quantity and every grid point, refined between grid points."""
        lo, hi = self.bounds()
        one = len(self.swept) == 1
        return -float(refined_max(-lo[:, None], one)[0]), float(refined_max(hi[:, None], one)[0])



def refined_max(values: np.ndarray, one_axis: bool) -> np.ndarray:
    """Column maxima of ``values`` (P, n); with one swept axis, the vertex of a parabola through the three
    points around an interior maximum (the curve is smooth in temperature, so the error is third order)."""
    p = values.shape[0]
    if p == 1:
        return values[0]
    arg = values.argmax(axis=0)
    cols = np.arange(values.shape[1])
    best = values[arg, cols]
    interior = (arg > 0) & (arg < p - 1)
    if not one_axis or not interior.any():
        return best
    i = np.clip(arg, 1, p - 2)
    y0, y1, y2 = values[i - 1, cols], values[i, cols], values[i + 1, cols]
    den = y0 - 2.0 * y1 + y2
    bend = interior & (den < 0)
    vertex = y1 - 0.125 * (y2 - y0) ** 2 / np.where(bend, den, -1.0)
    return np.where(bend, np.maximum(best, vertex), best)


def constant_form(value: float) -> SweptForm:
    """A value that no quantity moves."""
    return SweptForm((), np.zeros(0), np.zeros(0), (), 1, np.array([float(value)]), np.zeros((1, 0)))


def quantity_form(key: str, nominal: float, lo: float, hi: float) -> SweptForm:
    """One quantity: nominal + δ with δ ∈ [lo, hi]."""
    return SweptForm((key,), np.array([lo]), np.array([hi]), (), 1, np.array([float(nominal)]), np.ones((1, 1)))


def unit_step(dims: int, max_points: int) -> int:
    """Stride into the base grid for a product grid over ``dims`` thermistors of at most ``max_points`` points."""
    step = 1
    while step < BASE_POINTS - 1 and ((BASE_POINTS - 1) // step + 1) ** dims > max_points:
        step *= 2
    return step


def grid_coords(dims: int, step: int) -> np.ndarray:
    """Base-grid indices of every point of the product grid, shape (P, dims), row-major."""
    axis = np.arange(0, BASE_POINTS, step)
    if dims == 0:
        return np.zeros((1, 0), dtype=int)
    mesh = np.meshgrid(*([axis] * dims), indexing="ij")
    return np.stack([m.ravel() for m in mesh], axis=1)


def rows_on(form: SweptForm, swept: tuple[str, ...], coords: np.ndarray) -> np.ndarray:
    """The row of ``form`` at each point of a grid over ``swept`` (a superset of the form's own) with ``coords``."""
    if not form.swept:
        return np.zeros(coords.shape[0], dtype=int)
    n = (BASE_POINTS - 1) // form.step + 1
    idx = [coords[:, swept.index(t)] // form.step for t in form.swept]
    return np.ravel_multi_index(tuple(idx), (n,) * len(form.swept))
