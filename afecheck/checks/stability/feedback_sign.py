"""stability.feedback-sense: an op-amp with no feedback, net positive feedback, or feedback only through capacitors."""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.checks.common import attached
from afecheck.checks.common import finding as make_finding
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import RuleMeta

META = RuleMeta(
    id="stability.feedback-sense", slug="feedback-missing-or-positive", severity=Severity.ERROR, family="stability",
    summary="op-amp without negative feedback: open loop, positive feedback, or no DC feedback path",
    fix="close the loop from the output to the inverting input; for an integrator add a resistor or reset across "
        "the capacitor; use a comparator part if switching is intended",
)


def check(ctx: Context) -> Iterator[Finding]:
    """Sign of the return ratio at DC (RULES-REFERENCE R5m) and a DC path from output to in-."""
    for stage in ctx.stages:
        t0 = stage.loop_gain_dc
        caps = [ref for ref, other in attached(ctx.loaded, stage.in_minus, "capacitor") if other == stage.out]
        resistors = [ref for ref, other in attached(ctx.loaded, stage.in_minus, "resistor") if other == stage.out]
        if stage.feedback != "positive" and caps and not resistors:
            # an integrator: T(0) = 0 because the capacitor is open at DC, yet the loop closes at AC
            yield make_finding(
                ctx, Severity.WARNING, value=0.0, limit=0.0, unit="S", margin=0.0,
                limit_source="RULES-REFERENCE R5m (no DC feedback)",
                message=(f"{stage.opamp} has feedback only through {', '.join(caps)}: with no DC path its offset "
                         "and bias current integrate until the output reaches a rail"),
                fix=f"resistor or reset switch across {caps[0]}", refs=(caps[0], stage.opamp),
                nets=(stage.in_minus, stage.out), extra={"feedback": "no-dc-path"},
            )
            continue
        if stage.feedback in ("positive", "none"):
            what = ("net positive feedback: the loop gain at DC is negative, so the output latches to a rail"
                    if stage.feedback == "positive" else "no feedback: it runs open loop and its output sits at a rail")
            shown = f" (T(0) = {t0:.4g})" if t0 is not None else ""
            yield make_finding(
                ctx, Severity.ERROR, value=t0 if t0 is not None else 0.0, limit=0.0, unit="V/V",
                margin=t0 if t0 is not None else 0.0, limit_source="RULES-REFERENCE R5m (return-ratio sign at DC)",
                message=f"{stage.opamp} has {what}{shown}", fix=META.fix, refs=(stage.opamp,),
                nets=(stage.in_plus, stage.in_minus, stage.out), extra={"feedback": stage.feedback},
            )
