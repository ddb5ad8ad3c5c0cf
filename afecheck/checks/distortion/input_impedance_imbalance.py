"""Unequal source impedances at the two inputs of a CMOS or JFET input stage with common-mode swing."""

from __future__ import annotations

import math
from collections.abc import Iterator

from afecheck.checks.common import attached, db, fmt, part_value, resistance_at, switching
from afecheck.checks.common import finding as make_finding
from afecheck.checks.headroom.limits import in_plus_ac
from afecheck.checks.loading.sources import plus_source_resistance
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import Param, RuleMeta

META = RuleMeta(
    id="distortion.impedance-balance", slug="unbalanced-impedance-at-high-z-inputs",
    severity=Severity.WARNING, family="distortion",
    summary="unequal source impedances at a CMOS/JFET input stage that swings in common mode",
    params=(
        Param("min_vcm_peak", 1.0, "V", "common-mode AC peak above which the rule applies"),
        Param("min_frequency", 1e3, "Hz", "highest signal frequency above which the rule applies"),
        Param("max_imbalance", 1e3, "ohm", "impedance difference above which a warning is raised"),
        Param("low_bias_current", 100e-12, "A", "declared bias current at or below which the input is CMOS/JFET"),
    ),
    fix="lower the source impedance at in+, make Rf||Rg about equal to it (at some extra resistor noise), or use an "
        "inverting stage",
)


def is_high_z_input(ctx: Context, opamp: str, low_ib: float) -> bool:
    """CMOS/JFET inputs: named so in the part's archetype or description, or a declared bias current ≤ ``low_ib``."""
    model = ctx.loaded.part(opamp)
    words = f"{model.archetype or ''} {model.description or ''}".lower()
    if "cmos" in words or "jfet" in words:
        return True
    return model.bias_current is not None and abs(model.bias_current) <= low_ib


def check(ctx: Context) -> Iterator[Finding]:
    """Estimate 2πf·|Z+ − Z−|·Ccm·Vcm_pk (RULES-REFERENCE R4g) and warn past the thresholds."""
    for stage in ctx.stages:
        if switching(ctx.loaded, stage.opamp):
            continue  # a declared comparator or Schmitt trigger is not a linear stage
        if stage.topology not in ("follower", "non-inverting") or stage.opamp not in ctx.loaded.design.components:
            continue
        if not is_high_z_input(ctx, stage.opamp, ctx.param("low_bias_current")):
            continue
        vcm_pk = in_plus_ac(ctx, stage)
        if vcm_pk <= ctx.param("min_vcm_peak") or stage.f_max <= ctx.param("min_frequency"):
            continue
        plus = [i for i in stage.inputs if i.pin == "in+"]
        if not plus:
            continue
        z_plus = max(plus_source_resistance(ctx.loaded, i) for i in plus)
        z_minus = resistance_at(ctx.loaded, stage.in_minus) if attached(ctx.loaded, stage.in_minus, "resistor") else 0.0
        imbalance = abs(z_plus - z_minus)
        limit = ctx.param("max_imbalance")
        if imbalance <= limit:
            continue
        c_cm, assumed = part_value(ctx, stage.opamp, "input_capacitance_cm")
        linear = 2.0 * math.pi * stage.f_max * imbalance * (c_cm or 0.0)
        text = (f"{stage.opamp} ({stage.part}) sees {fmt(z_plus, 'Ω')} at in+ and {fmt(z_minus, 'Ω')} at in- while its "
                f"common mode swings {fmt(vcm_pk, 'V')} peak at up to {fmt(stage.f_max, 'Hz')}: the input-capacitance "
                f"current makes a differential error of order {fmt(linear * vcm_pk, 'V')} ({db(linear):.0f} dB, "
                f"limit {fmt(limit, 'Ω')} imbalance)")
        yield make_finding(
            ctx, Severity.WARNING, value=imbalance, limit=limit, unit="ohm", margin=limit - imbalance,
            limit_source="rule parameter (common practice)", message=text, fix=META.fix,
            refs=(stage.opamp,), nets=(stage.in_plus, stage.in_minus), assumed=assumed,
            extra={"z_plus": z_plus, "z_minus": z_minus, "vcm_peak": vcm_pk, "error_fraction": linear},
        )
