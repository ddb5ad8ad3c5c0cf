"""Waivers: accepted findings reported as waived, expiry re-opens, unused waivers reported, bad files refused."""

from __future__ import annotations

import datetime as dt
import shutil
from pathlib import Path

import pytest
from fixtures.gate.fakes import REGISTRY

from afecheck.api import review_files
from afecheck.engine.finding import Finding, Location, Severity
from afecheck.errors import ConfigError
from afecheck.policy.gate import classify
from afecheck.policy.rulesets import Catalogue
from afecheck.policy.waivers import load_waivers
from afecheck.report.data import WaiverNote

GATE = Path(__file__).parent / "fixtures" / "gate"
TODAY = dt.date(2026, 12, 2)


def _finding(rule: str = "TST101", refs: tuple[str, ...] = ("R1",), line: int = 10) -> Finding:
    return Finding(rule, "resistor-below-minimum", Severity.ERROR, "R1 too small",
                   Location(file="d.yaml", line=line, refs=refs, nets=("IN", "INM")), design="bench")


def _fp_of_r1(tmp: Path) -> str:
    report = review_files([GATE / "logger.yaml"], registry=REGISTRY, today=TODAY, discover=False)
    return next(e.finding.fingerprint for e in report.entries() if e.finding.rule == "TST101")


def _waiver_file(tmp: Path, fp: str, extra: str = "") -> Path:
    p = tmp / "waivers.yaml"
    p.write_text("afecheck-waivers: 1\nwaivers:\n"
                 f"  - fingerprint: {fp}\n    rule: TST101\n    justification: bench-verified divider\n"
                 f"    accepted-by: A. Reviewer\n{extra}", encoding="utf-8")
    return p


def test_fingerprint_ignores_line_numbers_but_not_names():
    assert _finding(line=10).fingerprint == _finding(line=99).fingerprint
    assert _finding(refs=("R1",)).fingerprint != _finding(refs=("R2",)).fingerprint
    assert _finding(rule="TST101").fingerprint != _finding(rule="TST102").fingerprint


def test_waived_finding_is_reported_as_waived_and_does_not_fail(tmp_path):
    wf = _waiver_file(tmp_path, _fp_of_r1(tmp_path), "    expires: 2027-06-30\n")
    report = review_files([GATE / "logger.yaml"], registry=REGISTRY, today=TODAY, discover=False,
                          waiver_files=[wf])
    statuses = {e.finding.rule: e.status for e in report.entries()}
    assert statuses == {"TST101": "waived", "TST102": "open", "TST103": "open"}
    waived = next(e for e in report.entries() if e.status == "waived")
    assert waived.waiver.justification == "bench-verified divider" and waived.waiver.expires == "2027-06-30"
    assert waived.waiver.line == 3  # the list item's line in the waiver file
    assert not report.failed() and not report.unused_waivers


def test_expired_waiver_reopens_its_finding_and_says_so(tmp_path):
    wf = _waiver_file(tmp_path, _fp_of_r1(tmp_path), "    expires: 2026-12-01\n")
    report = review_files([GATE / "logger.yaml"], registry=REGISTRY, today=TODAY, discover=False,
                          waiver_files=[wf])
    entry = next(e for e in report.entries() if e.finding.rule == "TST101")
    assert entry.status == "open" and entry.expired_waiver is not None
    assert report.failed()
    assert [w.expires for w in report.expired_waivers] == ["2026-12-01"]
    # the expiry day itself still waives
    same_day = review_files([GATE / "logger.yaml"], registry=REGISTRY, today=dt.date(2026, 12, 1),
                            discover=False, waiver_files=[wf])
    assert next(e for e in same_day.entries() if e.finding.rule == "TST101").status == "waived"


def test_waiver_that_matches_nothing_is_reported(tmp_path):
    wf = _waiver_file(tmp_path, "0000000000000000")
    report = review_files([GATE / "logger.yaml"], registry=REGISTRY, today=TODAY, discover=False,
                          waiver_files=[wf])
    assert [w.fingerprint for w in report.unused_waivers] == ["0000000000000000"]
    assert all(e.status == "open" for e in report.entries())


def test_waiver_survives_moved_lines(tmp_path):
    # logger_new_defect.yaml puts two components above R1, so every line below moves
    wf = _waiver_file(tmp_path, _fp_of_r1(tmp_path))
    report = review_files([GATE / "logger_new_defect.yaml"], registry=REGISTRY, today=TODAY, discover=False,
                          waiver_files=[wf])
    r1 = next(e for e in report.entries() if e.finding.location.refs == ("R1",) and e.finding.rule == "TST101")
    assert r1.status == "waived"


def test_waivers_named_in_the_config_apply(tmp_path):
    design = tmp_path / "logger.yaml"
    shutil.copy(GATE / "logger.yaml", design)
    _waiver_file(tmp_path, _fp_of_r1(tmp_path))
    (tmp_path / ".afecheck.yaml").write_text("afecheck-config: 1\nwaivers: waivers.yaml\n", encoding="utf-8")
    report = review_files([design], registry=REGISTRY, today=TODAY)
    assert {e.finding.rule: e.status for e in report.entries()}["TST101"] == "waived"


@pytest.mark.parametrize(("body", "line", "needle"), [
    ("  - fingerprint: xyz\n    justification: j\n    accepted-by: a\n", 3, "16 hex digits"),
    ("  - fingerprint: 0123456789abcdef\n    accepted-by: a\n", 3, "justification is required"),
    ("  - fingerprint: 0123456789abcdef\n    justification: j\n    accepted-by: a\n    expires: soon\n", 6,
     "expected a date"),
    ("  - fingerprint: 0123456789abcdef\n    justification: j\n    accepted-by: a\n    rule: TST404\n", 6,
     "unknown rule"),
    ("  - fingerprint: 0123456789abcdef\n    justification: j\n    accepted-by: a\n    reason: x\n", 6,
     "unknown key 'reason'"),
])
def test_bad_waiver_file_is_a_config_error_with_line(tmp_path, body, line, needle):
    p = tmp_path / "w.yaml"
    p.write_text("afecheck-waivers: 1\nwaivers:\n" + body, encoding="utf-8")
    with pytest.raises(ConfigError) as info:
        load_waivers(p, Catalogue(REGISTRY.metas()))
    assert any(needle in pr.message and pr.line == line and pr.file == str(p) for pr in info.value.problems), [
        str(pr) for pr in info.value.problems]


def test_waiver_naming_another_rule_does_not_apply():
    f = _finding()
    w = WaiverNote(f.fingerprint, "j", "a", rule="TST102")
    review = classify([f], [w], today=TODAY)
    assert review.entries[0].status == "open" and not review.used


def _inline_design(tmp: Path, component_waive: str, top_waive: str = "") -> Path:
    text = (GATE / "logger.yaml").read_text(encoding="utf-8")
    text = text.replace("pins: {1: IN, 2: INM}}", "pins: {1: IN, 2: INM},\n      waive: [" + component_waive + "]}")
    p = tmp / "inline.yaml"
    p.write_text(text + top_waive, encoding="utf-8")
    return p


def test_inline_component_waiver_waives_that_rule_on_that_part(tmp_path):
    design = _inline_design(tmp_path, "{rule: resistor-below-minimum, justification: sets the LED current, "
                                      "accepted-by: B. Designer, expires: 2027-01-31}")
    report = review_files([design], registry=REGISTRY, today=TODAY, discover=False)
    statuses = {e.finding.rule: e.status for e in report.entries()}
    assert statuses == {"TST101": "waived", "TST102": "open", "TST103": "open"}
    w = next(e.waiver for e in report.entries() if e.status == "waived")
    assert (w.rule, w.refs, w.file, w.line) == ("TST101", ("R1",), str(design), 11)
    later = review_files([design], registry=REGISTRY, today=dt.date(2027, 2, 1), discover=False)
    assert next(e for e in later.entries() if e.finding.rule == "TST101").status == "open"
    assert [w.label for w in later.expired_waivers] == ["TST101 on R1"]


def test_inline_top_level_waiver_and_unused_inline_waiver(tmp_path):
    top = ("waive:\n  - {rule: TST102, refs: [C1], justification: decoupling only, accepted-by: B. Designer}\n"
           "  - {rule: TST103, refs: [U9], justification: stale, accepted-by: B. Designer}\n")
    design = _inline_design(tmp_path, "{rule: TST102, justification: wrong rule here, accepted-by: C}", top)
    report = review_files([design], registry=REGISTRY, today=TODAY, discover=False)
    assert {e.finding.rule: e.status for e in report.entries()} == {"TST101": "open", "TST102": "waived",
                                                                     "TST103": "open"}
    assert sorted(w.label for w in report.unused_waivers) == ["TST102 on R1", "TST103 on U9"]


def test_inline_waiver_with_unknown_rule_is_an_input_error_at_its_line(tmp_path):
    from afecheck.errors import InputError

    design = _inline_design(tmp_path, "{rule: TST404, justification: j, accepted-by: a}")
    with pytest.raises(InputError) as info:
        review_files([design], registry=REGISTRY, today=TODAY, discover=False)
    p = info.value.problems[0]
    assert "unknown rule 'TST404'" in p.message and p.file == str(design) and p.line == 11
