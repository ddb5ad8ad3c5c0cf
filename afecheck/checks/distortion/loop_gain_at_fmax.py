"""Little loop gain left at the highest signal frequency to correct open-loop nonlinearity."""

from __future__ import annotations

import math
from collections.abc import Iterator

from afecheck.checks.common import (
    GHLM,
    db,
    fmt,
    grade_below,
    not_evaluated,
    pct,
    stage_assumed,
    stage_reason,
    switching,
)
from afecheck.checks.common import finding as make_finding
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import Param, RuleMeta

META = RuleMeta(
    id="distortion.loop-gain-at-fmax", slug="loop-gain-low-at-signal-frequency",
    severity=Severity.ERROR, family="distortion",
    summary="loop gain at the highest signal frequency below 40 dB (warning) or 20 dB (error)",
    params=(
        Param("warn_db", 40.0, "dB", "loop gain at f_max below which a warning is raised"),
        Param("error_db", 20.0, "dB", "loop gain at f_max below which an error is raised"),
    ),
    fix="choose a part with more gain-bandwidth, split the gain over two stages, or lower the noise gain",
)


def amplitude_error(t_mag: float) -> float:
    """1 − |T/(1+T)| with T = −j·|T| (single-pole region, RULES-REFERENCE R4c)."""
    return 1.0 - t_mag / math.sqrt(1.0 + t_mag * t_mag)


def check(ctx: Context) -> Iterator[Finding]:
    """Grade |T(f_max)| in dB for every stage that carries an AC signal."""
    warn, err = ctx.param("warn_db"), ctx.param("error_db")
    for stage in ctx.stages:
        if switching(ctx.loaded, stage.opamp):
            continue  # a declared comparator or Schmitt trigger is not a linear stage
        if stage.feedback != "negative" or stage.f_max <= 0:
            continue
        t = stage.loop_gain_at_fmax
        if t is None:
            yield not_evaluated(ctx, f"{stage.opamp} loop gain at {fmt(stage.f_max, 'Hz')}",
                                stage_reason(stage, "loop gain not computed"), refs=(stage.opamp,))
            continue
        t_db = db(abs(t))
        severity = grade_below(t_db, warn, err)
        if severity is None:
            continue
        limit = err if severity == Severity.ERROR else warn
        ae = amplitude_error(abs(t))
        text = (f"{stage.opamp} loop gain at {fmt(stage.f_max, 'Hz')} is {t_db:.1f} dB (limit {limit:g} dB): "
                f"open-loop distortion is reduced only {abs(t):.3g}×, amplitude error about {pct(ae)}")
        yield make_finding(
            ctx, severity, value=t_db, limit=limit, unit="dB", margin=t_db - limit,
            limit_source=f"rule parameter (common practice; loop gain and closed-loop error as in {GHLM})",
            message=text, fix=META.fix,
            refs=(stage.opamp,), nets=(stage.out,), assumed=stage_assumed(stage), estimated=stage.estimated,
            extra={"loop_gain": abs(t), "f_max": stage.f_max, "amplitude_error": ae},
        )
