"""Small helpers the reporters share: ordering, locations and status words."""

from __future__ import annotations

from collections.abc import Iterator

from afecheck.engine.finding import Finding
from afecheck.report.data import DesignResult, Entry, WaiverNote


def message(f: Finding) -> str:
    """The finding's message without a trailing "Fix: ..." (reporters show the fix on its own)."""
    tail = f"Fix: {f.fix}"
    text = f.message
    if f.fix and text.endswith(tail):
        text = text[: -len(tail)].rstrip(" .;") or text
    return text


def where(entry: Entry) -> str:
    """``file:line`` of a finding (just ``file`` when the line is unknown)."""
    loc = entry.finding.location
    file = loc.file or "<design>"
    return f"{file}:{loc.line}" if loc.line else file


def rule_label(entry: Entry) -> str:
    """How reports name a finding's rule: its identifier alone, in a quiet position after the message."""
    return entry.finding.rule


def by_stage(design: DesignResult) -> Iterator[tuple[str, tuple[Entry, ...]]]:
    """The design's entries grouped by stage: op-amp stages in design order, design-wide ones last."""
    order = list(design.stages) + sorted({e.stage for e in design.entries} - set(design.stages) - {""}) + [""]
    for stage in order:
        group = tuple(e for e in design.entries if e.stage == stage)
        if group:
            yield stage, group


def waiver_text(w: WaiverNote) -> str:
    until = f", until {w.expires}" if w.expires else ""
    return f"{w.justification} (accepted by {w.accepted_by}{until}; {w.file}:{w.line or 0})"


def expired_text(w: WaiverNote) -> str:
    return f"waiver expired on {w.expires} ({w.file}:{w.line or 0}); the finding is open again"


def unused_text(w: WaiverNote) -> str:
    rule = f" ({w.rule})" if w.rule and w.fingerprint else ""
    what = "fingerprint" if w.fingerprint else "rule and names"
    return f"{w.file}:{w.line or 0}: waiver {w.label}{rule} matches no finding; remove it or fix its {what}"
