"""Gate semantics: baselines (new, unchanged, fixed), fail levels and exit codes, promotions."""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import pytest
from fixtures.gate.fakes import REGISTRY

from afecheck.api import review_files
from afecheck.engine.finding import Finding, Location, Severity
from afecheck.errors import ConfigError
from afecheck.policy.baseline import load_baseline, render_baseline
from afecheck.policy.gate import classify, exit_code, promote

GATE = Path(__file__).parent / "fixtures" / "gate"
TODAY = dt.date(2026, 12, 2)


def _f(rule: str, sev: Severity, ref: str, confidence: str = "computed") -> Finding:
    return Finding(rule, rule.lower(), sev, f"{ref} finding", Location(file="d.yaml", line=1, refs=(ref,)),
                   confidence=confidence, design="d")  # type: ignore[arg-type]


def _baseline(tmp: Path, design: Path) -> Path:
    report = review_files([design], registry=REGISTRY, today=TODAY, discover=False)
    out = tmp / "baseline.json"
    out.write_text(render_baseline(e.finding for e in report.entries()), encoding="utf-8")
    return out


def test_baseline_on_unchanged_design_passes(tmp_path):
    base = _baseline(tmp_path, GATE / "logger.yaml")
    report = review_files([GATE / "logger.yaml"], registry=REGISTRY, today=TODAY, discover=False, baseline=base)
    assert {e.status for e in report.entries()} == {"unchanged"}
    assert exit_code(report) == 0


def test_baseline_with_one_new_defect_fails_naming_only_it(tmp_path):
    base = _baseline(tmp_path, GATE / "logger.yaml")
    report = review_files([GATE / "logger_new_defect.yaml"], registry=REGISTRY, today=TODAY, discover=False,
                          baseline=base)
    new = [e for e in report.entries() if e.status == "new"]
    assert [(e.finding.rule, e.finding.location.refs) for e in new] == [("TST101", ("R5",))]
    assert [e for e in report.entries() if report.gating(e)] == new
    assert exit_code(report) == 1


def test_fixed_findings_are_reported_as_fixed(tmp_path):
    base = _baseline(tmp_path, GATE / "logger_new_defect.yaml")
    report = review_files([GATE / "logger.yaml"], registry=REGISTRY, today=TODAY, discover=False, baseline=base)
    fixed = [e for e in report.entries() if e.status == "fixed"]
    assert [e.finding.location.refs for e in fixed] == [("R5",)]
    assert exit_code(report) == 0 and report.counts()["fixed"] == 1


def test_baseline_matches_as_a_multiset():
    a, b = _f("X1", Severity.ERROR, "R1"), _f("X1", Severity.ERROR, "R1")
    review = classify([a, b], baseline=[a], today=TODAY)
    assert sorted(e.status for e in review.entries) == ["new", "unchanged"]


def test_baseline_round_trip_keeps_fingerprints_and_is_deterministic():
    fs = [_f("X2", Severity.WARNING, "C1"), _f("X1", Severity.ERROR, "R1")]
    text = render_baseline(fs)
    assert text == render_baseline(reversed(fs))
    assert "T" not in text.split('"findings"')[0]  # no timestamp in the header


def test_bad_baseline_file_is_a_config_error(tmp_path):
    p = tmp_path / "b.json"
    p.write_text('{"afecheck_baseline": 1, "findings": [\n', encoding="utf-8")
    with pytest.raises(ConfigError) as info:
        load_baseline(p)
    assert info.value.problems[0].line == 2
    p.write_text('{"something": 1}', encoding="utf-8")
    with pytest.raises(ConfigError, match="afecheck baseline"):
        load_baseline(p)


@pytest.mark.parametrize(("fail_on", "code"), [("error", 1), ("warning", 1), ("info", 1), ("never", 0)])
def test_fail_levels(fail_on, code):
    report = review_files([GATE / "logger.yaml"], registry=REGISTRY, today=TODAY, discover=False, fail_on=fail_on)
    assert exit_code(report) == code


def test_fail_level_only_counts_findings_at_or_above_it(tmp_path):
    cfg = tmp_path / "c.yaml"
    cfg.write_text("afecheck-config: 1\nrules: {TST101: off}\n", encoding="utf-8")
    kw = {"registry": REGISTRY, "today": TODAY, "config": cfg}
    assert exit_code(review_files([GATE / "logger.yaml"], fail_on="error", **kw)) == 0  # warning + info left
    assert exit_code(review_files([GATE / "logger.yaml"], fail_on="warning", **kw)) == 1


def test_promotion_raises_computed_findings_only():
    fs = [_f("X1", Severity.WARNING, "R1"), _f("X2", Severity.WARNING, "R2", "estimated"),
          _f("X3", Severity.INFO, "R3", "not-evaluated"), _f("X4", Severity.INFO, "R4")]
    out = promote(fs, {Severity.WARNING: Severity.ERROR, Severity.INFO: Severity.WARNING})
    assert [f.severity for f in out] == [Severity.ERROR, Severity.WARNING, Severity.INFO, Severity.WARNING]
