"""Gate semantics: give each finding its status (open, new, unchanged, waived) and pick the exit code."""

from __future__ import annotations

import datetime as dt
from collections import Counter
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, replace

from afecheck.engine.finding import Finding, Severity
from afecheck.policy.waivers import is_expired
from afecheck.report.data import Entry, Report, WaiverNote

EXIT_CLEAN, EXIT_FINDINGS, EXIT_INPUT = 0, 1, 2


@dataclass(frozen=True)
class Review:
    """The outcome of classifying one design's findings."""

    entries: tuple[Entry, ...]
    used: frozenset[str]  # WaiverNote.key of every waiver that matched a finding
    expired: frozenset[str]


def classify(
    findings: Sequence[Finding],
    waivers: Sequence[WaiverNote] = (),
    baseline: Sequence[Finding] | None = None,
    today: dt.date | None = None,
    stage_of: Callable[[Finding], str] = lambda f: "",
) -> Review:
    """Statuses for ``findings``: waived if an unexpired waiver matches, else unchanged/new against ``baseline``
    (matched as a multiset of fingerprints), else open; baseline records not found come back as "fixed"."""
    today = today or dt.date.today()
    remaining = Counter(b.fingerprint for b in baseline) if baseline is not None else Counter()
    entries: list[Entry] = []
    used: set[str] = set()
    expired: set[str] = set()
    for f in findings:
        fp = f.fingerprint
        live = [w for w in waivers if w.matches(f)]
        w = next((x for x in live if not is_expired(x, today)), live[0] if live else None)
        in_baseline = remaining[fp] > 0
        if in_baseline:
            remaining[fp] -= 1
        if w is not None and not is_expired(w, today):
            used.add(w.key)
            entries.append(Entry(f, "waived", stage_of(f), waiver=w))
            continue
        lapsed = None
        if w is not None:
            used.add(w.key)
            expired.add(w.key)
            lapsed = w
        status = "open" if baseline is None else ("unchanged" if in_baseline else "new")
        entries.append(Entry(f, status, stage_of(f), expired_waiver=lapsed))
    if baseline is not None:
        for b in baseline:
            if remaining[b.fingerprint] > 0:
                remaining[b.fingerprint] -= 1
                entries.append(Entry(b, "fixed", stage_of(b)))
    entries.sort(key=lambda e: (e.finding.sort_key(), e.status))
    return Review(tuple(entries), frozenset(used), frozenset(expired))


def promote(findings: Sequence[Finding], levels: Mapping[Severity, Severity]) -> tuple[Finding, ...]:
    """Raise each computed finding's severity per ``levels`` (e.g. warning -> error). Estimates and
    not-evaluated findings keep theirs: a guess from assumed defaults never blocks on its own."""
    out = []
    for f in findings:
        target = levels.get(f.severity)
        if target is not None and f.confidence == "computed" and target != f.severity:
            f = replace(f, severity=target)
        out.append(f)
    return tuple(out)


def exit_code(report: Report) -> int:
    """0 when nothing active is at or above the fail level, 1 when something is."""
    return EXIT_FINDINGS if report.failed() else EXIT_CLEAN
