"""The design's independent quantities and the affine forms of what it holds fixed (rails, references, signals).

Each quantity is one value per corner everywhere it appears (a ratiometric bridge and the stage reference it
shares a rail with move together): a rail over V·(1 ± tolerance), a declared signal over its DC range, each
op-amp's Vos, Ib and Ios over ± their part value, each thermistor over its declared temperature range (the
swept quantity: its base grid of :data:`~afecheck.analysis.affine.BASE_POINTS` temperatures). A net held by a
``vsource`` component follows the net at its other pin plus the source value. A divider node (legs to fixed
nets) is a Thevenin source whose voltage is the conductance-weighted sum of its legs' forms, at each point of
its thermistors' grid.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from functools import cached_property

import numpy as np

from afecheck.analysis.affine import (
    BASE_POINTS,
    SweptForm,
    constant_form,
    grid_coords,
    quantity_form,
    rows_on,
    unit_step,
)
from afecheck.graph.build import Circuit
from afecheck.graph.queries import has_dc_path
from afecheck.sensors.resistive import SWEPT_KINDS, resistance, sweep_key, sweep_range

MAX_POINTS = 300  # at most this many points in one unit's joint temperature grid


@dataclass(frozen=True, eq=False)
class UnitGrid:
    """The joint grid of one solve unit over its swept thermistors: base-grid indices and temperatures."""

    swept: tuple[str, ...]
    step: int
    coords: np.ndarray
    temperatures_c: Mapping[str, np.ndarray]

    @property
    def points(self) -> int:
        """Number of grid points."""
        return int(self.coords.shape[0])

    def rows(self, form: SweptForm) -> np.ndarray:
        """The form's row at each point of this grid."""
        return rows_on(form, self.swept, self.coords)


class Corners:
    """Quantities of one design and the forms of its fixed nets, signals and op-amp offsets (cached)."""

    def __init__(self, circuit: Circuit) -> None:
        self.circuit = circuit
        self.design = circuit.loaded.design
        self._fixed: dict[str, SweptForm | None] = {}
        self._grids: dict[tuple[str, ...], UnitGrid] = {}
        self._signals: dict[str, SweptForm] = {}
        self._dc_paths: dict[str, bool] = {}
        self.dividers: dict[tuple, object] = {}
        self._offsets: dict[tuple, dict[str, SweptForm]] = {}

    def dc_path(self, net: str) -> bool:
        """Whether ``net`` has a DC path to a defined voltage (asked once per net, however many units hold it)."""
        if net not in self._dc_paths:
            self._dc_paths[net] = has_dc_path(self.circuit, net)
        return self._dc_paths[net]

    def rail_form(self, net: str) -> SweptForm | None:
        """A rail's form: nominal V, deviation ±|V|·tolerance (None when its voltage is unknown)."""
        rail = self.design.rails.get(net)
        if rail is None or rail.voltage is None:
            return None
        v = float(rail.voltage)
        d = abs(v) * float(rail.tolerance)
        return quantity_form(f"rail:{net}", v, -d, d) if d > 0 else constant_form(v)

    def fixed_form(self, net: str) -> SweptForm | None:
        """Form of a fixed net: ground, a rail, or a net a voltage source holds from another fixed net."""
        if net not in self._fixed:
            self._fixed[net] = None
            self._fixed[net] = self._fixed_form(net)
        return self._fixed[net]

    def _fixed_form(self, net: str) -> SweptForm | None:
        c = self.circuit
        if net == c.ground:
            return constant_form(0.0)
        if net in self.design.rails:
            return self.rail_form(net)
        for ref, kind in c.kinds.items():
            if kind != "vsource":
                continue
            pins = c.pins[ref]
            value = float(self.design.components[ref].value)  # type: ignore[union-attr]
            for here, there, sign in (("p", "n", 1.0), ("n", "p", -1.0)):
                if pins.get(here) == net and pins.get(there) in c.fixed:
                    other = self.fixed_form(pins[there])
                    if other is not None:
                        return shifted(other, sign * value)
        return None

    def signal_form(self, net: str) -> SweptForm:
        """A declared signal on a net: the middle of its DC range ± half its width."""
        if net not in self._signals:
            lo, hi = self.design.signals[net].dc_range
            self._signals[net] = _range_form(f"signal:{net}", lo, hi)
        return self._signals[net]

    def source_form(self, ref: str) -> SweptForm:
        """A signal-source component: the middle of its DC range ± half its width."""
        lo, hi = (float(x) for x in self.design.components[ref].dc)  # type: ignore[union-attr]
        return _range_form(f"source:{ref}", lo, hi)

    def offset_forms(self, ref: str, vos: float, ib: float, ios: float) -> dict[str, SweptForm]:
        """Forms of op-amp ``ref``'s offset sources, keyed by macromodel element: Vos, Ib+ = Ib + Ios/2 and
        Ib− = Ib − Ios/2, each quantity at both signs."""
        memo = (ref, vos, ib, ios)
        if memo in self._offsets:
            return self._offsets[memo]
        keys = (f"vos:{ref}", f"ib:{ref}", f"ios:{ref}")
        span = np.array([abs(vos), abs(ib), abs(ios)])
        rows = {f"{ref}#gain": [1.0, 0.0, 0.0], f"{ref}#ib+": [0.0, 1.0, 0.5], f"{ref}#ib-": [0.0, 1.0, -0.5]}
        self._offsets[memo] = {name: SweptForm(keys, -span, span, (), 1, np.zeros(1), np.array([g]))
                               for name, g in rows.items()}
        return self._offsets[memo]

    @cached_property
    def thermistors(self) -> dict[str, np.ndarray]:
        """Each thermistor that sweeps (declared range wider than a point) and its base temperature grid (°C)."""
        out: dict[str, np.ndarray] = {}
        for ref, kind in self.circuit.kinds.items():
            if kind in SWEPT_KINDS:
                lo, hi = sweep_range(self.design.components[ref])
                if hi != lo:
                    out[self.key(ref)] = np.linspace(lo, hi, BASE_POINTS)
        return out

    def key(self, ref: str) -> str:
        """The swept quantity a part follows: its own refdes, or its bridge's for a bridge arm."""
        comp = self.design.components.get(ref)
        return ref if comp is None or comp.kind not in SWEPT_KINDS else sweep_key(ref, comp)

    def grid(self, swept: set[str]) -> UnitGrid:
        """The joint grid over ``swept`` thermistors, as fine as :data:`MAX_POINTS` allows."""
        names = tuple(sorted(swept))
        if names in self._grids:
            return self._grids[names]
        step = unit_step(len(names), MAX_POINTS)
        coords = grid_coords(len(names), step)
        temps = {t: self.thermistors[t][coords[:, i]] for i, t in enumerate(names)}
        self._grids[names] = UnitGrid(names, step, coords, temps)
        return self._grids[names]

    def ntc_resistances(self, ref: str, grid: UnitGrid) -> np.ndarray:
        """Resistance of thermistor ``ref`` at every point of ``grid`` (mid-range when it does not sweep)."""
        comp = self.design.components[ref]
        key = self.key(ref)
        if key in grid.temperatures_c:
            temps = grid.temperatures_c[key]
        else:
            temps = np.full(grid.points, 0.5 * sum(sweep_range(comp)))
        return resistance(comp, temps)

    def divider_form(self, legs: list[tuple[str, str]], grid: UnitGrid) -> tuple[np.ndarray, SweptForm | None]:
        """Thevenin resistance at each grid point and the Thevenin voltage's form on the grid."""
        g_rows = []
        forms = []
        for ref, far in legs:
            if self.circuit.kinds[ref] in SWEPT_KINDS:
                g_rows.append(1.0 / self.ntc_resistances(ref, grid))
            else:
                g_rows.append(np.full(grid.points, 1.0 / float(self.design.components[ref].value)))  # type: ignore[union-attr]
            forms.append(self.fixed_form(far))
        g = np.vstack(g_rows)
        gsum = g.sum(axis=0)
        if any(f is None for f in forms):
            return 1.0 / gsum, None
        weights = g / gsum
        return 1.0 / gsum, weighted_sum(forms, weights, grid)  # type: ignore[arg-type]


def _range_form(key: str, lo: float, hi: float) -> SweptForm:
    if hi == lo:
        return constant_form(lo)
    mid = 0.5 * (lo + hi)
    return quantity_form(key, mid, min(lo, hi) - mid, max(lo, hi) - mid)


def shifted(form: SweptForm, value: float) -> SweptForm:
    """The form plus a constant."""
    return SweptForm(form.keys, form.lo, form.hi, form.swept, form.step, form.nominal + value, form.gains)


def weighted_sum(forms: list[SweptForm], weights: np.ndarray, grid: UnitGrid) -> SweptForm:
    """Σ_i weights[i, p]·forms[i] at every point p of ``grid`` (weights shape (len(forms), P))."""
    keys: dict[str, tuple[float, float]] = {}
    for f in forms:
        for k, lo, hi in zip(f.keys, f.lo, f.hi, strict=True):
            keys.setdefault(k, (float(lo), float(hi)))
    order = tuple(keys)
    col = {k: i for i, k in enumerate(order)}
    nominal = np.zeros(grid.points)
    gains = np.zeros((grid.points, len(order)))
    for i, f in enumerate(forms):
        rows = grid.rows(f)
        nominal += weights[i] * f.nominal[rows]
        if f.keys:
            gains[:, [col[k] for k in f.keys]] += weights[i][:, None] * f.gains[rows]
    lo = np.array([keys[k][0] for k in order])
    hi = np.array([keys[k][1] for k in order])
    return SweptForm(order, lo, hi, grid.swept, grid.step, nominal, gains)
