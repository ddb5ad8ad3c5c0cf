"""An op-amp supply pin on a net that is no declared rail (a misspelt rail name, a forgotten rail)."""

from __future__ import annotations

import difflib
from collections.abc import Iterator

from afecheck.checks.common import finding as make_finding
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import RuleMeta

META = RuleMeta(
    id="headroom.supply-pin-off-rail", slug="supply-pin-off-rail", severity=Severity.ERROR, family="headroom", needs=(),
    summary="an op-amp supply pin sits on a net that is not a declared rail of known voltage",
    fix="connect the pin to the intended rail, or declare the net under `rails:` with its voltage and tolerance",
)


def check(ctx: Context) -> Iterator[Finding]:
    """Each op-amp's v+/v- on a net that is neither ground, a rail with a voltage, nor held by a source."""
    d = ctx.loaded.design
    fixed = ctx.loaded.fixed_nets
    known = sorted({d.ground, *(n for n, r in d.rails.items() if r.voltage is not None)})
    for ref, comp in d.components.items():
        if comp.kind != "opamp":
            continue
        for pin in ("v+", "v-"):
            net = comp.pins.get(pin)
            if net is None:
                continue
            rail = d.rails.get(net)
            if net in fixed and (rail is None or rail.voltage is not None):
                continue
            if rail is not None:
                why = f"rail {net} declares no voltage"
            else:
                close = difflib.get_close_matches(net, known, n=1, cutoff=0.6)
                why = f"{net} is not a declared rail" + (f"; did you mean {close[0]}?" if close else "")
            yield make_finding(
                ctx, Severity.ERROR, value=0.0, limit=0.0, unit="V", margin=0.0,
                limit_source="the supply voltage must be known to judge any range (afecheck format, rails:)",
                message=f"{ref} {pin}: {why} (declared rails: {', '.join(known)})", fix=META.fix,
                refs=(ref,), nets=(net,), pins=(pin,), extra={"net": net, "declared_rails": ", ".join(known)},
            )
