"""stability.feedback-sense: an op-amp with no feedback, net positive feedback, or feedback only through capacitors.

Whether feedback reaches DC is read from the loop gain the analysis computed (the sign and size of T(0)), never
from the parts tied between the output and in- alone: a multiple-feedback filter or a composite amplifier closes
its DC loop through a resistor chain, and its T(0) says so.
"""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.checks.common import attached, stage_role
from afecheck.checks.common import finding as make_finding
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import RuleMeta

META = RuleMeta(
    id="stability.feedback-sense", slug="feedback-missing-or-positive", severity=Severity.ERROR, family="stability",
    summary="op-amp without negative feedback: open loop, positive feedback, or no DC feedback path",
    fix="close the loop from the output to the inverting input; for an integrator add a resistor or reset across "
        "the capacitor; declare `role: comparator` or `role: schmitt` if switching is intended",
)


def capacitor_feedback(ctx: Context, in_minus: str, out: str) -> list[str]:
    """Capacitors tied directly between ``in_minus`` and ``out`` (the parts of a capacitor-only feedback)."""
    return [ref for ref, other in attached(ctx.loaded, in_minus, "capacitor") if other == out]


def check(ctx: Context) -> Iterator[Finding]:
    """Sign of the return ratio at DC (Bode's return ratio); capacitor-only feedback when T(0) is negligible."""
    for stage in ctx.stages:
        role = stage_role(ctx.loaded, stage.opamp)
        if role in ("comparator", "schmitt"):
            continue  # switching on purpose, declared in the design
        if stage.feedback == "negative":
            continue  # the computed T(0) shows DC feedback, whatever path it takes
        t0 = stage.loop_gain_dc
        shown = f" (T(0) = {t0:.4g})" if t0 is not None else ""
        caps = capacitor_feedback(ctx, stage.in_minus, stage.out)
        if stage.feedback == "none" and caps:
            declared = role == "integrator"
            text = (f"{stage.opamp} has feedback only through {', '.join(caps)}{shown}: with no DC path its offset "
                    "and bias current integrate until the output reaches a rail")
            if declared:
                text += "; the stage is declared an integrator, so its reset is taken to be outside the netlist"
            yield make_finding(
                ctx, Severity.INFO if declared else Severity.ERROR, value=t0 or 0.0, limit=0.0, unit="V/V",
                margin=t0 or 0.0, limit_source="return ratio at DC (Bode, Network Analysis and Feedback Amplifier "
                "Design, 1945): no DC feedback",
                message=text, fix=f"resistor or reset switch across {caps[0]}", refs=(caps[0], stage.opamp),
                nets=(stage.in_minus, stage.out), extra={"feedback": "no-dc-path", "role": role},
            )
            continue
        if stage.feedback in ("positive", "none"):
            what = ("net positive feedback: the loop gain at DC is negative, so the output latches to a rail"
                    if stage.feedback == "positive" else "no feedback: it runs open loop and its output sits at a rail")
            yield make_finding(
                ctx, Severity.ERROR, value=t0 if t0 is not None else 0.0, limit=0.0, unit="V/V",
                margin=t0 if t0 is not None else 0.0,
                limit_source="sign of the return ratio at DC (Bode, Network Analysis and Feedback Amplifier "
                "Design, 1945)",
                message=f"{stage.opamp} has {what}{shown}", fix=META.fix, refs=(stage.opamp,),
                nets=(stage.in_plus, stage.in_minus, stage.out), extra={"feedback": stage.feedback, "role": role},
            )
