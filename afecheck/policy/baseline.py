"""Baselines: the findings recorded at one point, so a gate fails only on findings that are new since then."""

from __future__ import annotations

import json
from collections.abc import Iterable
from pathlib import Path
from typing import Any

from afecheck.engine.aliases import current_id
from afecheck.engine.finding import Finding, Location, Severity
from afecheck.errors import ConfigError, Problem
from afecheck.report.json_report import jsonable

BASELINE_KEY = "afecheck_baseline"
BASELINE_VERSION = 1
_FIELDS = ("rule", "slug", "severity", "message", "fix", "design", "file", "line", "path", "refs", "nets", "pins")


def _record(f: Finding) -> dict[str, Any]:
    loc = f.location
    return {
        "fingerprint": f.fingerprint,
        "rule": f.rule,
        "slug": f.slug,
        "severity": f.severity.label,
        "message": f.message,
        "fix": f.fix,
        "design": f.design,
        "file": loc.file,
        "line": loc.line,
        "path": loc.path,
        "refs": list(loc.refs),
        "nets": list(loc.nets),
        "pins": list(loc.pins),
        "ctx": jsonable(f.ctx),
    }


def render_baseline(findings: Iterable[Finding]) -> str:
    """A baseline file's text: sorted records, no timestamps, so re-recording an unchanged design changes nothing."""
    records = sorted((_record(f) for f in findings), key=lambda r: (r["design"], r["rule"], r["fingerprint"],
                                                                    r["message"]))
    return json.dumps({BASELINE_KEY: BASELINE_VERSION, "findings": records}, indent=2, sort_keys=True,
                      ensure_ascii=False, allow_nan=False) + "\n"


def load_baseline(path: str | Path) -> tuple[Finding, ...]:
    """The findings recorded in a baseline file, rebuilt as Finding objects (same fingerprints)."""
    p = Path(path)
    try:
        data = json.loads(p.read_text(encoding="utf-8"))
    except OSError as exc:
        raise ConfigError([Problem(str(p), None, None, "", f"cannot read the baseline: {exc}")]) from None
    except json.JSONDecodeError as exc:
        raise ConfigError([Problem(str(p), exc.lineno, exc.colno, "", f"not valid JSON: {exc.msg}")]) from None
    if not isinstance(data, dict) or data.get(BASELINE_KEY) != BASELINE_VERSION or not isinstance(
        data.get("findings"), list
    ):
        raise ConfigError([Problem(str(p), 1, 1, "", f"not an afecheck baseline ('{BASELINE_KEY}': "
                                   f"{BASELINE_VERSION} and a findings list); write one with `afecheck baseline`")])
    out: list[Finding] = []
    problems: list[Problem] = []
    for i, r in enumerate(data["findings"]):
        try:
            missing = [k for k in _FIELDS if k not in r]
            if missing:
                raise ValueError(f"missing {', '.join(missing)}")
            loc = Location(file=r["file"], line=r["line"], path=r["path"], refs=tuple(r["refs"]),
                           nets=tuple(r["nets"]), pins=tuple(r["pins"]))
            out.append(Finding(rule=current_id(str(r["rule"])) or r["rule"], slug=r["slug"],
                               severity=Severity.parse(r["severity"]),
                               message=r["message"], location=loc, ctx=dict(r.get("ctx") or {}), fix=r["fix"],
                               design=r["design"]))
        except (TypeError, ValueError, AttributeError) as exc:
            problems.append(Problem(str(p), None, None, f"findings.{i}", f"bad baseline record: {exc}"))
    if problems:
        raise ConfigError(problems)
    return tuple(out)
