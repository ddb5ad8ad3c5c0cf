"""A class 2 ceramic capacitor (X7R, X5R, Y5V...) with signal across it in a feedback, filter or
coupling position. The AC voltage across it is found in closed form from its position (RULES-REFERENCE R4f)."""

from __future__ import annotations

import math
from collections.abc import Iterator

from afecheck.checks.common import ac_ground_nets, attached, design_band, fmt, parallel, pct
from afecheck.checks.common import finding as make_finding
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import Param, RuleMeta
from afecheck.model.schema import DIELECTRICS_CLASS2

META = RuleMeta(
    id="distortion.class2-ceramic", slug="class-2-ceramic-in-signal-path",
    severity=Severity.WARNING, family="distortion", needs=(),
    summary="class 2 ceramic capacitor with signal across it in a feedback, filter or coupling position",
    params=(Param("fraction", 0.01, "1", "capacitor voltage / signal voltage above which a warning is raised"),),
    fix="use a C0G/NP0 or film capacitor here; for coupling, make the capacitor large enough that little signal "
        "appears across it",
)


def rc_fraction(f: float, r: float, c: float) -> float:
    """|V_C/V_sig| = 1/sqrt(1 + (2πfRC)²): shunt C of an RC low-pass, or series C into R (RULES-REFERENCE R4f)."""
    return 1.0 / math.sqrt(1.0 + (2.0 * math.pi * f * r * c) ** 2)


def _net_resistance(ctx: Context, net: str, exclude: str) -> float:
    comps = ctx.loaded.design.components
    values = [comps[ref].value for ref, _ in attached(ctx.loaded, net, "resistor") if ref != exclude]  # type: ignore[union-attr]
    return parallel(*values) if values else math.inf


def _opamp_nets(ctx: Context) -> tuple[set[str], dict[str, str]]:
    outs: set[str] = set()
    inverting_of: dict[str, str] = {}
    for comp in ctx.loaded.design.components.values():
        if comp.kind == "opamp":
            out = comp.pins.get("out")
            if out:
                outs.add(out)
                inverting_of[out] = comp.pins.get("in-", "")
    return outs, inverting_of


def classify(ctx: Context, ref: str) -> tuple[str, float, float] | None:
    """(position, resistance it works against, worst-case k_C) for capacitor ``ref``; None if exempt."""
    comp = ctx.loaded.design.components[ref]
    a, b = comp.pins.get("1"), comp.pins.get("2")
    if a is None or b is None:
        return None
    grounds = ac_ground_nets(ctx.loaded)
    outs, _ = ctx.memo("class2.opamp_nets", lambda: _opamp_nets(ctx))
    band = ctx.memo("design_band", lambda: design_band(ctx.loaded))
    if band is None or (a in grounds and b in grounds):
        return None
    f_lo = band[0]
    if a in outs or b in outs:
        if a in grounds or b in grounds:
            return None  # a load on a stiff output: the op-amp forces the voltage
        return "feedback", 0.0, 1.0
    if a in grounds or b in grounds:
        node = b if a in grounds else a
        r = _net_resistance(ctx, node, ref)
        if not math.isfinite(r):
            return None
        return "filter", r, rc_fraction(f_lo, r, comp.value)  # type: ignore[union-attr]
    ra, rb = _net_resistance(ctx, a, ref), _net_resistance(ctx, b, ref)
    finite = [r for r in (ra, rb) if math.isfinite(r)]
    if not finite:
        return None
    r = max(finite)
    return "coupling", r, rc_fraction(f_lo, r, comp.value)  # type: ignore[union-attr]


def check(ctx: Context) -> Iterator[Finding]:
    """Warn for each class 2 ceramic whose worst in-band voltage exceeds the fraction of the signal."""
    limit = ctx.param("fraction")
    band = design_band(ctx.loaded)
    for ref, comp in ctx.loaded.design.components.items():
        if comp.kind != "capacitor" or comp.dielectric not in DIELECTRICS_CLASS2:  # type: ignore[union-attr]
            continue
        found = classify(ctx, ref)
        if found is None or band is None:
            continue
        position, r, k = found
        if k <= limit:
            continue
        against = f" against {fmt(r, 'Ω')}" if r > 0 else ""
        text = (f"{ref} ({fmt(comp.value, 'F')} {comp.dielectric}) sits in a {position} position{against} "  # type: ignore[union-attr]
                f"with {pct(k)} of the signal across it at {fmt(band[0], 'Hz')} (limit {pct(limit)}): its "
                "capacitance moves with the voltage and distorts the signal")
        nets = tuple(n for n in (comp.pins.get("1"), comp.pins.get("2")) if n)
        yield make_finding(
            ctx, Severity.WARNING, value=k, limit=limit, unit="1", margin=limit - k,
            limit_source="rule parameter (common practice; dielectric classes per IEC 60384-1)", message=text,
            fix=META.fix,
            refs=(ref,), nets=nets, extra={"position": position, "resistance": r, "frequency": band[0],
                                            "dielectric": comp.dielectric},  # type: ignore[union-attr]
        )
