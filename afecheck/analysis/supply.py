"""Supply and abuse limits of every op-amp: supply span, inputs driven beyond the rails, capacitive load.

Supply: the span V+ − V− at the rails' tolerance corners (and each side against ground) against the part's
minimum and maximum supply. Input overvoltage: a declared source whose range (DC and AC peak) passes a rail by
more than an input protection diode's drop (0.5 V, common practice for ESD structures at milliamperes) drives
(V − rail − 0.5 V)/(Rsource + series resistance) into the pin, against the part's input current limit.
Capacitive load: the stage's load capacitance against the part's limit, and the series isolation resistor
(between the output and the load, feedback taken before it) that restores a 60° phase margin (or the stage's
unloaded margin, if that is less), found by bisection on the whole stage's loop gain with that resistor in place.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

from afecheck.analysis.channel import channel_netlist, find_channels
from afecheck.analysis.loop import loop_gain
from afecheck.analysis.netlist import GROUND, Capacitor, Netlist, Resistor
from afecheck.analysis.results import DesignAnalysis, StageResult
from afecheck.errors import AnalysisError, InputError, SingularCircuitError
from afecheck.model.loaded import LoadedDesign

DIODE_DROP_V = 0.5
TARGET_PM_DEG = 60.0
ISO_RANGE_OHM = (0.01, 1e5)
UNLOADED_OHM = 1e12  # an isolation resistor this large leaves the stage as if unloaded
UNLOADED_SLACK_DEG = 0.5


@dataclass(frozen=True)
class InputDrive:
    """A pin driven beyond a rail: the source, how far past, through what resistance, the current."""

    pin: str
    source: str
    beyond_v: float
    resistance: float
    current: float


@dataclass(frozen=True)
class SupplyCheck:
    """One op-amp's supply span, over-driven inputs and capacitive load."""

    opamp: str
    part: str
    span_min: float | None
    span_max: float | None
    plus_v: float
    minus_v: float
    supply_min: float | None
    supply_max: float | None
    inputs: tuple[InputDrive, ...]
    input_current_limit: float
    load_capacitance: float
    max_capacitive_load: float | None
    isolation_resistance: float | None
    phase_margin_with_iso_deg: float | None
    assumed: tuple[str, ...] = ()
    notes: tuple[str, ...] = ()


@dataclass(frozen=True)
class SupplyResult:
    """Per op-amp supply and abuse figures."""

    opamps: Mapping[str, SupplyCheck]


def _rail_span(loaded: LoadedDesign, net: str | None) -> tuple[float, float] | None:
    d = loaded.design
    if net is None:
        return None
    if net == d.ground:
        return (0.0, 0.0)
    rail = d.rails.get(net)
    if rail is None or rail.voltage is None:
        return None
    v, t = float(rail.voltage), float(rail.tolerance or 0.0)
    return (min(v * (1 - t), v * (1 + t)), max(v * (1 - t), v * (1 + t)))


def _with_isolation(netlist: Netlist, out: str, riso: float, fixed: frozenset[str]) -> Netlist:
    """The netlist with every capacitor from ``out`` to a fixed net moved behind a series resistor ``riso``."""
    iso = f"{out}#iso"
    moved = []
    for e in netlist.elements:
        if isinstance(e, Capacitor) and out in (e.a, e.b):
            other = e.b if e.a == out else e.a
            if other in fixed or other == GROUND:
                e = Capacitor(e.name, iso, other, e.value)
        moved.append(e)
    return Netlist(tuple(moved) + (Resistor(f"{out}#riso", out, iso, riso),), netlist.opamps)


def isolation_resistor(netlist: Netlist, ref: str, out: str, fixed: frozenset[str],
                       target_deg: float = TARGET_PM_DEG) -> tuple[float | None, float | None]:
    """(smallest series isolation resistance giving ``target_deg`` of phase margin, the margin it gives); a stage
    that has less than that even unloaded is asked for its unloaded margin less half a degree."""
    def pm(r: float) -> float:
        lg = loop_gain(_with_isolation(netlist, out, r, fixed), ref)
        margins = lg.phase_margins_deg or ([lg.phase_margin_deg] if lg.phase_margin_deg is not None else [])
        return min(margins) if margins else 180.0

    lo, hi = ISO_RANGE_OHM
    target_deg = min(target_deg, pm(UNLOADED_OHM) - UNLOADED_SLACK_DEG)
    if pm(hi) < target_deg:
        return None, None
    for _ in range(40):
        mid = math.sqrt(lo * hi)
        if pm(mid) >= target_deg:
            hi = mid
        else:
            lo = mid
        if hi / lo < 1.001:
            break
    return hi, pm(hi)


def _inputs(loaded: LoadedDesign, stage: StageResult, plus: float, minus: float) -> list[InputDrive]:
    d = loaded.design
    found = []
    for inp in stage.inputs:
        src = inp.source
        if src.kind not in ("signal", "signal-source"):
            continue
        if any(d.components[r].kind == "capacitor" for r in inp.via if r in d.components):
            continue
        series = sum(float(d.components[r].value) for r in inp.via  # type: ignore[union-attr]
                     if r in d.components and d.components[r].kind == "resistor")
        r_total = src.r_min + series
        high = src.v_max + src.ac_amplitude - (plus + DIODE_DROP_V)
        low = (minus - DIODE_DROP_V) - (src.v_min - src.ac_amplitude)
        beyond = max(high, low)
        if beyond <= 0:
            continue
        current = math.inf if r_total <= 0 else beyond / r_total
        found.append(InputDrive(inp.pin, inp.net, beyond, r_total, current))
    return found


def analyse_supply(loaded: LoadedDesign, analysis: DesignAnalysis) -> SupplyResult:
    """Supply span, input overdrive and capacitive load of every analysed op-amp."""
    d = loaded.design
    channels = find_channels(loaded)
    out: dict[str, SupplyCheck] = {}
    for s in analysis.stages:
        model = loaded.part(s.opamp)
        comp = d.components[s.opamp]
        notes: list[str] = []
        assumed: list[str] = []
        vp, vm = _rail_span(loaded, comp.pins.get("v+")), _rail_span(loaded, comp.pins.get("v-"))
        span_min = span_max = None
        if vp is None or vm is None:
            notes.append("a supply pin is not on a rail of known voltage")
        else:
            span_min, span_max = vp[0] - vm[1], vp[1] - vm[0]
        limit, was = (model.input_current_limit, False) if model.input_current_limit else (10e-3, True)
        if was:
            assumed.append(f"{s.opamp}.input_current_limit")
        inputs = [] if vp is None or vm is None else _inputs(loaded, s, s.rail_plus, s.rail_minus)
        riso = pm_iso = None
        cmax = model.max_capacitive_load
        if cmax is not None and s.load_capacitance > cmax and s.out in channels:
            try:
                netlist = channel_netlist(loaded, channels[s.out])
                riso, pm_iso = isolation_resistor(netlist, s.opamp, s.out, loaded.fixed_nets)
                if riso is None:
                    notes.append("no isolation resistor up to 100 kΩ restores a 60° phase margin")
            except (AnalysisError, InputError, SingularCircuitError, ValueError, ArithmeticError) as exc:
                notes.append(f"isolation resistor not computed: {exc}")
        out[s.opamp] = SupplyCheck(
            opamp=s.opamp, part=s.part, span_min=span_min, span_max=span_max, plus_v=s.rail_plus,
            minus_v=s.rail_minus, supply_min=model.supply_min, supply_max=model.supply_max, inputs=tuple(inputs),
            input_current_limit=float(limit), load_capacitance=s.load_capacitance, max_capacitive_load=cmax,
            isolation_resistance=riso, phase_margin_with_iso_deg=pm_iso, assumed=tuple(assumed), notes=tuple(notes),
        )
    return SupplyResult(out)
