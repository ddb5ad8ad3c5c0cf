"""Declared sensors as the circuit parts the analysis already solves, and what each means in its own units.

A ``thermocouple`` becomes a signal source over E(hot) − E(cold) behind its lead resistance; a ``bridge`` becomes
its four arms (``bridge_arm``, each following the bridge's measurand so they move together). RTDs and NTCs stay as
they are (swept resistors, :mod:`afecheck.sensors.resistive`). :func:`thermocouple_view` and :func:`bridge_view` give a
sensor's source figures for findings: range, Thevenin resistance, common mode and the measurand-to-volt slope.
"""

from __future__ import annotations

from dataclasses import dataclass

from afecheck.model.schema import Bridge, BridgeArm, Design, SignalSource, Thermocouple
from afecheck.sensors import bridge as bridge_model
from afecheck.sensors import thermocouple as tc

ARM_PINS = {"tl": ("exc+", "out+"), "bl": ("out+", "exc-"), "tr": ("exc+", "out-"), "br": ("out-", "exc-")}
ARM_SIGNS = {"full": (-1, 1, 1, -1), "half": (-1, 1, 0, 0), "quarter": (0, 1, 0, 0)}


def thermocouple_range_v(comp: Thermocouple) -> tuple[float, float]:
    """Lowest and highest terminal voltage over the hot and cold ranges (E is monotonic: the ends suffice)."""
    values = [tc.measured_mv(comp.type, h, c) / 1000.0 for h in comp.hot for c in comp.cold]
    return min(values), max(values)


def bridge_arms(ref: str, comp: Bridge) -> dict[str, BridgeArm]:
    """The four arms of a bridge, named ``<ref>.tl`` etc., each R·(1 + x0 + k·m) over the measurand fraction m.

    The zero offset sits in the bottom-left arm, sized so the unloaded output at zero measurand equals it exactly.
    """
    x_fs = bridge_model.fractional_change(comp.arrangement, float(comp.sensitivity))
    z = float(comp.zero_offset)
    x0 = (0.5 + z) / (0.5 - z) - 1.0
    arms = {}
    for (name, (a, b)), sign in zip(ARM_PINS.items(), ARM_SIGNS[comp.arrangement], strict=True):
        pins = {"1": comp.pins[a], "2": comp.pins[b]} if a in comp.pins and b in comp.pins else {}
        arms[f"{ref}.{name}"] = BridgeArm(kind="bridge_arm", bridge=ref, pins=pins, r=comp.resistance,
                                          x0=x0 if name == "bl" else 0.0, k=sign * x_fs,
                                          measurand=comp.full_scale_fraction, tolerance=comp.tolerance,
                                          description=f"arm {name} of bridge {ref}")
    return arms


def expand_sensors(design: Design) -> Design:
    """The design with every thermocouple and bridge replaced by the parts the analysis solves."""
    if not any(c.kind in ("thermocouple", "bridge") for c in design.components.values()):
        return design
    out = {}
    for ref, comp in design.components.items():
        if isinstance(comp, Thermocouple):
            out[ref] = SignalSource(kind="signal_source", pins=comp.pins, dc=thermocouple_range_v(comp),
                                    source_resistance=comp.lead_resistance, description=comp.description,
                                    waive=comp.waive)
        elif isinstance(comp, Bridge):
            out.update(bridge_arms(ref, comp))
        else:
            out[ref] = comp
    return design.model_copy(update={"components": out})


@dataclass(frozen=True)
class SensorView:
    """A sensor as its front end sees it: output range (V), Thevenin resistance range (Ω), common mode (V) and
    volts per measurand unit at mid-range, in ``unit``."""

    ref: str
    unit: str
    range_v: tuple[float, float]
    rth: tuple[float, float]
    slope_v_per_unit: float
    common_mode_v: float | None = None

    def in_units(self, volts: float) -> float:
        """An input-referred voltage as the measurand error it equals at the sensor."""
        return volts / self.slope_v_per_unit if self.slope_v_per_unit else float("nan")


def thermocouple_view(ref: str, comp: Thermocouple) -> SensorView:
    """Range, source resistance and Seebeck slope (mid hot range) of a thermocouple."""
    mid = 0.5 * (comp.hot[0] + comp.hot[1])
    slope = tc.seebeck_uv_per_c(comp.type, mid) * 1e-6
    r = float(comp.lead_resistance)
    return SensorView(ref, "°C", thermocouple_range_v(comp), (r, r), slope)


def bridge_view(ref: str, comp: Bridge, excitation_v: float) -> SensorView:
    """Output range, output resistance range and common mode of a bridge at ``excitation_v``; slope per unit."""
    arms = bridge_arms(ref, comp)
    lo, hi = comp.full_scale_fraction
    outs, rths = [], []
    for m in (lo, hi):
        tl, bl, tr, br = (float(a.r) * (1.0 + a.x0 + a.k * m) for a in arms.values())
        outs.append(excitation_v * (bl / (tl + bl) - br / (tr + br)))
        rths.append(tl * bl / (tl + bl) + tr * br / (tr + br))
    per_unit = 1.0 if comp.span is None else 1.0 / float(comp.span)
    slope = (outs[1] - outs[0]) / (hi - lo) * per_unit if hi != lo else 0.0
    return SensorView(ref, comp.unit or "of full scale", (min(outs), max(outs)), (min(rths), max(rths)), slope,
                      0.5 * excitation_v)


def divider_self_heating_c(v: float, r_top: float, r_range: tuple[float, float], dissipation: float) -> float:
    """Largest temperature rise ΔT = P/δ of a sensor of ``r_range`` below ``r_top`` from ``v``: P = V²·R/(R_top+R)²
    peaks where R = R_top (maximum power transfer), else at the range end nearest it."""
    lo, hi = sorted(r_range)
    r = min(max(r_top, lo), hi)
    return v * v * r / (r_top + r) ** 2 / dissipation
