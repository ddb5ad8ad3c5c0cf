"""Why a loop has little phase margin: the capacitive-load pole, the input-capacitance zero of the noise
gain, or the op-amp's own second pole, each with the fix that removes it (RULES-REFERENCE R2 formulas)."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

from afecheck.checks.common import attached, fmt, parallel, part_value

if TYPE_CHECKING:
    from afecheck.analysis.results import StageResult
    from afecheck.engine.context import Context

STRAY_CAPACITANCE = 1e-12  # per node, RULES-REFERENCE 0.3 [CP]
E12 = (1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2)  # IEC 60063


def isolation_resistor(ro: float) -> float:
    """Suggested isolation resistor: the E12 value nearest the open-loop output resistance, kept within 10..100 Ω.

    Riso ≈ Ro puts the zero 1/(2π·Riso·CL) about an octave above the load pole (RULES-REFERENCE R2(e): Ro = 100 Ω,
    Riso = 100 Ω restores 72° of phase margin); common practice.
    """
    target = min(max(ro, 10.0), 100.0)
    decade = 10.0 ** math.floor(math.log10(target))
    candidates = [v * decade for v in E12] + [10.0 * decade]
    return min(candidates, key=lambda v: abs(math.log(v / target)))


@dataclass(frozen=True)
class Cause:
    """The dominant extra phase lag in a loop, its frequency, the words that explain it, and the fix."""

    kind: str
    frequency: float
    text: str
    fix: str
    refs: tuple[str, ...]
    assumed: tuple[str, ...]


def load_pole(ctx: Context, stage: StageResult) -> Cause | None:
    """Pole 1/(2π·Ro·CL) from the open-loop output resistance and the capacitive load."""
    ro, assumed = part_value(ctx, stage.opamp, "output_resistance")  # open loop: StageResult's is closed loop
    cl = stage.load_capacitance
    if not ro or cl <= 0:
        return None
    f = 1.0 / (2.0 * math.pi * ro * cl)
    text = (f"{fmt(cl, 'F')} load on {stage.out} with {fmt(ro, 'Ω')} open-loop output resistance adds a pole at "
            f"{fmt(f, 'Hz')}")
    fix = (f"{fmt(isolation_resistor(ro), 'Ω', 2)} isolation resistor between {stage.opamp} output and the load, "
           "or feedback from the load side")
    return Cause("load", f, text, fix, (stage.opamp,), assumed)


def input_zero(ctx: Context, stage: StageResult) -> Cause | None:
    """Noise-gain zero 1/(2π·(Rf||Rg)·(Cg + Cf)) from the capacitance at the inverting input."""
    loaded = ctx.loaded
    comps = loaded.design.components
    resistors = attached(loaded, stage.in_minus, "resistor")
    if not resistors:
        return None
    rf_refs = [ref for ref, other in resistors if other == stage.out]
    rg_values = [comps[ref].value for ref, other in resistors if other != stage.out]  # type: ignore[union-attr]
    if not rf_refs or not rg_values:
        return None
    rf = parallel(*(comps[r].value for r in rf_refs))  # type: ignore[union-attr]
    rg = parallel(*rg_values)
    c_cm, a1 = part_value(ctx, stage.opamp, "input_capacitance_cm")
    c_diff, a2 = part_value(ctx, stage.opamp, "input_capacitance_diff")
    caps = attached(loaded, stage.in_minus, "capacitor")
    cf = sum(comps[ref].value for ref, other in caps if other == stage.out)  # type: ignore[union-attr]
    c_ext = sum(comps[ref].value for ref, other in caps if other != stage.out)  # type: ignore[union-attr]
    cg = (c_cm or 0.0) + (c_diff or 0.0) + c_ext + STRAY_CAPACITANCE
    f = 1.0 / (2.0 * math.pi * parallel(rf, rg) * (cg + cf))
    cf_neutral = cg * rg / rf
    text = (f"{fmt(cg, 'F')} at {stage.in_minus} (input, stray and parts) with Rf {fmt(rf, 'Ω')} and Rg {fmt(rg, 'Ω')} "
            f"makes the noise gain rise from {fmt(f, 'Hz')}")
    if cf < cf_neutral:
        fix = (f"capacitor of about {fmt(cf_neutral, 'F')} across {rf_refs[0]} (Cf = Cg·Rg/Rf), or lower "
               "resistor values in the feedback network")
    else:
        fix = "lower resistor values in the feedback network, or a part with more phase margin at this noise gain"
    return Cause("input-capacitance", f, text, fix, (rf_refs[0], stage.opamp), a1 + a2)


def second_pole(ctx: Context, stage: StageResult) -> Cause:
    """The op-amp's own second pole against the noise gain at crossover (always available)."""
    f2, assumed = part_value(ctx, stage.opamp, "second_pole")
    ng = stage.noise_gain_at_crossover or stage.noise_gain_dc or 1.0
    text = f"noise gain {ng:.3g} at crossover is too low for the op-amp's second pole at {fmt(f2 or 0.0, 'Hz')}"
    means = _noise_gain_means(stage, "or more gain")
    fix = f"raise the noise gain ({means}) or choose a part that is stable at this noise gain"
    return Cause("second-pole", f2 or math.inf, text, fix, (stage.opamp,), assumed)


def _noise_gain_means(stage: StageResult, others: str) -> str:
    """How to raise a stage's noise gain: a sensor stage (transimpedance, charge amplifier) by a smaller feedback
    capacitor, its high-frequency noise gain being about 1 + C_sensor/C_f (common practice); others by a resistor
    between the inputs or the listed means."""
    if stage.topology in ("transimpedance", "charge-amplifier"):
        return (f"smaller feedback capacitor from {stage.out} to {stage.in_minus}: the noise gain above the feedback "
                "corner is about 1 + sensor capacitance / feedback capacitance")
    return f"resistor between {stage.in_plus} and {stage.in_minus}, {others}"


def below_minimum_gain(ctx: Context, stage: StageResult) -> Cause | None:
    """A decompensated part run below its declared minimum stable noise gain at crossover."""
    gmin = ctx.loaded.part(stage.opamp).min_stable_gain if stage.opamp in ctx.loaded.design.components else None
    ng = stage.noise_gain_at_crossover
    if gmin is None or ng is None or ng >= gmin:
        return None
    text = f"noise gain {ng:.3g} at crossover is below the part's minimum stable gain {gmin:.3g}"
    means = _noise_gain_means(stage, "smaller feedback capacitor, more gain")
    fix = f"raise the noise gain above {gmin:.3g} ({means}) or choose a unity-gain-stable part"
    return Cause("below-minimum-gain", 0.0, text, fix, (stage.opamp,), ())


def sensor_capacitance(stage: StageResult) -> Cause | None:
    """A transimpedance stage whose sensor capacitance at in- needs a feedback capacitor (value from the analysis)."""
    cf = stage.feedback_capacitance_for_margin
    if stage.topology != "transimpedance" or cf is None:
        return None
    text = (f"the sensor capacitance at {stage.in_minus} with the feedback resistance makes the noise gain rise "
            "until the loop runs out of phase")
    fix = (f"feedback capacitor of about {fmt(cf, 'F')} from {stage.out} to {stage.in_minus}, across the feedback "
           "resistor (computed for 65° phase margin)")
    return Cause("sensor-capacitance", 0.0, text, fix, (stage.opamp,), ())


def main_cause(ctx: Context, stage: StageResult) -> Cause:
    """A transimpedance stage's missing feedback capacitor first; then below the minimum stable gain; else the
    lowest-frequency extra lag (capacitive-load pole or input-capacitance zero); else the op-amp's second pole."""
    tia = sensor_capacitance(stage)
    if tia is not None:
        return tia
    decomp = below_minimum_gain(ctx, stage)
    if decomp is not None:
        return decomp
    found = [c for c in (load_pole(ctx, stage), input_zero(ctx, stage)) if c is not None]
    f2 = second_pole(ctx, stage)
    candidates = [c for c in found if c.frequency < 3.0 * f2.frequency]
    return min(candidates, key=lambda c: c.frequency) if candidates else f2
