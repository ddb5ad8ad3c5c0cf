"""Every report says which rule set and which project config judged each design, so a reader of a report (or a
CI log) can tell a gate run under `precision` with a local config from one under the defaults."""

from __future__ import annotations

import io
import json
import shutil
from pathlib import Path

from afecheck.cli import main

GATE = Path(__file__).parent / "fixtures" / "gate"


def _reports(folder: Path, *extra: str) -> dict[str, str]:
    args = ["check", str(folder / "logger.yaml"), "--today", "2026-12-02", *extra]
    files = ("json", "sarif", "markdown", "junit", "html")
    for fmt in files:
        args += ["--format", fmt, "--output", str(folder / f"r.{fmt}")]
    out = io.StringIO()
    assert main([*args, "--format", "text"], out, io.StringIO()) == 1  # the gate fixture carries an error
    return {"text": out.getvalue(), **{f: (folder / f"r.{f}").read_text(encoding="utf-8") for f in files}}


def test_reports_name_the_config_and_rule_set(tmp_path):
    shutil.copy(GATE / "logger.yaml", tmp_path / "logger.yaml")
    config = tmp_path / ".afecheck.yaml"
    config.write_text("afecheck-config: 1\nruleset: precision\n", encoding="utf-8")
    got = _reports(tmp_path)
    assert f"rule set precision, config {config}\n" in got["text"]
    (design,) = json.loads(got["json"])["designs"]
    assert (design["ruleset"], design["config"]) == ("precision", str(config))
    policies = json.loads(got["sarif"])["runs"][0]["properties"]["policies"]
    assert policies == [{"design": str(tmp_path / "logger.yaml"), "ruleset": "precision", "config": str(config)}]
    assert f"Judged with rule set precision, config {config}." in got["markdown"].replace("\\_", "_")
    assert '<property name="ruleset" value="precision"' in got["junit"]
    assert f'<property name="config" value="{config}"' in got["junit"]
    assert "precision" in got["html"] and str(config) in got["html"]


def test_reports_say_when_no_config_was_used(tmp_path):
    shutil.copy(GATE / "logger.yaml", tmp_path / "logger.yaml")
    got = _reports(tmp_path, "--no-config")
    assert "rule set default, no config file\n" in got["text"]
    assert json.loads(got["sarif"])["runs"][0]["properties"]["policies"][0]["config"] is None
