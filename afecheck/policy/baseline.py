"""Baselines: the findings recorded at one point, so a gate fails only on findings that are new since then.

A baseline names the designs it was recorded for (name and file); checking another design against it is a
usage error unless the caller asks for it, since every finding would otherwise read as new or fixed.
"""

from __future__ import annotations

import json
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, replace
from pathlib import Path, PurePosixPath
from typing import Any

from afecheck.engine.aliases import current_id
from afecheck.engine.finding import Finding, Location, Severity
from afecheck.errors import ConfigError, InputError, Problem
from afecheck.model.reader import Document, read_bytes, read_capped
from afecheck.report.json_report import jsonable

BASELINE_KEY = "afecheck_baseline"
BASELINE_VERSION = 1
_TEXT_FIELDS = ("rule", "slug", "severity", "message", "fix", "design", "path")
_LIST_FIELDS = ("refs", "nets", "pins")
_FIELDS = (*_TEXT_FIELDS, "file", "line", *_LIST_FIELDS)


@dataclass(frozen=True)
class Baseline:
    """A baseline file's findings and the designs (name, file) it was recorded for; no designs in old files."""

    file: str
    findings: tuple[Finding, ...]
    designs: tuple[tuple[str, str], ...] = ()

    @property
    def names_designs(self) -> bool:
        """False for a baseline written before baselines named their designs."""
        return bool(self.designs)

    def recorded_as(self, name: str, file: str) -> str | None:
        """The recorded design name the design ``name`` read from ``file`` continues: the same name, else the same
        file name (a design renamed in place; the folder may differ between a laptop and CI); None if neither."""
        if any(n == name for n, _ in self.designs):
            return name
        return next((n for n, f in self.designs if _file_name(f) == _file_name(file)), None)

    def for_design(self, name: str, recorded: str | None = None) -> list[Finding]:
        """The findings recorded for design ``recorded`` (default ``name``), or all of them when ``recorded`` is
        "*", re-labelled as design ``name``'s (fingerprints recomputed) when the names differ."""
        mine = [b for b in self.findings if recorded == "*" or b.design == (recorded or name)]
        return [b if b.design == name else replace(b, design=name) for b in mine]

    def describe(self) -> str:
        return ", ".join(f"{n!r} ({f})" for n, f in self.designs) or "no design named"


def _file_name(file: str) -> str:
    return PurePosixPath(file.replace("\\", "/")).name


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


def render_baseline(findings: Iterable[Finding], designs: Sequence[tuple[str, str]] | None = None) -> str:
    """A baseline file's text: the designs (name, file) and sorted records, no timestamps, so re-recording an
    unchanged design changes nothing. Without ``designs`` they are taken from the findings."""
    findings = list(findings)
    if designs is None:
        designs = [(f.design, f.location.file or "") for f in findings]
    named = [{"name": n, "file": f} for n, f in sorted(set(designs))]
    records = sorted((_record(f) for f in findings), key=lambda r: (r["design"], r["rule"], r["fingerprint"],
                                                                    r["message"]))
    return json.dumps({BASELINE_KEY: BASELINE_VERSION, "designs": named, "findings": records}, indent=2,
                      sort_keys=True, ensure_ascii=False, allow_nan=False) + "\n"


def read_baseline(path: str | Path) -> Baseline:
    """A baseline file read with the limits of every input (regular file, size, UTF-8, strict JSON, no duplicate
    keys) and checked record by record; every problem a ConfigError with its line."""
    p = Path(path)
    try:
        doc = read_bytes(read_capped(p, str(p)), str(p), as_json=True)
    except InputError as exc:
        raise ConfigError(exc.problems) from None
    data = doc.data
    if not isinstance(data, dict) or type(data.get(BASELINE_KEY)) is not int or data.get(BASELINE_KEY) != \
            BASELINE_VERSION or not isinstance(data.get("findings"), list):
        raise ConfigError([doc.problem((), f"not an afecheck baseline ('{BASELINE_KEY}': {BASELINE_VERSION} and a "
                                            "findings list); write one with `afecheck baseline`")])
    problems: list[Problem] = []
    designs = _designs(doc, data.get("designs"), problems)
    out = []
    for i, r in enumerate(data["findings"]):
        finding = _finding(doc, ("findings", i), r, problems)
        if finding is not None:
            out.append(finding)
    if problems:
        raise ConfigError(problems)
    return Baseline(str(p), tuple(out), designs)


def load_baseline(path: str | Path) -> tuple[Finding, ...]:
    """The findings recorded in a baseline file, rebuilt as Finding objects (same fingerprints)."""
    return read_baseline(path).findings


def _designs(doc: Document, raw: object, problems: list[Problem]) -> tuple[tuple[str, str], ...]:
    if raw is None:
        return ()
    ok = isinstance(raw, list) and raw and all(
        isinstance(d, dict) and isinstance(d.get("name"), str) and isinstance(d.get("file"), str) for d in raw)
    if not ok:
        problems.append(doc.problem(("designs",), "expected a non-empty list of {name, file} with text values"))
        return ()
    return tuple((d["name"], d["file"]) for d in raw)  # type: ignore[union-attr]


def _finding(doc: Document, where: tuple, r: object, problems: list[Problem]) -> Finding | None:
    """One record as a Finding, or None with a problem naming the first field that is wrong."""
    if not isinstance(r, dict):
        problems.append(doc.problem(where, "bad baseline record: expected a mapping of a recorded finding"))
        return None
    missing = [k for k in _FIELDS if k not in r]
    wrong = [k for k in _TEXT_FIELDS if k in r and not isinstance(r[k], str)]
    wrong += [k for k in _LIST_FIELDS if k in r and not (isinstance(r[k], list) and all(isinstance(x, str)
                                                                                         for x in r[k]))]
    if "file" in r and r["file"] is not None and not isinstance(r["file"], str):
        wrong.append("file")
    if "line" in r and r["line"] is not None and (type(r["line"]) is not int or r["line"] < 0):
        wrong.append("line")
    if "ctx" in r and r["ctx"] is not None and not isinstance(r["ctx"], dict):
        wrong.append("ctx")
    if missing or wrong:
        said = ([f"missing {', '.join(missing)}"] if missing else []) + (
            [f"wrong type for {', '.join(wrong)}"] if wrong else [])
        problems.append(doc.problem(where, f"bad baseline record: {'; '.join(said)}; re-record it with "
                                           "`afecheck baseline`"))
        return None
    try:
        severity = Severity.parse(r["severity"])
    except ValueError as exc:
        problems.append(doc.problem((*where, "severity"), f"bad baseline record: {exc}"))
        return None
    loc = Location(file=r["file"], line=r["line"], path=r["path"], refs=tuple(r["refs"]), nets=tuple(r["nets"]),
                   pins=tuple(r["pins"]))
    return Finding(rule=current_id(str(r["rule"])) or r["rule"], slug=r["slug"], severity=severity,
                   message=r["message"], location=loc,
                   ctx=dict(r.get("ctx") or {}), fix=r["fix"], design=r["design"])
