"""The budgets worksheet as text: per net, noise and DC error totals against their budgets, top contributors."""

from __future__ import annotations

from typing import Any

from afecheck.model.units import format_si

TOP = 3


def _v(x: float) -> str:
    return format_si(float(x), "V", 3)


def _pct(x: float) -> str:
    return f"{100 * x:.3g} %"


def _against(value: float, budget: float | None, show) -> str:  # noqa: ANN001 - a formatter
    return "" if budget is None else f", budget {show(budget)} ({100 * value / budget:.0f} %)"


def _top(items: Any, fmt) -> str:  # noqa: ANN001 - contributors or terms, and how to show one
    return ", ".join(fmt(c) for c in list(items)[:TOP])


def _largest(t: Any) -> str:
    """A term with its larger error over the two signal ends."""
    return f"{t.name} {_v(max(abs(t.error_low), abs(t.error_high)))}"


def render_worksheet(ws: Any) -> str:
    """One block per net: noise (output and input-referred RMS over the band), offset, gain error, nonlinearity,
    drift."""
    lines = ["", "Budgets worksheet (worst case = linear sum of terms, statistical = root-sum-square):"]
    for net in ws.nets:
        budget = ws.budgets.get(net) or {}
        lines.append(f"  {net}")
        nn = ws.noise.nets.get(net)
        if nn is not None:
            inp = "" if nn.input_rms is None else f" (input-referred {_v(nn.input_rms)} from {nn.signal})"
            lines.append(f"    noise   {_v(nn.output_rms)} rms over {format_si(nn.band[0], 'Hz')}.."
                         f"{format_si(nn.band[1], 'Hz')} at {nn.temperature_k:.1f} K{inp}"
                         + _against(nn.output_rms, budget.get("noise"), _v))
            lines.append("            top: " + _top(nn.contributors, lambda c: f"{c.name} {100 * c.share:.2g} %"))
        elif net in ws.noise.not_evaluated:
            lines.append(f"    noise   not evaluated: {ws.noise.not_evaluated[net]}")
        e = ws.dc_error.nets.get(net)
        if e is not None:
            counted = [t for t in e.terms if t.kind != "sensor"]
            lines.append(f"    offset  {_v(e.offset_worst)} worst, {_v(e.offset_rss)} RSS"
                         + _against(e.offset_worst, budget.get("offset"), _v)
                         + f"; total error at the worst corners {_v(e.corner_low)}..{_v(e.corner_high)}")
            lines.append("            top: " + _top(sorted(counted, key=lambda t: -abs(t.offset)),
                                                  lambda t: f"{t.name} {_v(abs(t.offset))}"))
            lines += [f"            {t.name}: ±{_v(t.limit)} at {t.refs[0]}'s terminals, {_v(abs(t.offset))} here, "
                      f"{t.hot_junction_c:.3g} °C at its hot junction" for t in counted if t.hot_junction_c is not None]
            if e.gain_error_worst is not None:
                lines.append(f"    gain    {_pct(e.gain_error_worst)} worst, {_pct(e.gain_error_rss or 0.0)} RSS"
                             + _against(e.gain_error_worst, budget.get("gain_accuracy"), _pct))
                lines.append("            top: " + _top(sorted(counted, key=lambda t: -abs(t.gain_error or 0.0)),
                                                      lambda t: f"{t.name} {_pct(abs(t.gain_error or 0.0))}"))
            nl = e.nonlinearity
            if nl is not None and nl.fraction is not None:
                where = (f"{_v(nl.worst)} off the line at {100 * nl.at:.0f} % of the range" if nl.worst
                         else "a straight line")
                lines.append(f"    nonlin  {_pct(nl.fraction)} of the {_v(abs(nl.span))} span (end-point): {where}"
                             + _against(nl.fraction, budget.get("nonlinearity"), _pct))
                lines.append(f"            swept: {nl.over}")
            if e.temperature_range is not None:
                lo, hi = e.temperature_range
                lines.append(f"    drift   {_v(e.drift_worst)} worst, {_v(e.drift_rss)} RSS over {lo:g}..{hi:g} °C"
                             + _against(e.drift_worst, budget.get("drift"), _v))
                lines.append("            top: " + _top(e.drift_terms, _largest))
            sensor = [t for t in e.terms if t.kind == "sensor"]
            if sensor:
                lines.append("            sensor, not counted: " + _top(sensor, _largest))
        elif net in ws.dc_error.not_evaluated:
            lines.append(f"    DC error not evaluated: {ws.dc_error.not_evaluated[net]}")
        lines += _adc_lines(ws, net)
    lines += _supply_lines(ws)
    return "\n".join(lines) + "\n"


def _g(x: float | None) -> str:
    return "-" if x is None else f"{x:g}"


def _supply_lines(ws: Any) -> list[str]:
    """Per op-amp: supply span at the rails' corners against the part's range, over-driven inputs, load capacitance."""
    lines = ["", "Supply and abuse limits:"]
    for ref, c in ws.supply.opamps.items():
        span = "-" if c.span_min is None else f"{c.span_min:.4g}..{c.span_max:.4g} V"
        rated = f"{_g(c.supply_min)}..{_g(c.supply_max)} V"
        text = (f"  {ref} ({c.part}): supply {span} (V+ {c.plus_v:g} V, V- {c.minus_v:g} V; rated {rated}); "
                f"load {format_si(c.load_capacitance, 'F')}")
        if c.max_capacitive_load is not None:
            text += f" of {format_si(c.max_capacitive_load, 'F')} allowed"
        lines.append(text)
        if c.isolation_resistance is not None:
            lines.append(f"    isolation resistor {format_si(c.isolation_resistance, 'Ω')} gives "
                         f"{c.phase_margin_with_iso_deg:.1f}° of phase margin")
        for d in c.inputs:
            lines.append(f"    {d.pin} from {d.source}: {_v(d.beyond_v)} past a rail's diode through "
                         f"{format_si(d.resistance, 'Ω')}: {format_si(d.current, 'A')} "
                         f"(limit {format_si(c.input_current_limit, 'A')})")
        lines += [f"    note: {n}" for n in c.notes]
    return lines


def _adc_lines(ws: Any, net: str) -> list[str]:
    """Range and fill, alias attenuation, settling and kick-back of the ADC on ``net``, if any."""
    a = ws.adc.nets.get(net)
    if a is None:
        reason = ws.adc.not_evaluated.get(net)
        return [f"    ADC     not evaluated: {reason}"] if reason else []
    lines = [f"    ADC     {a.bits} bits at {format_si(a.sample_rate, 'Hz')}, "
             f"range {a.input_low:.4g}..{a.input_high:.4g} V"]
    if a.codes_used is not None:
        lines.append(f"            signal {a.signal_low:.4g}..{a.signal_high:.4g} V: margins {_v(a.margin_low)} low, "
                     f"{_v(a.margin_high)} high; {_pct(a.codes_used)} of the codes")
    if a.attenuation_db is not None:
        lines.append(f"            alias {format_si(a.alias_hz, 'Hz')} attenuated {a.attenuation_db:.1f} dB "
                     f"(6.02·N + 1.76 = {a.required_db:.1f} dB)")
    if a.settling_time is not None:
        given = "assumed" if a.acquisition_assumed else "declared"
        lines.append(f"            settling {a.time_constants_needed:.2f} τ of {format_si(a.tau, 's')} = "
                     f"{format_si(a.settling_time, 's')} in {format_si(a.acquisition_time, 's')} ({given}); driver "
                     f"{a.driver} via {format_si(a.series_resistance, 'Ω')} into "
                     f"{format_si(a.rc_capacitance + a.load_capacitance, 'F')}")
    if a.capacitor_ratio is not None:
        lines.append(f"            kick-back: C {format_si(a.rc_capacitance, 'F')} = {a.capacitor_ratio:.3g} × the "
                     f"{format_si(a.sampling_capacitance, 'F')} sampling capacitor")
    lines += [f"            note: {n}" for n in a.notes]
    return lines
