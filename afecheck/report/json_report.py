"""Machine-readable report: versioned JSON (documented in docs/REPORT-FORMAT.md), sorted keys, no timestamps."""

from __future__ import annotations

import json
import math
from typing import Any

from afecheck.report.cautions import cautions
from afecheck.report.data import STATUS_MEANING, Entry, Report, WaiverNote, fail_level_label

SCHEMA_VERSION = 1


def jsonable(value: Any) -> Any:
    """``value`` as plain JSON: tuples become lists, non-finite floats become strings, other objects their str()."""
    if isinstance(value, bool) or value is None or isinstance(value, (int, str)):
        return value
    if isinstance(value, float):
        return value if math.isfinite(value) else str(value)
    if isinstance(value, dict):
        return {str(k): jsonable(v) for k, v in value.items()}
    if isinstance(value, (list, tuple, set, frozenset)):
        items = [jsonable(v) for v in value]
        return sorted(items, key=repr) if isinstance(value, (set, frozenset)) else items
    if hasattr(value, "item") and callable(value.item):
        return jsonable(value.item())
    return str(value)


def waiver_dict(w: WaiverNote) -> dict[str, Any]:
    return {
        "fingerprint": w.fingerprint or None,
        "rule": w.rule,
        "refs": list(w.refs),
        "nets": list(w.nets),
        "inline": not w.fingerprint,
        "justification": w.justification,
        "accepted_by": w.accepted_by,
        "expires": w.expires,
        "file": w.file,
        "line": w.line,
    }


def finding_dict(entry: Entry, report: Report) -> dict[str, Any]:
    """One entry of ``findings[]``."""
    f = entry.finding
    loc = f.location
    return {
        "rule": f.rule,
        "slug": f.slug,
        "severity": f.severity.label,
        "message": f.message,
        "fix": f.fix,
        "confidence": f.confidence,
        "assumed": list(f.assumed),
        "refs": list(loc.refs),
        "nets": list(loc.nets),
        "pins": list(loc.pins),
        "ctx": jsonable(f.ctx),
        "location": {"file": loc.file, "line": loc.line, "path": loc.path},
        "design": f.design,
        "stage": entry.stage or None,
        "fingerprint": f.fingerprint,
        "caused_by": f.caused_by or None,
        "status": entry.status,
        "gating": report.gating(entry),
        "waiver": waiver_dict(entry.waiver) if entry.waiver else None,
        "expired_waiver": waiver_dict(entry.expired_waiver) if entry.expired_waiver else None,
    }


def report_dict(report: Report) -> dict[str, Any]:
    """The whole report as a JSON-ready dict (see docs/REPORT-FORMAT.md)."""
    return {
        "schema_version": SCHEMA_VERSION,
        "tool": {"name": "afecheck", "version": report.tool_version},
        "fail_on": fail_level_label(report.fail_on),
        "verdict": "fail" if report.failed() else "pass",
        "summary": report.counts(),
        "baseline": report.baseline,
        "cautions": list(cautions(report.hazards())),
        "designs": [
            {
                "file": d.file,
                "name": d.name,
                "hazards": list(d.hazards),
                "ruleset": d.ruleset,
                "config": d.config,
                "stages": list(d.stages),
                "rules_run": list(d.rules_run),
            }
            for d in report.designs
        ],
        "findings": [finding_dict(e, report) for e in report.entries()],
        "waivers": {
            "unused": [waiver_dict(w) for w in report.unused_waivers],
            "expired": [waiver_dict(w) for w in report.expired_waivers],
        },
        "statuses": dict(STATUS_MEANING),
        "notes": list(report.notes),
    }


def render_json(report: Report) -> str:
    """The report as stable, pretty JSON ending in a newline."""
    return json.dumps(report_dict(report), indent=2, sort_keys=True, ensure_ascii=False, allow_nan=False) + "\n"
