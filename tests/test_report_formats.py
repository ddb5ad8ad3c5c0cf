"""Reporters: SARIF against the official OASIS schema, JUnit counts, Markdown folding, text layout, JSON keys."""

from __future__ import annotations

import datetime as dt
import json
import re
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest
from fixtures.gate.fakes import REGISTRY

from afecheck.api import review_files
from afecheck.commands.check import is_design_file
from afecheck.engine.finding import Finding, Location, Severity
from afecheck.report import FORMATS, render
from afecheck.report.cautions import GENERAL
from afecheck.report.data import DesignResult, Entry, Report, RuleInfo, WaiverNote
from afecheck.report.text import render_text

HERE = Path(__file__).parent
GATE = HERE / "fixtures" / "gate"
SCHEMA = HERE / "schemas" / "sarif-schema-2.1.0.json"
SAMPLES = sorted(p for p in (HERE.parent / "sample_designs").glob("*.yaml") if is_design_file(p))
TODAY = dt.date(2026, 12, 2)


def _validator():
    import jsonschema

    schema = json.loads(SCHEMA.read_text(encoding="utf-8"))
    return jsonschema.Draft4Validator(schema)


def _fixture_report(**kw) -> Report:
    return review_files([GATE / "logger.yaml", GATE / "mains_meter.yaml"], registry=REGISTRY, today=TODAY,
                        discover=False, **kw)


def _made_up_report() -> Report:
    """A report built by hand: every status, a waiver, an unknown line, odd characters in the message."""
    loc = Location(file="dir with space/a b.yaml", line=7, path="components.R1", refs=("R1",), nets=("IN", "INM"))
    f1 = Finding("TST101", "resistor-below-minimum", Severity.ERROR, "R1 | 470 <ohm> & more", loc,
                 ctx={"value": 470.0, "limit": float("inf")}, fix="use a larger resistor", design="d")
    f2 = Finding("TST102", "class2-capacitor-present", Severity.WARNING, "C1 is X7R", Location(file="x.yaml"),
                 design="d")
    f3 = Finding("TST999", "unknown-to-catalogue", Severity.INFO, "made up", Location(file="x.yaml", line=3),
                 design="d")
    w = WaiverNote("0123456789abcdef", "bench-measured", "A. Reviewer", "2027-01-31", None, "w.yaml", 4)
    entries = (Entry(f1, "new", "U1"), Entry(f2, "waived", "", waiver=w), Entry(f3, "unchanged"),
               Entry(f1, "fixed", "U1"))
    rules = (RuleInfo("TST101", "resistor-below-minimum", Severity.ERROR, "small resistor", "test", "", "help"),
             RuleInfo("TST102", "class2-capacitor-present", Severity.WARNING, "class 2", "test"))
    return Report(designs=(DesignResult("x.yaml", "d", ("patient-connected",), entries, ("U1",)),), rules=rules,
                  unused_waivers=(w,), expired_waivers=(w,), baseline="b.json")


def test_sarif_of_fixtures_and_hand_made_report_validates_against_official_schema():
    # [OASIS SARIF 2.1.0 errata 01] official JSON schema, draft-04
    validator = _validator()
    for report in (_fixture_report(), _made_up_report()):
        log = json.loads(render(report, "sarif"))
        errors = sorted(validator.iter_errors(log), key=str)
        assert not errors, errors[0]
        assert log["version"] == "2.1.0" and len(log["runs"]) == 1


@pytest.mark.skipif(not SAMPLES, reason="no sample designs yet")
def test_sarif_of_every_sample_design_validates():
    # [OASIS SARIF 2.1.0 errata 01] official JSON schema, with the real rule catalogue
    validator = _validator()
    for sample in SAMPLES:
        log = json.loads(render(review_files([sample], today=TODAY, discover=False), "sarif"))
        errors = list(validator.iter_errors(log))
        assert not errors, (sample.name, str(errors[0])[:500])
        rules = log["runs"][0]["tool"]["driver"]["rules"]
        assert rules, "tool.driver.rules comes from the catalogue"
        for r in log["runs"][0]["results"]:
            assert rules[r["ruleIndex"]]["id"] == r["ruleId"]


def test_sarif_results_carry_rule_level_locations_and_suppressions():
    log = json.loads(render(_made_up_report(), "sarif"))
    run = log["runs"][0]
    ids = [r["id"] for r in run["tool"]["driver"]["rules"]]
    assert ids == ["TST101", "TST102", "TST999"]  # catalogue plus a rule seen only in findings
    results = run["results"]
    assert len(results) == 3  # the fixed one is not a result
    new = results[0]
    assert new["level"] == "error" and new["baselineState"] == "new"
    phys = new["locations"][0]["physicalLocation"]
    assert phys["artifactLocation"]["uri"] == "dir%20with%20space/a%20b.yaml"  # RFC 3986 percent-encoding
    assert phys["region"] == {"startLine": 7}
    assert {"name": "R1", "kind": "component"} in new["locations"][0]["logicalLocations"]
    assert {"name": "IN", "kind": "net"} in new["locations"][0]["logicalLocations"]
    assert new["properties"]["ctx"]["limit"] == "inf"  # JSON has no infinity
    waived = results[1]
    assert waived["suppressions"][0]["status"] == "accepted" and waived["level"] == "warning"
    assert "region" not in waived["locations"][0]["physicalLocation"]
    assert results[2]["level"] == "note"  # SARIF has no "info": its lowest failing level is "note"
    notes = run["invocations"][0]
    assert any("patient" in n["message"]["text"].lower() for n in notes["toolExecutionNotifications"])
    assert {n["descriptor"]["id"] for n in notes["toolConfigurationNotifications"]} == {"waiver-expired",
                                                                                        "waiver-unused"}


def test_junit_parses_and_failures_equal_findings_at_fail_level():
    # JUnit XML convention: <testsuites>/<testsuite>/<testcase>/<failure>; counts in attributes
    for fail_on, expected in (("error", 2), ("warning", 3), ("info", 5), ("never", 0)):
        report = _fixture_report(fail_on=fail_on)
        root = ET.fromstring(render(report, "junit"))
        failures = root.findall(".//failure")
        gating = [e for e in report.entries() if report.gating(e)]
        assert len(failures) == len(gating) == expected
        assert int(root.get("failures")) == expected
        assert sum(int(s.get("failures")) for s in root.findall("testsuite")) == expected
        cases = root.findall(".//testcase")
        assert int(root.get("tests")) == len(cases) == 2 * 3  # one case per (rule, design)


def test_markdown_counts_table_and_folds_waived():
    md = render(_made_up_report(), "markdown")
    assert md.startswith("### afecheck ❌ fails the gate")
    assert "| 1 | 0 | 0 | 1 | 1 | 1 |" in md  # error, warning, info, waived, unchanged, fixed
    details = md[md.index("<details>"):]
    assert "C1 is X7R" in details and "bench-measured" in details
    assert "C1 is X7R" not in md[: md.index("<details>")]
    assert "R1 \\| 470 \\<ohm\\> \\& more" in md  # a pipe cannot break the table, nor < open a tag
    assert "> **Caution" in md


FINDING_LINE = re.compile(r"^(?P<sev>ERROR|WARNING|INFO) +(?P<msg>\S.+)$")
WHERE_LINE = re.compile(r"^ {8}at (?P<file>\S+?)(?::(?P<line>\d+))? · rule (?P<id>\S+)$")
PAIRED_ID = re.compile(r"\b([A-Za-z]+\d+|[a-z-]+\.[a-z0-9-]+)/[a-z0-9]+(-[a-z0-9]+)+\b")


def test_text_lines_group_by_design_and_stage_and_end_with_summary():
    """Our own layout: severity and message first, then where and the rule id in a quiet second line, then the fix."""
    text = render(_fixture_report(), "text")
    lines = text.splitlines()
    finding_lines = [i for i, ln in enumerate(lines) if FINDING_LINE.match(ln)]
    assert len(finding_lines) == 5
    for i in finding_lines:
        assert WHERE_LINE.match(lines[i + 1]), lines[i + 1]
        assert lines[i + 2].startswith("        fix: ")
    assert lines[-1] == "afecheck: 2 designs: 2 errors, 1 warning, 2 info; fail level error: FAIL"
    assert text.index("== ") < text.index("-- stage U1 --") < text.index("-- design-wide --")
    assert "\x1b[" not in text


@pytest.mark.parametrize("fmt", ["text", "markdown", "junit", "html"])
def test_no_report_pairs_an_identifier_with_its_name_by_a_slash(fmt):
    assert not PAIRED_ID.search(render(_fixture_report(), fmt))


def test_text_colour_only_when_asked():
    report = _made_up_report()
    assert "\x1b[" in render_text(report, color=True)
    assert "\x1b[" not in render_text(report, color=False)
    assert "(waived)" in render_text(report) and "waiver" in render_text(report)


def test_json_report_has_versioned_documented_fields():
    data = json.loads(render(_made_up_report(), "json"))
    assert data["schema_version"] == 1
    doc = (HERE.parent / "docs" / "REPORT-FORMAT.md").read_text(encoding="utf-8")
    required = {"rule", "slug", "severity", "message", "fix", "confidence", "assumed", "refs", "nets", "pins", "ctx",
                "location", "fingerprint", "status"}
    for f in data["findings"]:
        assert required <= set(f)
        assert set(f["location"]) == {"file", "line", "path"}
        for key in f:
            assert f"`{key}`" in doc, f"docs/REPORT-FORMAT.md does not document findings[].{key}"
    for key in data:
        assert f"`{key}`" in doc, f"docs/REPORT-FORMAT.md does not document {key}"
    assert [f["status"] for f in data["findings"]] == ["new", "waived", "unchanged", "fixed"]


@pytest.mark.parametrize("fmt", FORMATS)
def test_every_format_shows_hazard_cautions_and_none_without_hazards(fmt):
    # RULES-REFERENCE section 6: review aid, not a sign-off; creepage/clearance etc. not verifiable from a netlist
    with_hazard = render(_fixture_report(), fmt)
    for line in GENERAL:
        probe = line.split(":")[0]
        assert probe in with_hazard.replace("&quot;", '"')
    assert "creepage" in with_hazard.lower()
    clean = render(review_files([GATE / "logger.yaml"], registry=REGISTRY, today=TODAY, discover=False), fmt)
    assert "creepage" not in clean.lower()


@pytest.mark.parametrize("fmt", FORMATS)
def test_two_runs_give_byte_identical_reports(fmt):
    a = render(_fixture_report(), fmt)
    b = render(_fixture_report(), fmt)
    assert a.encode() == b.encode()
    assert not re.search(r"20\d\d-\d\d-\d\dT\d\d:", a)  # no timestamps


def test_markdown_caps_the_table_for_a_comment():
    from afecheck.report.markdown import MAX_ROWS

    f = Finding("TST101", "resistor-below-minimum", Severity.ERROR, "m", Location(file="x.yaml", line=1))
    entries = tuple(Entry(f, "open") for _ in range(MAX_ROWS + 7))
    md = render(Report(designs=(DesignResult("x.yaml", "d", (), entries),)), "markdown")
    assert md.count("| 🛑 error |") == MAX_ROWS and "and 7 more" in md


def test_rule_help_text_comes_from_rule_md_sections():
    from afecheck.api import _section

    md = "# demo.rule\n\n## In the circuit\n\nThe phase margin\nof each stage.\n\nMore.\n\n## On the bench\n\nX\n"
    assert _section(md, "In the circuit") == "The phase margin of each stage."
    assert _section(md, "Known limitations") == ""


def test_sarif_help_text_is_plain_and_markdown_kept():
    from afecheck.report.sarif import sarif_dict

    rule = RuleInfo("TST101", "resistor-below-minimum", Severity.ERROR, "small", "test", "full",
                    "# TST101 title\n\n## What it checks\n\nText.\n\n```yaml\nR1: {}\n```\n")
    report = Report(designs=(DesignResult("x.yaml", "d"),), rules=(rule,))
    desc = sarif_dict(report)["runs"][0]["tool"]["driver"]["rules"][0]
    assert desc["help"]["markdown"].startswith("# TST101")
    assert desc["help"]["text"] == "TST101 title\n\nWhat it checks\n\nText.\n\nR1: {}"
