"""What a thermocouple reading gets wrong about its cold (reference) junction, from the ITS-90 reference functions.

The copper terminals see E(t_hot) − E(t_cold). With compensation the reading adds back E(t_cj) from a sensor at the
terminals; that sensor's error ±δ (``cjc_accuracy``) leaves E(t_cold + δ) − E(t_cold) ≈ S(t_cold)·δ in the
corrected voltage, S = dE/dt the Seebeck coefficient, so the hot junction reads off by δ·S(t_cold)/S(t_hot) (first
order). Without compensation the reading takes the tables' 0 °C reference junction: it is short by E(t_cold)
itself, E(t_cold)/S(t_hot) at the hot junction (first order). Both are taken at their worst over the declared
ranges: the largest voltage error over the cold range, over the smallest Seebeck coefficient of the hot range.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from functools import lru_cache
from typing import Any

from afecheck.sensors import thermocouple as tc

GRID_STEP_C = 1.0
"""Spacing of the temperature grid the extremes are taken over (each range's ends always included)."""


@dataclass(frozen=True)
class ColdJunctionError:
    """A thermocouple's cold-junction error: ± volts at its terminals, where it peaks, and its size at the hot
    junction over the smallest Seebeck coefficient of the hot range."""

    ref: str
    tc_type: str
    compensated: bool
    cjc_accuracy_c: float
    cold_range_c: tuple[float, float]
    emf_v: float
    """± the error in the terminal voltage (V), the largest over the cold range"""
    cold_c: float
    """the cold-junction temperature where it is largest"""
    seebeck_cold_v_per_c: float
    hot_c: float
    """the hot-junction temperature of the smallest Seebeck coefficient in the hot range"""
    seebeck_hot_v_per_c: float

    @property
    def at_hot_c(self) -> float:
        """The error as °C at the hot junction (first order: the voltage over the hot junction's Seebeck
        coefficient, the smallest over its range)."""
        return self.emf_v / self.seebeck_hot_v_per_c


def _grid(lo: float, hi: float) -> list[float]:
    """Temperatures from ``lo`` to ``hi`` about GRID_STEP_C apart, both ends included."""
    n = max(1, int(abs(hi - lo) / GRID_STEP_C))
    return [lo + (hi - lo) * k / n for k in range(n + 1)]


@lru_cache(maxsize=256)
def _extreme(tc_type: str, lo: float, hi: float, of: str, pick: Callable) -> float:
    """The temperature of the grid over ``lo``..``hi`` where |S| (``of`` "seebeck") or |E| ("emf") is largest or
    smallest (``pick``); kept per range, since every channel of a design asks the same."""
    f = tc.seebeck_uv_per_c if of == "seebeck" else tc.emf_mv
    return pick(_grid(lo, hi), key=lambda t: abs(f(tc_type, t)))


def seebeck_v_per_c(tc_type: str, t_c: float) -> float:
    """The Seebeck coefficient dE/dt at ``t_c`` in V/°C."""
    return tc.seebeck_uv_per_c(tc_type, t_c) * 1e-6


def cold_junction_error(ref: str, comp: Any) -> ColdJunctionError:
    """The cold-junction error of a declared thermocouple (``type``, ``hot``, ``cold``, ``compensated``,
    ``cjc_accuracy``): compensated, δ·S(t_cold) at the cold temperature of largest S; else E(t_cold) at the cold
    temperature of largest |E|."""
    kind = comp.type
    cold = (float(comp.cold[0]), float(comp.cold[1]))
    delta = float(comp.cjc_accuracy)
    if comp.compensated:
        cold_c = _extreme(kind, *cold, "seebeck", max)
        emf = delta * abs(seebeck_v_per_c(kind, cold_c))
    else:
        cold_c = _extreme(kind, *cold, "emf", max)
        emf = abs(tc.emf_mv(kind, cold_c)) * 1e-3
    hot_c = _extreme(kind, float(comp.hot[0]), float(comp.hot[1]), "seebeck", min)
    return ColdJunctionError(ref, kind, bool(comp.compensated), delta, cold, emf, cold_c,
                             seebeck_v_per_c(kind, cold_c), hot_c, abs(seebeck_v_per_c(kind, hot_c)))
