"""Retired rule ids (the AFEnnn scheme) keep working in configs, waivers and baselines, with a note naming the
new id; fingerprints recorded before the rename still match. This file keeps the old ids on purpose."""

from __future__ import annotations

import hashlib
import io
import json
import shutil
from pathlib import Path

import pytest

from afecheck.api import review_files
from afecheck.cli import main
from afecheck.engine.aliases import current_id, retired
from afecheck.engine.registry import default_registry

SAMPLE = Path(__file__).parent.parent / "sample_designs" / "soil_probe_reader.yaml"


def _copy(tmp_path: Path) -> Path:
    target = tmp_path / SAMPLE.name
    shutil.copy(SAMPLE, target)
    return target


def test_every_retired_id_names_a_registered_rule_and_no_rule_reuses_one() -> None:
    ids = {m.id for m in default_registry().metas()}
    for r in retired():
        assert r.id not in ids
        assert r.now in ids, f"{r.id} points at {r.now}, which is not registered"
    assert current_id("AFE201") == "stability.phase-margin" and current_id("afe101") == "loading.inverting-input"
    assert current_id("stability.phase-margin") is None


def test_fingerprint_is_computed_from_the_first_id_so_old_records_match(tmp_path: Path) -> None:
    report = review_files([_copy(tmp_path)], discover=False)
    f = next(e.finding for e in report.entries() if e.finding.rule == "loading.inverting-input")
    key = "|".join(("AFE101", f.design, ",".join(sorted(f.location.refs)), ",".join(sorted(f.location.nets))))
    assert f.fingerprint == hashlib.sha256(key.encode()).hexdigest()[:16]


@pytest.mark.parametrize("old", ["AFE101", "inverting-input-loads-source"])
def test_old_id_in_a_config_still_turns_its_rule_off_and_says_the_new_id(tmp_path: Path, old: str) -> None:
    design = _copy(tmp_path)
    (tmp_path / ".afecheck.yaml").write_text(f"afecheck-config: 1\nrules:\n  {old}: off\n", encoding="utf-8")
    out, err = io.StringIO(), io.StringIO()
    status = main(["check", "--fail-on", "never", str(design)], stdout=out, stderr=err)
    assert status == 0, err.getvalue()
    text = out.getvalue()
    assert "· rule loading.inverting-input" not in text and "· rule headroom.input-common-mode" in text
    if old.startswith("AFE"):  # run notes go to standard error, never into a report
        assert "note: AFE101 is the retired name of rule loading.inverting-input" in err.getvalue()


def test_old_id_in_a_waiver_file_still_waives(tmp_path: Path) -> None:
    design = _copy(tmp_path)
    first = review_files([design], discover=False)
    fp = next(e.finding.fingerprint for e in first.entries() if e.finding.rule == "loading.inverting-input")
    waivers = tmp_path / "w.yaml"
    waivers.write_text("afecheck-waivers: 1\nwaivers:\n"
                       f"  - fingerprint: {fp}\n    rule: AFE101\n    justification: divider measured\n"
                       "    accepted-by: A. Reviewer\n", encoding="utf-8")
    report = review_files([design], discover=False, waiver_files=[waivers])
    status = {e.finding.rule: e.status for e in report.entries()}
    assert status["loading.inverting-input"] == "waived"
    assert any("AFE101" in n for n in report.notes)


def test_a_baseline_recorded_with_old_ids_still_marks_findings_unchanged(tmp_path: Path) -> None:
    design = _copy(tmp_path)
    base = tmp_path / "base.json"
    assert main(["baseline", str(design), "--output", str(base)], stdout=io.StringIO(), stderr=io.StringIO()) == 0
    data = json.loads(base.read_text(encoding="utf-8"))
    back = {r["now"]: r["id"] for r in (vars(x) for x in retired())}
    for rec in data["findings"]:
        rec["rule"] = back[rec["rule"]]
    base.write_text(json.dumps(data), encoding="utf-8")
    report = review_files([design], discover=False, baseline=base)
    assert {e.status for e in report.entries()} == {"unchanged"}
