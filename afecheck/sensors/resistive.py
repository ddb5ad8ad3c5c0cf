"""Resistors that move with a measurand: NTC thermistors and RTDs over temperature, bridge arms over the load.

One place answers, for any such part, which quantity it follows (its sweep key: its own refdes for a thermometer,
the bridge's refdes for each of a bridge's arms, so the four arms move together), that quantity's declared range,
and the resistance at given values of it.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from afecheck.sensors import rtd, thermistor

if TYPE_CHECKING:
    import numpy as np

SWEPT_KINDS = frozenset({"ntc", "rtd", "bridge_arm"})


def sweep_key(ref: str, comp) -> str:  # noqa: ANN001 - any swept component of the schema
    """The quantity ``comp`` follows: the bridge for a bridge arm, the part itself otherwise."""
    return comp.bridge if comp.kind == "bridge_arm" else ref


def sweep_range(comp) -> tuple[float, float]:  # noqa: ANN001
    """Declared range of that quantity: °C for a thermometer, fraction of full scale for a bridge arm."""
    lo, hi = comp.measurand if comp.kind == "bridge_arm" else comp.temperature
    return float(lo), float(hi)


def lead_ohm(comp) -> float:  # noqa: ANN001
    """Lead resistance in series with an RTD as a two-terminal part: both leads for 2-wire, the one lead in the
    sensor's arm for 3-wire (its twin sits in the adjacent arm), none for 4-wire (common practice of RTD wiring)."""
    return {"2-wire": 2.0, "3-wire": 1.0, "4-wire": 0.0}[comp.wiring] * float(comp.lead_resistance)


def ntc_coefficients(comp) -> tuple[float, float, float] | None:  # noqa: ANN001
    """Steinhart-Hart (a, b, c) of an NTC declared by coefficients or three points (None: the Beta model)."""
    if comp.steinhart_hart is not None:
        return tuple(float(c) for c in comp.steinhart_hart)  # type: ignore[return-value]
    if comp.points is not None:
        return thermistor.sh_fit(tuple((float(t), float(r)) for t, r in comp.points))
    return None


def resistance(comp, values: np.ndarray | float) -> np.ndarray:  # noqa: ANN001
    """Resistance of ``comp`` at each value of its quantity (°C, or fraction of full scale for a bridge arm)."""
    import numpy as np  # on first use: the rule set is imported by commands that solve nothing (start-up)

    v = np.atleast_1d(np.asarray(values, dtype=float))
    if comp.kind == "bridge_arm":
        return float(comp.r) * (1.0 + float(comp.x0) + float(comp.k) * v)
    if comp.kind == "rtd":
        return np.array([rtd.resistance(float(comp.r0), float(t)) for t in v]) + lead_ohm(comp)
    coeffs = ntc_coefficients(comp)
    if coeffs is None:
        with np.errstate(divide="ignore", over="ignore"):  # absolute zero or beyond: inf, which callers refuse
            return float(comp.r25) * np.exp(float(comp.beta) * (1.0 / (v + thermistor.T0) - 1.0 / thermistor.T25))
    return np.array([thermistor.sh_resistance(coeffs, float(t)) for t in v])
