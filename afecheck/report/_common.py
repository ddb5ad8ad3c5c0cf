"""Small helpers the reporters share: ordering, locations and status words."""

from __future__ import annotations

import re
from collections.abc import Iterator

from afecheck.engine.finding import Finding
from afecheck.report.data import DesignResult, Entry, WaiverNote

_BIDI = "\u061c\u200e\u200f\u202a\u202b\u202c\u202d\u202e\u2066\u2067\u2068\u2069"
_HIDDEN = re.compile(f"[\\x00-\\x1f\\x7f-\\x9f{_BIDI}\\ufffe\\uffff\\ud800-\\udfff]")


def _escape(m: re.Match[str]) -> str:
    code = ord(m.group())
    return f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}"


def visible(text: object) -> str:
    """``text`` with every character that could act on a terminal or reorder what a reviewer reads shown as an
    escape: C0 and C1 controls (ESC, newline, tab...), DEL, bidirectional overrides, lone surrogates and the
    two non-characters XML forbids. ``ESC[2J`` prints as ``\\x1b[2J``; ordinary text is unchanged."""
    text = str(text)
    if text.isascii() and text.isprintable():
        return text
    return _HIDDEN.sub(_escape, text)


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


def root_label(root: Entry) -> str:
    """How a downstream finding names the root it rests on: rule, stage and where it is reported."""
    f = root.finding
    stage = f" on stage {root.stage}" if root.stage else ""
    return f"{f.rule}{stage} ({where(root)})"


def by_stage(design: DesignResult) -> Iterator[tuple[str, tuple[Entry, ...]]]:
    """The design's entries grouped by stage: op-amp stages in design order, design-wide ones last; inside a stage
    each finding is followed by the findings that rest on it (``caused_by``)."""
    order = list(design.stages) + sorted({e.stage for e in design.entries} - set(design.stages) - {""}) + [""]
    for stage in order:
        group = tuple(e for e in design.entries if e.stage == stage)
        if group:
            yield stage, _roots_first(group)


def _roots_first(group: tuple[Entry, ...]) -> tuple[Entry, ...]:
    prints = {e.finding.fingerprint for e in group}
    out: list[Entry] = []
    placed: set[int] = set()
    for e in group:
        if id(e) in placed or (e.finding.caused_by and e.finding.caused_by in prints):
            continue
        for item in (e, *(d for d in group if d.finding.caused_by == e.finding.fingerprint)):
            if id(item) not in placed:
                placed.add(id(item))
                out.append(item)
    out.extend(e for e in group if id(e) not in placed)
    return tuple(out)
def waiver_text(w: WaiverNote) -> str:
    until = f", until {w.expires}" if w.expires else ""
    return f"{w.justification} (accepted by {w.accepted_by}{until}; {w.file}:{w.line or 0})"


def expired_text(w: WaiverNote) -> str:
    return f"waiver expired on {w.expires} ({w.file}:{w.line or 0}); the finding is open again"


def unused_text(w: WaiverNote) -> str:
    rule = f" ({w.rule})" if w.rule and w.fingerprint else ""
    what = "fingerprint" if w.fingerprint else "rule and names"
    return f"{w.file}:{w.line or 0}: waiver {w.label}{rule} matches no finding; remove it or fix its {what}"


def policy_text(design: DesignResult) -> str:
    """Which rule set and config judged ``design``, in the words every report uses."""
    return f"rule set {visible(design.ruleset)}, " + (f"config {visible(design.config)}" if design.config
                                                       else "no config file")
