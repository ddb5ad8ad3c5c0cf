"""Waiver files: findings a reviewer accepted, keyed by fingerprint, with a justification, a name and an expiry.

    afecheck-waivers: 1
    waivers:
      - fingerprint: 3f9c0a1b2c3d4e5f    # from the report (stable when lines move)
        rule: headroom.input-common-mode                    # optional; must name a known rule
        justification: the cable is 20 cm; the output resistor was measured on the bench
        accepted-by: J. Reviewer
        expires: 2027-06-30             # optional; after this date the finding is open again
"""

from __future__ import annotations

import datetime as dt
import re
from pathlib import Path

from afecheck.model.reader import Document
from afecheck.policy._yaml import Problems, load_document
from afecheck.policy.rulesets import Catalogue
from afecheck.report.data import WaiverNote

WAIVERS_KEY = "afecheck-waivers"
ENTRY_KEYS = {"fingerprint", "rule", "justification", "accepted-by", "expires"}
_FINGERPRINT = re.compile(r"^[0-9a-f]{16}$")


_ISO_DATE = re.compile(r"^\d{4}-\d{2}-\d{2}$")


def _date(value: object) -> str | None:
    """An expiry date written ``YYYY-MM-DD`` as that text, else None. The reader never builds date objects
    (YAML timestamps stay text), so a date is parsed here from its spelling alone."""
    if not isinstance(value, str) or not _ISO_DATE.match(value.strip()):
        return None
    try:
        return dt.date.fromisoformat(value.strip()).isoformat()
    except ValueError:
        return None


def load_waivers(path: str | Path, catalogue: Catalogue | None = None) -> tuple[WaiverNote, ...]:
    """Every waiver in ``path``; all problems (missing fields, bad dates, unknown rules) raised together."""
    doc = load_document(path)
    data = doc.data
    problems = Problems(doc)
    if not isinstance(data, dict) or type(data.get(WAIVERS_KEY)) is not int or data.get(WAIVERS_KEY) != 1:
        problems.add((), f"a waiver file is a mapping that starts with '{WAIVERS_KEY}: 1'")
        problems.raise_if_any()
    for k in data:
        if k not in (WAIVERS_KEY, "waivers"):
            problems.add((k,), f"unknown key {k!r}; expected {WAIVERS_KEY} and waivers")
    entries = data.get("waivers") or []
    if not isinstance(entries, list):
        problems.add(("waivers",), "expected a list of waivers")
        entries = []
    out: list[WaiverNote] = []
    for i, raw in enumerate(entries):
        where = ("waivers", i)
        if not isinstance(raw, dict):
            problems.add(where, "expected a mapping with fingerprint, justification, accepted-by")
            continue
        ok = True
        for k in raw:
            if k not in ENTRY_KEYS:
                problems.add((*where, k), f"unknown key {k!r}; expected one of {', '.join(sorted(ENTRY_KEYS))}")
                ok = False
        fp = _fingerprint_text(doc, (*where, "fingerprint"), raw.get("fingerprint"))
        if not _FINGERPRINT.match(fp):
            shown = fp if len(fp) <= 40 else fp[:37] + "..."
            problems.add((*where, "fingerprint"), f"read {shown!r}; expected the 16 hex digits shown in the report")
            ok = False
        for k in ("justification", "accepted-by"):
            if not isinstance(raw.get(k), str) or not raw[k].strip():
                problems.add((*where, k), f"{k} is required: say why the finding is accepted and who accepted it")
                ok = False
        expires = None
        if raw.get("expires") is not None:
            expires = _date(raw["expires"])
            if expires is None:
                shown = repr(raw["expires"])
                shown = shown if len(shown) <= 40 else shown[:37] + "..."
                problems.add((*where, "expires"), f"read {shown}; expected a date written YYYY-MM-DD such as "
                             "2027-06-30")
                ok = False
        rule = raw.get("rule")
        if rule is not None and not isinstance(rule, str):
            problems.add((*where, "rule"), "expected a rule id or slug")
            ok = False
        elif rule is not None and catalogue is not None:
            meta = catalogue.find(rule)
            if meta is None:
                problems.add((*where, "rule"), f"unknown rule {rule!r}")
                ok = False
            else:
                rule = meta.id
        if ok:
            out.append(WaiverNote(fingerprint=fp, justification=raw["justification"].strip(),
                                  accepted_by=raw["accepted-by"].strip(), expires=expires,
                                  rule=None if rule is None else str(rule), file=str(path),
                                  line=problems.line(where)))
    problems.raise_if_any()
    return tuple(out)


def _fingerprint_text(doc: Document, path: tuple, value: object) -> str:
    """A fingerprint as written: the scalar's source text (``0123e456...`` must not become a number)."""
    text = doc.texts.get(tuple(str(p) if not isinstance(p, int) else p for p in path))
    if text is not None:
        return text.strip()
    return value.strip() if isinstance(value, str) else ""


def is_expired(waiver: WaiverNote, today: dt.date) -> bool:
    """A waiver stops waiving the day after its expiry date."""
    return waiver.expires is not None and dt.date.fromisoformat(waiver.expires) < today
