"""Terminal report, grouped by design and stage: severity and message first, then where, the rule and the fix."""

from __future__ import annotations

from afecheck.report._common import (
    by_stage,
    expired_text,
    message,
    policy_text,
    root_label,
    rule_label,
    unused_text,
    visible,
    waiver_text,
    where,
)
from afecheck.report.cautions import cautions
from afecheck.report.data import Entry, Report, summary_line

_COLOURS = {"error": "\x1b[1;31m", "warning": "\x1b[33m", "info": "\x1b[36m", "head": "\x1b[1m", "dim": "\x1b[2m"}
_RESET = "\x1b[0m"


def _paint(text: str, style: str, color: bool) -> str:
    return f"{_COLOURS[style]}{text}{_RESET}" if color else text


def _entry_lines(entry: Entry, color: bool, roots: dict[str, Entry] | None = None) -> list[str]:
    f = entry.finding
    sev = _paint(f"{f.severity.label.upper():<7}", f.severity.label, color)
    tag = "" if entry.status == "open" else " " + _paint(f"({entry.status})", "dim", color)
    lines = [f"{sev} {visible(message(f))}{tag}",
             _paint(f"        at {visible(where(entry))} · rule {visible(rule_label(entry))}", "dim", color)]
    if entry.status == "fixed":
        return lines
    root = (roots or {}).get(f.caused_by) if f.caused_by else None
    if root is not None:
        lines.append(f"        follows from: {visible(root_label(root))}")
    lines.append(f"        fix: {visible(f.fix or 'see the rule page (afecheck rules ' + f.rule + ')')}")
    if f.assumed:
        lines.append(f"        assumed: {visible(', '.join(f.assumed))}")
    if entry.waiver is not None:
        lines.append(f"        waived: {visible(waiver_text(entry.waiver))}")
    if entry.expired_waiver is not None:
        lines.append(f"        note: {visible(expired_text(entry.expired_waiver))}")
    return lines


def render_text(report: Report, color: bool = False) -> str:
    """The report as terminal text; ``color`` adds ANSI colours (the caller decides: TTY and no NO_COLOR)."""
    out: list[str] = []
    hazards = report.hazards()
    if hazards:
        out.append(_paint(f"CAUTION (declared hazards: {visible(', '.join(hazards))}):", "error", color))
        out.extend(f"  - {line}" for line in cautions(hazards))
        out.append("")
    for design in report.designs:
        out.append(_paint(f"== {visible(design.file)} ({visible(design.name)}) ==", "head", color))
        out.append(policy_text(design))
        if design.hazards:
            out.append(f"hazards: {visible(', '.join(design.hazards))}: see the cautions above")
        if not design.entries:
            out.append("no findings")
        roots = {e.finding.fingerprint: e for e in design.entries}
        for stage, group in by_stage(design):
            out.append(_paint(f"-- stage {visible(stage)} --" if stage else "-- design-wide --", "head", color))
            for entry in group:
                out.extend(_entry_lines(entry, color, roots))
        out.append("")
    for w in report.expired_waivers:
        out.append(visible(f"{w.file}:{w.line or 0}: note: waiver {w.label} expired on {w.expires}"))
    for w in report.unused_waivers:
        out.append(visible(unused_text(w)))
    out.append("afecheck: " + summary_line(report))
    return "\n".join(out) + "\n"
