"""A non-inverting input's common-mode impedance divides the source signal (Rcm at DC, Ccm at f_max).

The loss is the change of the amplitude |H| = |Zin/(Rs + Zin)| from 1, not the length of the error vector
Rs/(Rs + Zin): a pole 159 times above the band shifts the phase by a third of a degree but the amplitude by
two parts per million. The phase shift is reported beside it. Where the pin already carries capacitors of the
circuit's own (a Sallen-Key filter's capacitor to ground), the op-amp's input capacitance is judged as a change of
that capacitance against the capacitors' own tolerance.
"""

from __future__ import annotations

import math
from collections.abc import Iterator

from afecheck.checks.common import attached, fmt, grade_above, part_value, pct
from afecheck.checks.common import finding as make_finding
from afecheck.checks.loading.sources import plus_source_resistance
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import Param, RuleMeta

META = RuleMeta(
    id="loading.input-divider", slug="input-impedance-divides-source", severity=Severity.ERROR, family="loading",
    summary="source resistance against a non-inverting input's resistance and capacitance loses signal",
    params=(
        Param("warn_fraction", 1e-3, "1", "amplitude loss 1 − |H| above which a warning is raised"),
        Param("error_fraction", 1e-2, "1", "amplitude loss 1 − |H| above which an error is raised"),
        Param("capacitor_tolerance", 0.05, "1", "tolerance assumed for a capacitor at the pin that declares none"),
    ),
    fix="lower the source resistance at the pin (shorter series resistor, buffer nearer the sensor) or choose a part "
        "with lower input capacitance",
)

_SKIP = ("inverting", "summing", "difference", "transimpedance", "integrator", "charge-amplifier")


def divider_response(rs: float, r_cm: float, c_in: float, f: float) -> complex:
    """H = Zin/(Rs + Zin) with Zin = Rcm || 1/(j2πf·Cin): what reaches the pin per volt of source."""
    z_in = r_cm / complex(1.0, 2.0 * math.pi * f * r_cm * c_in)
    return z_in / (rs + z_in)


def divider_error(rs: float, r_cm: float, c_in: float, f: float) -> float:
    """Amplitude loss 1 − |H| of the source divider at ``f`` (Ohm's law on the complex divider)."""
    return float(1.0 - abs(divider_response(rs, r_cm, c_in, f)))


def divider_phase_deg(rs: float, r_cm: float, c_in: float, f: float) -> float:
    """Phase of H in degrees (negative: the pin lags the source)."""
    return math.degrees(math.atan2(divider_response(rs, r_cm, c_in, f).imag, divider_response(rs, r_cm, c_in, f).real))


def max_source_resistance(r_cm: float, c_in: float, f: float, loss: float) -> float:
    """Largest Rs whose amplitude loss stays at ``loss``: the criterion the rule tests, solved by bisection."""
    lo, hi = 0.0, r_cm
    if divider_error(hi, r_cm, c_in, f) <= loss:
        return hi
    for _ in range(200):
        mid = math.sqrt(lo * hi) if lo > 0 else hi * 1e-9
        if divider_error(mid, r_cm, c_in, f) <= loss:
            lo = mid
        else:
            hi = mid
        if lo > 0 and hi / lo < 1.0 + 1e-9:
            break
    return lo


def node_capacitance(ctx: Context, net: str) -> tuple[float, float, tuple[str, ...]]:
    """(total capacitance, tightest tolerance, refs) of the circuit's own capacitors on ``net``."""
    comps = ctx.loaded.design.components
    refs = tuple(sorted(ref for ref, _ in attached(ctx.loaded, net, "capacitor")))
    if not refs:
        return 0.0, 0.0, ()
    default = ctx.param("capacitor_tolerance")
    tols = [comps[r].tolerance if comps[r].tolerance is not None else default for r in refs]  # type: ignore[union-attr]
    return float(sum(comps[r].value for r in refs)), float(min(tols)), refs  # type: ignore[union-attr]


def check(ctx: Context) -> Iterator[Finding]:
    """Amplitude loss at the highest signal frequency, or the input capacitance against the network's own."""
    warn, err = ctx.param("warn_fraction"), ctx.param("error_fraction")
    for stage in ctx.stages:
        if stage.topology in _SKIP:
            continue
        for inp in stage.inputs:
            if inp.pin != "in+" or inp.source.kind in ("current", "charge"):
                continue
            rs = plus_source_resistance(ctx.loaded, inp)
            if rs <= 0:
                continue
            r_cm, a1 = part_value(ctx, stage.opamp, "input_resistance_cm")
            c_cm, a2 = part_value(ctx, stage.opamp, "input_capacitance_cm")
            c_diff, a3 = part_value(ctx, stage.opamp, "input_capacitance_diff")
            if r_cm is None or c_cm is None or c_diff is None:
                continue
            c_in = c_cm + c_diff
            c_node, tol, caps = node_capacitance(ctx, stage.in_plus)
            if c_node > 0:
                yield from _against_network(ctx, stage, inp, c_in, c_node, tol, caps, a2 + a3)
                continue
            f = inp.source.f_max
            e_dc = divider_error(rs, r_cm, 0.0, 0.0)
            e = divider_error(rs, r_cm, c_in, f)
            severity = grade_above(e, warn, err)
            if severity is None:
                continue
            limit = err if severity == Severity.ERROR else warn
            phase = divider_phase_deg(rs, r_cm, c_in, f)
            rs_ok = max_source_resistance(r_cm, c_in, f, warn)
            at = f"at {fmt(f, 'Hz')}" if f > 0 else "at DC"
            text = (f"{stage.opamp} in+ from {inp.source.net}: {fmt(rs, 'Ω')} source against the input's "
                    f"{fmt(r_cm, 'Ω')} || {fmt(c_in, 'F')} loses {pct(e)} of the amplitude {at} (limit {pct(limit)}; "
                    f"{pct(e_dc)} at DC; phase {phase:.2f}°)")
            fix = (f"keep the source resistance at the pin below {fmt(rs_ok, 'Ω')} (amplitude loss under "
                   f"{pct(warn)} {at}): a buffer nearer the sensor, a shorter series resistor, or a part with "
                   "lower input capacitance")
            yield make_finding(
                ctx, severity, value=e, limit=limit, unit="1", margin=limit - e,
                limit_source="rule parameter (common practice)", message=text, fix=fix,
                refs=(*inp.via[:1], stage.opamp), nets=(inp.source.net, stage.in_plus), assumed=a1 + a2 + a3,
                extra={"source_resistance": rs, "input_resistance_cm": r_cm, "input_capacitance": c_in,
                       "frequency": f, "error_dc": e_dc, "phase_deg": phase, "max_source_resistance": rs_ok},
            )


def _against_network(ctx: Context, stage, inp, c_in: float, c_node: float, tol: float, caps: tuple[str, ...],
                     assumed: tuple[str, ...]) -> Iterator[Finding]:
    """The input capacitance as a change of the capacitance the circuit already puts at the pin."""
    share = c_in / c_node
    if share <= tol:
        return
    text = (f"{stage.opamp} in+ input capacitance {fmt(c_in, 'F')} adds {pct(share)} to the {fmt(c_node, 'F')} of "
            f"{', '.join(caps)} at {stage.in_plus}, more than their ±{pct(tol)} tolerance (limit {pct(tol)})")
    fix = (f"make {caps[0]} at least {fmt(c_in / tol, 'F')} (input capacitance within its tolerance), or count the "
           "input capacitance in the network's value, or choose a part with lower input capacitance")
    yield make_finding(
        ctx, Severity.WARNING, value=share, limit=tol, unit="1", margin=tol - share,
        limit_source=f"tolerance of {', '.join(caps)} (declared, else rule parameter capacitor_tolerance)",
        message=text, fix=fix, refs=(caps[0], stage.opamp), nets=(stage.in_plus,), assumed=assumed,
        extra={"input_capacitance": c_in, "node_capacitance": c_node, "tolerance": tol},
    )
