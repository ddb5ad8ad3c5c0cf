"""JUnit XML report for CI dashboards: one test case per (rule, design); a failure per finding that fails the gate."""

from __future__ import annotations

import xml.etree.ElementTree as ET

from afecheck.report._common import message, rule_label, visible, where
from afecheck.report.cautions import cautions
from afecheck.report.data import DesignResult, Entry, Report


def _finding_text(entry: Entry) -> str:
    f = entry.finding
    lines = [f"{where(entry)}: {f.severity.label}: {rule_label(entry)}: {message(f)} [{entry.status}]"]
    if f.fix:
        lines.append(f"fix: {f.fix}")
    if entry.waiver is not None:
        lines.append(f"waived: {entry.waiver.justification} (accepted by {entry.waiver.accepted_by})")
    return "\n".join(visible(line) for line in lines)  # no character XML 1.0 forbids, none that acts on a terminal


def _case_ids(design: DesignResult) -> list[str]:
    return sorted(set(design.rules_run) | {e.finding.rule for e in design.entries})


def _suite(design: DesignResult, report: Report) -> tuple[ET.Element, int, int]:
    suite = ET.Element("testsuite", {"name": visible(design.file)})
    props = ET.SubElement(suite, "properties")
    ET.SubElement(props, "property", {"name": "ruleset", "value": visible(design.ruleset)})
    ET.SubElement(props, "property", {"name": "config", "value": visible(design.config or "none")})
    for text in cautions(design.hazards):
        ET.SubElement(props, "property", {"name": "caution", "value": text})
    tests = failures = 0
    for rule_id in _case_ids(design):
        entries = [e for e in design.entries if e.finding.rule == rule_id and e.status != "fixed"]
        case = ET.SubElement(suite, "testcase", {"classname": visible(design.name), "name": visible(rule_id)})
        tests += 1
        quiet = []
        for e in entries:
            if report.gating(e):
                failures += 1
                failure = ET.SubElement(case, "failure", {"type": e.finding.severity.label,
                                                          "message": visible(message(e.finding))})
                failure.text = _finding_text(e)
            else:
                quiet.append(_finding_text(e))
        if quiet:
            ET.SubElement(case, "system-out").text = "\n".join(quiet)
    suite.set("tests", str(tests))
    suite.set("failures", str(failures))
    suite.set("errors", "0")
    suite.set("skipped", "0")
    return suite, tests, failures


def render_junit(report: Report) -> str:
    """The report as JUnit XML (UTF-8 declaration, indented, ending in a newline)."""
    root = ET.Element("testsuites", {"name": "afecheck"})
    total_tests = total_failures = 0
    for design in report.designs:
        suite, tests, failures = _suite(design, report)
        root.append(suite)
        total_tests += tests
        total_failures += failures
    root.set("tests", str(total_tests))
    root.set("failures", str(total_failures))
    root.set("errors", "0")
    ET.indent(root)
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + ET.tostring(root, encoding="unicode") + "\n"
