"""An op-amp input with no DC path to a defined voltage (capacitors open): it drifts to a rail at power-up."""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.checks.common import finding as make_finding
from afecheck.checks.common import switching
from afecheck.checks.stability.feedback_sign import capacitor_feedback
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import RuleMeta

META = RuleMeta(
    id="headroom.no-bias-path", slug="input-without-dc-bias-path", severity=Severity.ERROR, family="headroom",
    summary="an op-amp input has no DC path to a defined voltage, so its bias current charges it to a rail",
    fix="add a resistor from the input to the reference it should sit at (ground, mid-rail), sized so that bias "
        "current times it stays inside the offset budget",
)


def check(ctx: Context) -> Iterator[Finding]:
    """Each in+/in- net that reaches no fixed, signal or output net through resistors (capacitors open)."""
    from afecheck.graph.build import circuit_of
    from afecheck.graph.queries import has_dc_path

    circuit = ctx.memo("circuit", lambda: circuit_of(ctx.loaded))
    for stage in ctx.stages:
        for pin, net in (("in+", stage.in_plus), ("in-", stage.in_minus)):
            if not net or has_dc_path(circuit, net):
                continue
            if pin == "in-" and stage.feedback == "none" and capacitor_feedback(ctx, net, stage.out):
                continue  # capacitor-only feedback with nothing else at DC: stability.feedback-sense reports that loop
            if pin == "in-" and switching(ctx.loaded, stage.opamp):
                continue
            parts = sorted(ref for ref, _pin in circuit.net_pins.get(net, ()) if ref != stage.opamp)
            around = f" (only {', '.join(parts)} on it)" if parts else ""
            text = (f"{stage.opamp} {pin} on {net} has no DC path to a defined voltage{around}: with capacitors open "
                    "its bias current charges the node until the stage sits at a rail at power-up")
            yield make_finding(
                ctx, Severity.ERROR, value=0.0, limit=0.0, unit="S", margin=0.0,
                limit_source="every op-amp input needs a DC return for its bias current (Jung, Op Amp "
                             "Applications Handbook, 2005, ch. 1)",
                message=text, fix=META.fix, refs=(stage.opamp, *parts[:1]), nets=(net,), pins=(pin,),
                extra={"pin": pin},
            )
