"""The reviewer's page: one self-contained HTML file (styles, plots and rule pages inline; no fetch of any kind).

Top: verdict against the gate, counts, designs, cautions, what could not be evaluated. Then the findings, a card per
stage (parts, numbers, loop-gain, closed-loop and headroom plots) and the rule pages. Jinja2 with autoescaping
renders it; the plots are matplotlib SVG (report/plots.py). Both are imported only when this format is asked for.
Formatting only: every number and curve comes from the report data.
"""

from __future__ import annotations

import importlib.util
import math
import re
from importlib import resources
from typing import Any

from afecheck.model.units import format_si
from afecheck.report._common import message, where
from afecheck.report.cautions import cautions
from afecheck.report.data import (
    STATUS_MEANING,
    DcErrorPanel,
    Entry,
    ErrorTerm,
    ErrorTotal,
    NetBudget,
    NoisePanel,
    Report,
    StageView,
    fail_level_label,
    plural,
)
from afecheck.report.stage_lines import headroom_text, loop_text, si

DEPENDENCIES = (("jinja2", "Jinja2"), ("matplotlib", "matplotlib"))
SHAPES = {"error": "■", "warning": "▲", "info": "●"}
MAX_PLOTTED_STAGES = 40  # a page of thousands of channels keeps its numbers but not thousands of plots
_SI_UNITS = {"V", "A", "Hz", "Ω", "F", "W", "s", "V/s", "V/√Hz", "A/√Hz"}


def missing_dependencies() -> list[str]:
    """Names of the packages the HTML report needs that are not installed (empty when all are)."""
    return [name for module, name in DEPENDENCIES if importlib.util.find_spec(module) is None]


def render_html(report: Report) -> str:
    """The whole report as one HTML page (byte-identical for the same report)."""
    import jinja2

    env = jinja2.Environment(autoescape=True, undefined=jinja2.StrictUndefined, trim_blocks=True,
                             lstrip_blocks=True, keep_trailing_newline=True)
    source = resources.files("afecheck.report").joinpath("templates", "report.html.j2").read_text(encoding="utf-8")
    return env.from_string(source).render(**_page(report))


def _markup(text: str) -> Any:
    """Trusted HTML we built ourselves (plots, rule pages): every design string inside was escaped first."""
    from markupsafe import Markup

    return Markup(text)


def _page(report: Report) -> dict[str, Any]:
    from afecheck.report import markup, plots

    counts = report.counts()
    stage_ids: dict[tuple[int, str], str] = {}
    designs = []
    for i, d in enumerate(report.designs, 1):
        for j, v in enumerate(d.stage_views, 1):
            stage_ids[(i, v.opamp)] = f"stage-{i}-{j}"
    rule_ids = {r.id: f"rule-{_token(r.id)}" for r in report.rules}
    findings = []
    n = 0
    for i, d in enumerate(report.designs, 1):
        for e in d.entries:
            n += 1
            findings.append(_finding(e, n, i, stage_ids, rule_ids, report))
    by_stage: dict[str | None, list[dict[str, Any]]] = {}
    for f in findings:
        by_stage.setdefault(f["stage_id"], []).append(f)
    plotted = 0
    for i, d in enumerate(report.designs, 1):
        stages = []
        for j, v in enumerate(d.stage_views, 1):
            sid = f"stage-{i}-{j}"
            draw = plotted < MAX_PLOTTED_STAGES
            plotted += 1
            stages.append(_stage(v, sid, by_stage.get(sid, []), plots if draw else None))
        designs.append({
            "id": f"design-{i}", "name": d.name, "file": d.file, "ruleset": d.ruleset, "config": d.config,
            "hazards": d.hazards, "stages": stages, "opamps": d.stages,
            "wide": [f for f in by_stage.get(None, []) if f["design"] == i],
            "counts": _counts(d.entries),
        })
    used = [r for r in report.rules if any(f["rule"] == r.id for f in findings)]
    rules = [{"id": rule_ids[r.id], "rule": r, "html": _markup(markup.to_html(r.help, 2, rule_ids[r.id]))}
             for r in used]
    not_evaluated = [f for f in findings if f["confidence"] == "not-evaluated"]
    stage_gaps = [(d["name"], s["view"].opamp, s["id"], reason) for d in designs for s in d["stages"]
                  for reason in s["view"].not_evaluated]
    if report.fail_on is None:
        verdict = ("not-applied", f"Gate not applied (fail level never): {plural(counts['error'], 'error')} and "
                                  f"{plural(counts['warning'], 'warning')} open")
    elif report.failed():
        gating = sum(1 for e in report.entries() if report.gating(e))
        verdict = ("fail", f"FAIL: {plural(gating, 'finding')} at or above the fail level "
                           f"({fail_level_label(report.fail_on)})")
    else:
        verdict = ("pass", f"PASS: nothing open at or above the fail level ({fail_level_label(report.fail_on)})")
    names = ", ".join(d.name for d in report.designs)
    return {
        "title": f"afecheck review: {names}" if names else "afecheck review",
        "verdict": verdict, "counts": counts, "designs": designs, "findings": findings, "rules": rules,
        "cautions": cautions(report.hazards()), "hazards": report.hazards(), "not_evaluated": not_evaluated,
        "stage_gaps": stage_gaps, "version": report.tool_version, "fail_on": fail_level_label(report.fail_on),
        "baseline": report.baseline, "statuses": STATUS_MEANING, "shapes": SHAPES,
        "unused_waivers": report.unused_waivers, "expired_waivers": report.expired_waivers,
        "max_plotted": MAX_PLOTTED_STAGES,
    }


def _counts(entries: tuple[Entry, ...]) -> dict[str, int]:
    out = {"error": 0, "warning": 0, "info": 0}
    for e in entries:
        if e.active:
            out[e.finding.severity.label] += 1
    return out


def _token(text: str) -> str:
    """``text`` reduced to characters safe in an id."""
    return re.sub(r"[^A-Za-z0-9_-]+", "-", text).strip("-") or "x"


def _finding(e: Entry, n: int, design: int, stage_ids: dict[tuple[int, str], str], rule_ids: dict[str, str],
             report: Report) -> dict[str, Any]:
    f = e.finding
    numbers = []
    ctx = dict(f.ctx)
    unit = str(ctx.get("unit", "")) if isinstance(ctx.get("unit", ""), str) else ""
    for key in ("value", "limit", "margin"):
        if key in ctx:
            numbers.append((key, number(ctx[key], unit)))
    for key, value in sorted(ctx.items()):
        if key in ("value", "limit", "margin", "unit", "limit_source", "reason"):
            continue
        numbers.append((key.replace("_", " "), number(value, _unit_of(key))))
    return {
        "id": f"finding-{n}", "design": design, "severity": f.severity.label, "rule": f.rule, "slug": f.slug,
        "rule_id": rule_ids.get(f.rule), "message": message(f), "fix": f.fix, "where": where(e),
        "stage": e.stage, "stage_id": stage_ids.get((design, e.stage)) if e.stage else None,
        "numbers": numbers, "limit_source": ctx.get("limit_source"), "confidence": f.confidence,
        "assumed": f.assumed, "status": e.status, "gating": report.gating(e),
        "waiver": e.waiver.justification + f" ({e.waiver.accepted_by})" if e.waiver else None,
    }


_KEY_UNITS = (("_hz", "Hz"), ("frequency", "Hz"), ("_deg", "°"), ("_db", "dB"), ("_ohm", "Ω"), ("resistance", "Ω"),
              ("r_", "Ω"), ("current", "A"), ("capacitance", "F"), ("vcm", "V"), ("vout", "V"), ("voltage", "V"))


def _unit_of(key: str) -> str:
    """The unit a ctx key's name implies (``crossover_hz`` -> Hz), for display only."""
    for part, unit in _KEY_UNITS:
        if part in key if not part.endswith("_") else key.startswith(part):
            return unit
    return ""


def number(value: Any, unit: str = "") -> str:
    """A ctx value for people: SI prefixes for SI units, one decimal for degrees and dB, else 4 significant."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return str(value)
    if not math.isfinite(value):
        return str(value)
    if unit in _SI_UNITS:
        return format_si(float(value), unit, 3)
    if unit in ("deg", "°"):
        return f"{value:.1f}°"
    if unit == "dB":
        return f"{value:.1f} dB"
    return f"{value:.4g}{(' ' + unit) if unit and unit != '1' else ''}"


def _stage(v: StageView, sid: str, findings: list[dict[str, Any]], plots: Any) -> dict[str, Any]:
    """A stage card: names, numbers, plots with their text alternatives (none when ``plots`` is None), findings."""
    rows = [("topology", v.topology), ("part", v.part), ("feedback", v.feedback)]
    for i in v.inputs:
        gain = f"{i.gain:.4g}" + (f" (in band {i.band_gain:.4g})" if i.band_gain is not None else "")
        via = ", ".join(i.via) or "direct"
        rows.append((f"gain from {i.net} ({i.pin}, via {via})", gain))
    rows += [
        ("noise gain at DC", _opt(v.noise_gain_dc, "{:.4g}")),
        ("noise gain at crossover", _opt(v.noise_gain_at_crossover, "{:.4g}")),
        ("loop gain at DC", _opt(v.loop_gain_dc, "{:.4g}")),
        ("crossover", si(v.crossover_hz, "Hz")),
        ("phase margin", _opt(v.phase_margin_deg, "{:.1f}°") + (" (estimated)" if v.estimated else "")),
        ("gain margin", _opt(v.gain_margin_db, "{:.1f} dB")),
        ("rails", f"{v.rail_minus:g} V / {v.rail_plus:g} V"),
    ]
    for h in v.headroom:
        rows.append((f"{h.label} range", f"{si(h.signal_low, 'V')} to {si(h.signal_high, 'V')}"))
        rows.append((f"{h.label} limits", f"{si(h.limit_low, 'V')} to {si(h.limit_high, 'V')}"))
        rows.append((f"{h.label} margins", f"{_margin(h.margin_low)} low, {_margin(h.margin_high)} high"))
    if v.f_max > 0:
        rows.append(("highest signal frequency", si(v.f_max, "Hz")))
        rows.append(("output AC peak", si(v.vout_ac_peak, "V")))
    if v.required_slew_rate > 0:
        rows.append(("slew rate needed", si(v.required_slew_rate * 1e-6, "V/µs")))
    rows += [("closed-loop output resistance", si(v.output_resistance, "Ω")),
             ("load", f"{si(v.load_resistance, 'Ω')}, {si(v.load_capacitance, 'F')}")]
    if v.assumed:
        rows.append(("assumed part defaults", ", ".join(v.assumed)))
    figures: list[dict[str, Any]] = []
    budgets = [_budget(b, f"{sid}-net{k}", plots) for k, b in enumerate(v.budgets, 1)]
    if plots is None:
        return {"id": sid, "view": v, "rows": rows, "figures": figures, "findings": findings,
                "parts": ", ".join((v.opamp, *v.refs)), "unplotted": True, "budgets": budgets}
    loop = plots.loop_plot(v, f"{sid}-loop")
    if loop is not None:
        text = f"Loop gain |T| and phase of {v.opamp} against frequency: {loop_text(v)}."
        if v.phase_margin_limits_deg is not None:
            text += (f" Limit lines: phase margin warning below {v.phase_margin_limits_deg[0]:g}°, "
                     f"error below {v.phase_margin_limits_deg[1]:g}°.")
        figures.append({"id": f"{sid}-loop", "svg": _markup(loop), "caption": text})
    closed = plots.closed_loop_plot(v, f"{sid}-closed")
    if closed is not None:
        band = (f" over the signal band {si(v.band_hz[0], 'Hz')} to {si(v.band_hz[1], 'Hz')}" if v.band_hz else "")
        sources = ", ".join(t.label for t in v.closed_loop)
        gains = "; ".join(f"from {i.net}: {i.band_gain if i.band_gain is not None else i.gain:.4g}"
                          for i in v.inputs if i.net in {t.label for t in v.closed_loop})
        figures.append({"id": f"{sid}-closed", "svg": _markup(closed),
                        "caption": f"Closed-loop response from {sources} to {v.out}{band}; gain {gains}."})
    bar = plots.headroom_plot(v, f"{sid}-headroom")
    if bar is not None:
        text = "; ".join(f"{h.label}: signal {si(h.signal_low, 'V')} to {si(h.signal_high, 'V')}, limits "
                         f"{si(h.limit_low, 'V')} to {si(h.limit_high, 'V')}, {headroom_text(h)}" for h in v.headroom)
        figures.append({"id": f"{sid}-headroom", "svg": _markup(bar),
                        "caption": f"Headroom of {v.opamp} between rails {v.rail_minus:g} V and {v.rail_plus:g} V: "
                                   f"{text}."})
    return {"id": sid, "view": v, "rows": rows, "figures": figures, "findings": findings,
            "parts": ", ".join((v.opamp, *v.refs)), "unplotted": False, "budgets": budgets}


def _opt(value: float | None, fmt: str) -> str:
    return "n/a" if value is None else fmt.format(value)


def _margin(value: float | None) -> str:
    if value is None:
        return "no limit given"
    return f"{si(value, 'V')} inside" if value >= 0 else f"{si(-value, 'V')} beyond"


def _v(x: float) -> str:
    return format_si(float(x), "V", 3)


def _pct(x: float | None) -> str:
    return "-" if x is None else f"{100 * x:.3g} %"


def _budget(b: NetBudget, bid: str, plots: Any) -> dict[str, Any]:
    """The noise and DC-error panels of one net: the noise plot (when plots are drawn) with a caption carrying the
    totals and every contributor's share, the contributor table, and the DC-error worksheet as tables."""
    out: dict[str, Any] = {"id": bid, "net": b.net, "not_evaluated": b.not_evaluated, "figure": None,
                           "noise": None, "dc": None}
    if b.noise is not None:
        n = b.noise
        summary = _noise_summary(n)
        out["noise"] = {"summary": summary, "rows": [(c.name, c.kind, _v(c.output_rms), f"{100 * c.share:.3g} %")
                                                     for c in n.contributors]}
        svg = plots.noise_plot(n, f"{bid}-noise") if plots is not None else None
        if svg is not None:
            shares = ", ".join(f"{c.name} {100 * c.share:.2g} %" for c in n.contributors)
            out["figure"] = {"id": f"{bid}-noise", "svg": _markup(svg),
                             "caption": f"Output noise density at {n.net} against frequency: {summary}. "
                                        f"Contributors by share of the noise power: {shares}."}
    if b.dc_error is not None:
        out["dc"] = _dc_tables(b.dc_error)
    return out


def _noise_summary(n: NoisePanel) -> str:
    text = (f"{_v(n.output_rms)} rms over {si(n.band_hz[0], 'Hz')} to {si(n.band_hz[1], 'Hz')} at "
            f"{n.temperature_k:.1f} K")
    if n.input_rms is not None:
        text += f" (input-referred {_v(n.input_rms)} from {n.signal})"
    if n.budget is not None:
        text += f", budget {_v(n.budget)} ({_pct(n.budget_used)} used{', OVER' if (n.budget_used or 0) > 1 else ''})"
    return text


def _limit(t: ErrorTerm) -> str:
    if t.limit_unit == "%":
        return f"±{100 * t.limit:.3g} %"
    if t.limit_unit in ("V", "A"):
        return "±" + format_si(t.limit, t.limit_unit, 3)
    return f"{t.limit:.4g} {t.limit_unit}".strip()


def _term_row(t: ErrorTerm) -> tuple[str, ...]:
    return (t.name + ("" if t.counted else " (sensor, not counted)"), _limit(t), _v(t.error_low), _v(t.error_high),
            _v(t.offset), _pct(None if t.gain_error is None else abs(t.gain_error)))


def _total_row(t: ErrorTotal) -> tuple[str, ...]:
    show = _v if t.unit == "V" else _pct
    used = "" if t.budget_used is None else f" ({_pct(t.budget_used)} used{', OVER' if t.budget_used > 1 else ''})"
    return (t.label, show(t.worst), show(t.rss), "-" if t.budget is None else show(t.budget) + used)


def _dc_tables(e: DcErrorPanel) -> dict[str, Any]:
    totals = [_total_row(t) for t in e.totals]
    summary = "; ".join(f"{t.label} {show(t.worst)} worst, {show(t.rss)} RSS"
                        + ("" if t.budget is None else f", budget {show(t.budget)}")
                        for t in e.totals for show in (_v if t.unit == "V" else _pct,))
    temp = ("" if e.temperature_range is None
            else f"{e.temperature_range[0]:g} °C to {e.temperature_range[1]:g} °C")
    return {"terms": [_term_row(t) for t in e.terms], "drift": [_term_row(t) for t in e.drift_terms],
            "totals": totals, "summary": summary, "ideal": f"{_v(e.ideal_low)} to {_v(e.ideal_high)}",
            "corners": f"{_v(e.corner_low)} to {_v(e.corner_high)}", "temperature": temp}
