"""SARIF 2.1.0 (OASIS) report: one run, rules from the catalogue, results with physical and logical locations."""

from __future__ import annotations

import json
from pathlib import PurePath, PurePosixPath, PureWindowsPath
from typing import Any
from urllib.parse import quote

from afecheck.engine.finding import Severity
from afecheck.report._common import message
from afecheck.report.cautions import cautions
from afecheck.report.data import Entry, Report, RuleInfo, WaiverNote
from afecheck.report.json_report import jsonable

SARIF_VERSION = "2.1.0"
SARIF_SCHEMA_URI = "https://docs.oasis-open.org/sarif/sarif/v2.1.0/errata01/os/schemas/sarif-schema-2.1.0.json"
FINGERPRINT_KEY = "afecheckFinding/v1"
LEVELS = {Severity.ERROR: "error", Severity.WARNING: "warning", Severity.INFO: "note"}
BASELINE_STATE = {"new": "new", "unchanged": "unchanged"}


def file_uri(path: str) -> str:
    """A URI reference for a file path: relative paths stay relative (forward slashes), absolute ones become file:."""
    if PureWindowsPath(path).is_absolute() and not path.startswith("/"):
        return PureWindowsPath(path).as_uri()
    posix = PurePath(path).as_posix()
    if PurePosixPath(posix).is_absolute():
        return PurePosixPath(posix).as_uri()
    return quote(posix, safe="/-._~!$&'()*+,;=:@")


def plain_text(markdown: str) -> str:
    """Markdown as plain text for SARIF ``help.text``: heading marks and code fences dropped, text kept."""
    lines = []
    for line in markdown.splitlines():
        if line.lstrip().startswith("```"):
            continue
        lines.append(line.lstrip("#").strip() if line.startswith("#") else line)
    return "\n".join(lines).strip()


def _descriptor(rule: RuleInfo) -> dict[str, Any]:
    full = rule.description or rule.summary
    help_md = rule.help or full or rule.slug
    d: dict[str, Any] = {
        "id": rule.id,
        "name": rule.slug,
        "shortDescription": {"text": rule.summary or rule.slug},
        "fullDescription": {"text": full or rule.slug},
        "help": {"text": plain_text(help_md), "markdown": help_md},
        "defaultConfiguration": {"level": LEVELS[rule.severity]},
        "properties": {"tags": [rule.family] if rule.family else []},
    }
    if rule.fix:
        d["properties"]["fix"] = rule.fix
    return d


def _rules(report: Report) -> list[RuleInfo]:
    known = {r.id: r for r in report.rules}
    for e in report.entries():
        f = e.finding
        if f.rule not in known:
            known[f.rule] = RuleInfo(id=f.rule, slug=f.slug, severity=f.severity, summary=f.slug.replace("-", " "))
    return [known[k] for k in sorted(known)]


def _location(entry: Entry, artifact_index: dict[str, int]) -> dict[str, Any]:
    f = entry.finding
    loc = f.location
    out: dict[str, Any] = {}
    if loc.file:
        physical: dict[str, Any] = {"artifactLocation": {"uri": file_uri(loc.file), "index": artifact_index[loc.file]}}
        if loc.line:
            physical["region"] = {"startLine": int(loc.line)}
        out["physicalLocation"] = physical
    named = [(r, "component") for r in loc.refs] + [(n, "net") for n in loc.nets] + [(p, "pin") for p in loc.pins]
    if named:  # SARIF wants unique items; a finding may name one net twice (a follower's output and input)
        out["logicalLocations"] = [{"name": name, "kind": kind} for name, kind in dict.fromkeys(named)]
    return out


def _waiver_props(w: WaiverNote) -> dict[str, Any]:
    return {"accepted_by": w.accepted_by, "expires": w.expires, "file": w.file, "line": w.line}


def _result(entry: Entry, rule_index: dict[str, int], artifact_index: dict[str, int], report: Report) -> dict[str, Any]:
    f = entry.finding
    text = message(f).rstrip(".") + f". Fix: {f.fix}" if f.fix else message(f)
    r: dict[str, Any] = {
        "ruleId": f.rule,
        "ruleIndex": rule_index[f.rule],
        "kind": "fail",
        "level": LEVELS[f.severity],
        "message": {"text": text},
        "locations": [_location(entry, artifact_index)],
        "partialFingerprints": {FINGERPRINT_KEY: f.fingerprint},
        "properties": {
            "slug": f.slug,
            "status": entry.status,
            "gating": report.gating(entry),
            "confidence": f.confidence,
            "assumed": list(f.assumed),
            "fix": f.fix,
            "ctx": jsonable(f.ctx),
            "design": f.design,
            "stage": entry.stage,
            "path": f.location.path,
        },
    }
    if entry.status in BASELINE_STATE:
        r["baselineState"] = BASELINE_STATE[entry.status]
    if entry.waiver is not None:
        w = entry.waiver
        r["suppressions"] = [
            {"kind": "external", "status": "accepted", "justification": w.justification, "properties": _waiver_props(w)}
        ]
    if entry.expired_waiver is not None:
        r["properties"]["expired_waiver"] = _waiver_props(entry.expired_waiver)
    return r


def _notification(text: str, level: str, ident: str, file: str | None = None, line: int | None = None) -> dict:
    n: dict[str, Any] = {"message": {"text": text}, "level": level, "descriptor": {"id": ident}}
    if file:
        physical: dict[str, Any] = {"artifactLocation": {"uri": file_uri(file)}}
        if line:
            physical["region"] = {"startLine": int(line)}
        n["locations"] = [{"physicalLocation": physical}]
    return n


def sarif_dict(report: Report) -> dict[str, Any]:
    """The report as a SARIF 2.1.0 log object."""
    rules = _rules(report)
    rule_index = {r.id: i for i, r in enumerate(rules)}
    files = sorted({d.file for d in report.designs} | {e.finding.location.file for e in report.entries()
                                                        if e.finding.location.file})
    uris = list(dict.fromkeys(file_uri(f) for f in files))  # "./a.yaml" and "a.yaml" are one artifact
    artifact_index = {f: uris.index(file_uri(f)) for f in files}
    results = [_result(e, rule_index, artifact_index, report) for e in report.entries() if e.status != "fixed"]
    execution = [_notification(c, "warning", "hazard-caution") for c in cautions(report.hazards())]
    configuration = [
        _notification(f"waiver {w.label} expired on {w.expires}; its finding is open again", "warning",
                      "waiver-expired", w.file, w.line)
        for w in report.expired_waivers
    ] + [
        _notification(f"waiver {w.label} matches no finding", "note", "waiver-unused", w.file, w.line)
        for w in report.unused_waivers
    ]
    invocation: dict[str, Any] = {"executionSuccessful": True}
    if execution:
        invocation["toolExecutionNotifications"] = execution
    if configuration:
        invocation["toolConfigurationNotifications"] = configuration
    fixed = [
        {"ruleId": e.finding.rule, "fingerprint": e.finding.fingerprint, "message": e.finding.message,
         "design": e.finding.design}
        for e in report.entries() if e.status == "fixed"
    ]
    run: dict[str, Any] = {
        "tool": {
            "driver": {
                "name": "afecheck",
                "version": report.tool_version or "0",
                "rules": [_descriptor(r) for r in rules],
            }
        },
        "artifacts": [{"location": {"uri": uri}, "roles": ["analysisTarget"]} for uri in uris],
        "invocations": [invocation],
        "results": results,
        "columnKind": "unicodeCodePoints",
        "properties": {
            "fail_on": "never" if report.fail_on is None else report.fail_on.label,
            "verdict": "fail" if report.failed() else "pass",
            "hazards": list(report.hazards()),
            "cautions": list(cautions(report.hazards())),
            "fixed": fixed,
            "policies": [{"design": d.file, "ruleset": d.ruleset, "config": d.config} for d in report.designs],
        },
    }
    return {"$schema": SARIF_SCHEMA_URI, "version": SARIF_VERSION, "runs": [run]}


def render_sarif(report: Report) -> str:
    """The report as SARIF 2.1.0 JSON ending in a newline."""
    return json.dumps(sarif_dict(report), indent=2, sort_keys=True, ensure_ascii=False, allow_nan=False) + "\n"
