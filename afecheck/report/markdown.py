"""Markdown summary for a pull-request comment: counts, a table of open findings, the rest folded away."""

from __future__ import annotations

import re

from afecheck.report._common import message, policy_text, rule_label, unused_text, visible, where
from afecheck.report.cautions import cautions
from afecheck.report.data import Entry, Report, plural, summary_line
from afecheck.report.stage_lines import stage_line

MAX_ROWS = 50
_ICON = {"error": "🛑 error", "warning": "⚠️ warning", "info": "ℹ️ info"}


_MARKUP = re.compile(r"([\\`*_\[\]<>|~&!#])")


def _cell(text: str) -> str:
    """Text safe in a table cell or list item: controls shown as escapes, Markdown and HTML markup escaped."""
    return _MARKUP.sub(r"\\\1", visible(text))


def _table(entries: list[Entry], with_note: bool = False) -> list[str]:
    head = "| Severity | Rule | Where | Message | Fix |" + (" Note |" if with_note else "")
    rule = "|---|---|---|---|---|" + ("---|" if with_note else "")
    rows = [head, rule]
    for e in entries:
        f = e.finding
        row = (f"| {_ICON[f.severity.label]} | {_cell(rule_label(e))} | {_cell(where(e))} | {_cell(message(f))} "
               f"| {_cell(f.fix)} |")
        if with_note:
            note = e.status
            if e.waiver is not None:
                note += f": {e.waiver.justification} ({e.waiver.accepted_by})"
            row += f" {_cell(note)} |"
        rows.append(row)
    return rows


def render_markdown(report: Report) -> str:
    """A short pull-request comment: verdict, counts by severity, open findings, and folded waived/baselined ones."""
    c = report.counts()
    if report.fail_on is None:
        head = (f"### afecheck: gate not applied (fail level never): {plural(c['error'], 'error')}, "
                f"{plural(c['warning'], 'warning')} open")
    else:
        head = f"### afecheck {'❌ fails' if report.failed() else '✅ passes'} the gate"
    out = [head, "", summary_line(report), ""]
    policies = sorted({policy_text(d) for d in report.designs})
    if policies:
        out += ["Judged with " + "; ".join(_cell(p) for p in policies) + ".", ""]
    hazards = report.hazards()
    if hazards:
        out.append(f"> **Caution (declared hazards: {_cell(', '.join(hazards))})**")
        out.extend(f"> - {line}" for line in cautions(hazards))
        out.append("")
    out += ["| error | warning | info | waived | unchanged | fixed |", "|---:|---:|---:|---:|---:|---:|",
            f"| {c['error']} | {c['warning']} | {c['info']} | {c['waived']} | {c['unchanged']} | {c['fixed']} |", ""]
    entries = report.entries()
    active = [e for e in entries if e.active]
    if active:
        out += _table(active[:MAX_ROWS]) + [""]
        if len(active) > MAX_ROWS:
            out += [f"…and {len(active) - MAX_ROWS} more active findings: see the full text, JSON or SARIF report.", ""]
    else:
        out += ["No open findings.", ""]
    stages = [(d, v) for d in report.designs for v in d.stage_views]
    if stages:
        several = len(report.designs) > 1
        out += ["**Stages**", ""]
        out += [f"- {_cell(d.name) + ': ' if several else ''}{_cell(stage_line(v))}" for d, v in stages[:MAX_ROWS]]
        if len(stages) > MAX_ROWS:
            out.append(f"- …and {len(stages) - MAX_ROWS} more stages: see `afecheck stages` or the HTML report.")
        out.append("")
    for status, title in (("waived", "waived"), ("unchanged", "already in the baseline"), ("fixed", "fixed")):
        group = [e for e in entries if e.status == status]
        if group:
            out += ["<details>", f"<summary>{len(group)} {title}</summary>", ""]
            out += _table(group, with_note=True) + ["", "</details>", ""]
    notes = [f"- expired waiver {_cell(w.label)} ({_cell(w.file)}:{w.line or 0}, expired {w.expires}): "
             "finding re-opened" for w in report.expired_waivers]
    notes += [f"- {_cell(unused_text(w))}" for w in report.unused_waivers]
    notes += [f"- {_cell(n)}" for n in report.notes]
    if notes:
        out += ["**Notes**", ""] + notes + [""]
    return "\n".join(out).rstrip("\n") + "\n"
