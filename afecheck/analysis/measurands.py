"""The parts of a channel that follow a measurand, as every budget analysis sees them (one place, not one copy each).

After loading, a sensor is one of: a swept resistor (NTC and RTD over temperature, a bridge's four arms over the
bridge's measurand; :mod:`afecheck.sensors.resistive`) or a thermocouple (a signal source over E(hot) − E(cold),
kept as declared in ``loaded.sensors``). This module answers for any of them: where a point of the measurand range
puts it, its own tolerance as a fraction of its resistance, the temperature its thermal noise is taken at, and the
values that make two channels' sensors alike.
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any

from afecheck.analysis.netlist import ZERO_C_K, NetlistOptions
from afecheck.model.loaded import LoadedDesign
from afecheck.sensors import rtd
from afecheck.sensors import thermocouple as tc
from afecheck.sensors.resistive import SWEPT_KINDS, resistance, sweep_range

_NOT_VALUES = ("pins", "description", "waive")


def swept_refs(loaded: LoadedDesign, refs: Iterable[str]) -> tuple[str, ...]:
    """The swept resistors among ``refs`` (NTCs, RTDs, bridge arms), in order."""
    comps = loaded.design.components
    return tuple(r for r in refs if comps[r].kind in SWEPT_KINDS)


def thermocouple_refs(loaded: LoadedDesign, refs: Iterable[str]) -> tuple[str, ...]:
    """The thermocouples among ``refs`` (signal sources after loading; their declaration kept in ``sensors``)."""
    return tuple(r for r in refs if getattr(loaded.sensors.get(r), "kind", None) == "thermocouple")


def has_sensor(loaded: LoadedDesign, refs: Iterable[str]) -> bool:
    """Whether any of ``refs`` is a sensor of any kind."""
    refs = tuple(refs)
    return bool(swept_refs(loaded, refs) or thermocouple_refs(loaded, refs))


def at_point(loaded: LoadedDesign, refs: Iterable[str], point: float) -> dict[str, float]:
    """Each swept part's quantity at ``point`` (0 the low end, 1 the high end) of its declared range, keyed by its
    refdes as :class:`NetlistOptions` ``ntc_temperature_c`` takes it (°C, or fraction of full scale for an arm)."""
    comps = loaded.design.components
    out = {}
    for r in swept_refs(loaded, refs):
        lo, hi = sweep_range(comps[r])
        out[r] = lo + point * (hi - lo)
    return out


def thermocouple_volts(loaded: LoadedDesign, refs: Iterable[str], point: float) -> dict[str, float]:
    """Each thermocouple's terminal voltage with its hot junction at ``point`` of its hot range and its cold
    junction at the middle of its cold range (ITS-90 reference functions)."""
    out = {}
    for r in thermocouple_refs(loaded, refs):
        s = loaded.sensors[r]
        hot = float(s.hot[0]) + point * float(s.hot[1] - s.hot[0])
        out[r] = tc.measured_mv(s.type, hot, 0.5 * float(s.cold[0] + s.cold[1])) / 1000.0
    return out


def point_options(loaded: LoadedDesign, refs: Iterable[str], point: float, measurand: bool = False) -> NetlistOptions:
    """Netlist options with every declared signal and every sensor at ``point`` of its range (offsets left out).

    With ``measurand`` a thermocouple follows its hot junction's temperature (E(t) is curved); otherwise it sits at
    ``point`` of its terminal-voltage range, as any declared signal does."""
    refs = tuple(refs)
    volts = thermocouple_volts(loaded, refs, point) if measurand else {}
    return NetlistOptions(signal_point=float(point), ntc_temperature_c=at_point(loaded, refs, point),
                          signal_dc=volts, include_offsets=False)


def own_tolerance(comp: Any) -> float | None:
    """A swept part's own accuracy as a fraction of its resistance: its declared ``tolerance``; else, for an RTD of
    a tolerance class, the class's ±°C (IEC 60751) times dR/dt over R, at whichever end of its range that is larger."""
    if comp.tolerance:
        return float(comp.tolerance)
    if comp.kind != "rtd" or comp.tolerance_class is None:
        return None
    worst = 0.0
    for t in sweep_range(comp):
        step = 0.01
        a, b = max(t - step, -200.0), min(t + step, 850.0)
        slope = (float(resistance(comp, b)[0]) - float(resistance(comp, a)[0])) / (b - a)
        worst = max(worst, rtd.tolerance_c(comp.tolerance_class, t) * abs(slope) / float(resistance(comp, t)[0]))
    return worst


def noise_temperature_k(comp: Any, default_k: float) -> float:
    """Kelvin at which a part's thermal noise is taken: a thermometer (NTC, RTD) at the middle of its own range, any
    other part (a bridge arm, a resistor) at ``default_k``."""
    if comp is not None and comp.kind in ("ntc", "rtd"):
        return 0.5 * sum(sweep_range(comp)) + ZERO_C_K
    return default_k


def value_key(comp: Any) -> tuple:
    """Every value of a part that shapes the circuit (all its fields but pins, text and waivers), for cache keys."""
    return tuple((k, v) for k, v in comp.__dict__.items() if k not in _NOT_VALUES)
