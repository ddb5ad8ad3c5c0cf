"""budgets.noise: the integrated noise at a net, over its signal band, is larger than the net's noise budget."""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.checks.budgets.shared import noise_of_budgets, over_budget, top_shares
from afecheck.checks.common import fmt, not_evaluated
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import Param, RuleMeta

META = RuleMeta(
    id="budgets.noise", slug="noise-over-budget", severity=Severity.ERROR, family="budgets",
    summary="integrated output noise over the signal band exceeds the net's noise budget",
    needs=("noise",),
    params=(
        Param("budget_warn", 0.8, "1", "share of the noise budget above which a warning is raised"),
        Param("budget_error", 1.0, "1", "share of the noise budget above which an error is raised"),
    ),
    fix="lower the resistances that lead the contributor list, choose a quieter op-amp for the stage whose noise "
        "leads, or narrow the noise bandwidth with a filter before the measured net",
)


def check(ctx: Context) -> Iterator[Finding]:
    """Output-referred RMS noise over the band against ``budgets.<net>.noise``, with the contributors ranked."""
    result = noise_of_budgets(ctx)
    for net, budget in ctx.loaded.design.budgets.items():
        if budget.noise is None:
            continue
        if net in result.not_evaluated:
            yield not_evaluated(ctx, f"noise at {net}", result.not_evaluated[net], nets=(net,))
            continue
        nn = result.nets[net]
        lead = nn.contributors[0] if nn.contributors else None
        found = over_budget(
            ctx, net, "noise", nn.output_rms, budget.noise, "V",
            f"rms noise over {fmt(nn.band[0], 'Hz')}..{fmt(nn.band[1], 'Hz')} at {nn.temperature_k:.1f} K",
            f"largest contributors: {top_shares(nn.contributors)}", refs=lead.refs if lead else (),
            assumed=nn.assumed,
            extra={"band_low_hz": nn.band[0], "band_high_hz": nn.band[1], "temperature_k": nn.temperature_k,
                   "top_contributors": top_shares(nn.contributors),
                   **({"input_rms": nn.input_rms} if nn.input_rms is not None else {})})
        if found is not None:
            yield found
