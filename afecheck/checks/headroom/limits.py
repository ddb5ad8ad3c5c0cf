"""Operating-range numbers shared by the headroom and distortion rules: common-mode excursion, the part's
common-mode window and output swing limits at the actual load (RULES-REFERENCE R3 swing model)."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

from afecheck.checks.common import part_value

if TYPE_CHECKING:
    from afecheck.analysis.results import StageResult
    from afecheck.engine.context import Context


def worst_rails(ctx: Context, stage: StageResult) -> tuple[float, float]:
    """(V−, V+) moved toward each other by each rail's declared tolerance: the least headroom the supply gives."""
    comp = ctx.loaded.design.components.get(stage.opamp)
    rails = ctx.loaded.design.rails

    def tol(pin: str) -> float:
        rail = rails.get(comp.pins.get(pin, "")) if comp is not None else None
        return rail.tolerance if rail is not None else 0.0

    return stage.rail_minus + abs(stage.rail_minus) * tol("v-"), stage.rail_plus - abs(stage.rail_plus) * tol("v+")


def in_plus_ac(ctx: Context, stage: StageResult) -> float:
    """AC amplitude on the non-inverting input net (0 when the analysis has none for it)."""
    sig = ctx.analysis.nets.get(stage.in_plus)
    return float(sig.ac_amplitude) if sig is not None else 0.0


def cm_extremes(ctx: Context, stage: StageResult) -> tuple[float, float] | None:
    """(lowest, highest) input common-mode voltage: the DC range widened by the AC peak on in+."""
    if stage.vcm_min is None or stage.vcm_max is None:
        return None
    ac = in_plus_ac(ctx, stage)
    return stage.vcm_min - ac, stage.vcm_max + ac


def output_extremes(stage: StageResult) -> tuple[float, float] | None:
    """(lowest, highest) required output voltage: the DC range widened by the AC peak."""
    if stage.vout_min is None or stage.vout_max is None:
        return None
    return stage.vout_min - stage.vout_ac_peak, stage.vout_max + stage.vout_ac_peak


def output_current(stage: StageResult, v_out: float) -> float:
    """Output current at ``v_out``: the analysis's peak current, else v_out over the effective load."""
    if stage.iout_peak is not None:
        return abs(stage.iout_peak)
    if stage.load_resistance:
        return abs(v_out) / stage.load_resistance
    return 0.0


@dataclass(frozen=True)
class Swing:
    """Output swing limits at the load, and the required extremes they are compared with."""

    low_limit: float
    high_limit: float
    low_required: float
    high_required: float
    assumed: tuple[str, ...]


def swing(ctx: Context, stage: StageResult) -> Swing | None:
    """Swing limits: V+ − Vdrop_hi − Rsat·I and V− + Vdrop_lo + Rsat·I at the required extremes (worst-case rails)."""
    ext = output_extremes(stage)
    if ext is None:
        return None
    lo, hi = ext
    d_hi, a1 = part_value(ctx, stage.opamp, "output_drop_high")
    d_lo, a2 = part_value(ctx, stage.opamp, "output_drop_low")
    r_sat, a3 = part_value(ctx, stage.opamp, "output_sat_resistance")
    if d_hi is None or d_lo is None or r_sat is None:
        return None
    v_minus, v_plus = worst_rails(ctx, stage)
    high_limit = v_plus - d_hi - r_sat * output_current(stage, hi)
    low_limit = v_minus + d_lo + r_sat * output_current(stage, lo)
    return Swing(low_limit, high_limit, lo, hi, a1 + a2 + a3)
