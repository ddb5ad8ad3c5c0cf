"""``afecheck check`` and ``afecheck baseline`` through the command line: formats and outputs, exit codes,
atomic writes, never writing inputs, colour rules."""

from __future__ import annotations

import io
import json
import os
import shutil
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest
from fixtures.gate.fakes import REGISTRY

from afecheck.cli import main
from afecheck.commands.check import use_color
from afecheck.io import PARTIAL

GATE = Path(__file__).parent / "fixtures" / "gate"


class _Tty(io.StringIO):
    def isatty(self) -> bool:
        return True


@pytest.fixture()
def work(tmp_path, monkeypatch):
    """A folder holding copies of the fixtures, as the working directory, with the fake rules registered."""
    monkeypatch.setattr("afecheck.api._registry", lambda registry: registry or REGISTRY)
    monkeypatch.delenv("NO_COLOR", raising=False)
    for name in ("logger.yaml", "logger_new_defect.yaml", "mains_meter.yaml"):
        shutil.copy(GATE / name, tmp_path / name)
    monkeypatch.chdir(tmp_path)
    return tmp_path


def _run(*argv: str, stdout: io.StringIO | None = None) -> tuple[int, str, str]:
    out, err = stdout or io.StringIO(), io.StringIO()
    code = main(list(argv), out, err)
    return code, out.getvalue(), err.getvalue()


def test_default_is_text_on_stdout_and_exit_1_on_errors(work):
    code, out, err = _run("check", "logger.yaml", "--today", "2026-12-02")
    assert code == 1 and err == ""
    assert "logger.yaml:" in out and out.rstrip().endswith("fail level error: FAIL")


def test_several_formats_in_one_run(work):
    code, out, err = _run("check", "logger.yaml", "mains_meter.yaml", "--format", "sarif", "--output", "r.sarif",
                          "--format", "junit", "-o", "r.xml", "--format", "text")
    assert code == 1, err
    sarif = json.loads((work / "r.sarif").read_text(encoding="utf-8"))
    assert sarif["version"] == "2.1.0"
    root = ET.fromstring((work / "r.xml").read_text(encoding="utf-8"))
    assert root.tag == "testsuites" and root.get("failures") == "2"
    assert "== logger.yaml" in out


def test_output_to_missing_folder_is_exit_2_and_leaves_nothing(work):
    code, _, err = _run("check", "logger.yaml", "--format", "json", "--output", "nowhere/r.json")
    assert code == 2 and "cannot write" in err
    assert not (work / "nowhere").exists()


def test_two_formats_on_stdout_is_a_usage_error(work):
    code, out, err = _run("check", "logger.yaml", "--format", "json", "--format", "text")
    assert code == 2 and "standard output" in err and out == ""


def test_output_without_format_applies_to_text(work):
    code, out, _ = _run("check", "logger.yaml", "--output", "r.txt")
    assert code == 1 and out == ""
    assert (work / "r.txt").read_text(encoding="utf-8").startswith("== logger.yaml")


def test_afecheck_never_writes_to_its_inputs(work):
    before = (work / "logger.yaml").read_bytes()
    code, _, err = _run("check", "logger.yaml", "--format", "json", "--output", "./logger.yaml")
    assert code == 2 and "input file" in err
    assert (work / "logger.yaml").read_bytes() == before


def test_bad_design_and_bad_usage_exit_2(work, capsys):
    (work / "broken.yaml").write_text("afecheck: 1\ncomponents: {R1: {kind: resistor}}\n", encoding="utf-8")
    code, out, err = _run("check", "broken.yaml")
    assert code == 2 and "broken.yaml" in err and "Traceback" not in err
    code, _, err = _run("check", "logger.yaml", "--fail-on", "sometimes")
    assert code == 2
    code, _, _ = _run("check", "logger.yaml", "--today", "tomorrow")
    assert code == 2 and "expected a date" in capsys.readouterr().err


def test_bad_config_exit_2_with_file_and_line(work):
    (work / ".afecheck.yaml").write_text("afecheck-config: 1\nrules:\n  TST404: off\n", encoding="utf-8")
    code, _, err = _run("check", "logger.yaml")
    assert code == 2 and ".afecheck.yaml:3:" in err and "unknown rule 'TST404'" in err
    code, _, _ = _run("check", "logger.yaml", "--no-config", "--fail-on", "never")
    assert code == 0


def test_fail_on_levels_through_cli(work):
    assert _run("check", "logger.yaml", "--fail-on", "never")[0] == 0
    (work / ".afecheck.yaml").write_text("afecheck-config: 1\nrules: {TST101: off}\n", encoding="utf-8")
    assert _run("check", "logger.yaml")[0] == 0
    assert _run("check", "logger.yaml", "--fail-on", "warning")[0] == 1


def test_baseline_command_then_gate(work):
    code, out, err = _run("baseline", "logger.yaml", "--output", "base.json")
    assert code == 0 and "recorded 3 findings" in err and out == "", err
    code, out, _ = _run("check", "logger.yaml", "--baseline", "base.json")
    assert code == 0, out
    code, out, _ = _run("check", "logger_new_defect.yaml", "--baseline", "base.json", "--format", "json")
    data = json.loads(out)
    assert code == 1
    new = [f for f in data["findings"] if f["status"] == "new"]
    assert [(f["rule"], f["refs"]) for f in new] == [("TST101", ["R5"])]
    assert [f for f in data["findings"] if f["gating"]] == new
    code, _, err = _run("baseline", "logger.yaml", "--output", "logger.yaml")
    assert code == 2 and "input file" in err


def test_two_runs_write_byte_identical_files(work):
    for name in ("a", "b"):
        args = ["check", "logger.yaml", "mains_meter.yaml", "--today", "2026-12-02"]
        for fmt in ("text", "json", "sarif", "junit", "markdown"):
            args += ["--format", fmt, "--output", f"{name}.{fmt}"]
        assert _run(*args)[0] == 1
    for fmt in ("text", "json", "sarif", "junit", "markdown"):
        assert (work / f"a.{fmt}").read_bytes() == (work / f"b.{fmt}").read_bytes()
    leftovers = [p.name for p in work.iterdir() if PARTIAL in p.name]
    assert leftovers == []


def test_interrupted_write_leaves_the_old_report_whole(work, monkeypatch):
    (work / "r.json").write_text("old", encoding="utf-8")

    def boom(*_a, **_k):
        raise KeyboardInterrupt

    monkeypatch.setattr(os, "replace", boom)
    code, _, err = _run("check", "logger.yaml", "--format", "json", "--output", "r.json")
    assert code == 130
    assert (work / "r.json").read_text(encoding="utf-8") == "old"
    assert [p.name for p in work.iterdir() if PARTIAL in p.name] == []


def test_colour_rules(monkeypatch):
    monkeypatch.delenv("NO_COLOR", raising=False)
    assert use_color("auto", _Tty()) is True
    assert use_color("auto", io.StringIO()) is False
    assert use_color("always", io.StringIO()) is True
    monkeypatch.setenv("NO_COLOR", "1")
    assert use_color("auto", _Tty()) is False
    assert use_color("always", _Tty()) is False


def test_colour_on_a_tty_only(work, monkeypatch):
    _, out, _ = _run("check", "logger.yaml", stdout=_Tty())
    assert "\x1b[" in out
    monkeypatch.setenv("NO_COLOR", "1")
    _, out, _ = _run("check", "logger.yaml", stdout=_Tty())
    assert "\x1b[" not in out
    code, _, _ = _run("check", "logger.yaml", "--format", "text", "--output", "t.txt", stdout=_Tty())
    assert "\x1b[" not in (work / "t.txt").read_text(encoding="utf-8")


def test_only_designs_skips_other_yaml(work):
    (work / "ci.yaml").write_text("jobs: {build: {}}\n", encoding="utf-8")
    (work / "w.yaml").write_text("afecheck-waivers: 1\nwaivers: []\n", encoding="utf-8")
    code, out, err = _run("check", "--only-designs", "ci.yaml", "w.yaml", "logger.yaml")
    assert code == 1 and "== logger.yaml" in out and "ci.yaml" not in out, err
    code, out, err = _run("check", "--only-designs", "ci.yaml")
    assert code == 0 and "no design files" in err


def test_pre_commit_hooks_file_runs_our_command():
    # pre-commit's hook manifest format: a list of hooks with id, name, entry, language
    import yaml

    hooks = yaml.safe_load((Path(__file__).parents[1] / ".pre-commit-hooks.yaml").read_text(encoding="utf-8"))
    assert {h["id"] for h in hooks} >= {"afecheck"}
    for h in hooks:
        assert {"id", "name", "entry", "language"} <= set(h)
        assert h["entry"].startswith("afecheck check --only-designs")
        assert h["language"] == "python"


def test_ci_doc_config_example_is_valid(tmp_path):
    import re

    from afecheck.engine.registry import default_registry
    from afecheck.policy.config import resolve_policy
    from afecheck.policy.rulesets import Catalogue

    doc = (Path(__file__).parents[1] / "docs" / "CI.md").read_text(encoding="utf-8")
    block = next(b for b in re.findall(r"```yaml\n(.*?)```", doc, re.S) if b.startswith("afecheck-config"))
    (tmp_path / "afecheck-waivers.yaml").write_text("afecheck-waivers: 1\nwaivers: []\n", encoding="utf-8")
    cfg = tmp_path / ".afecheck.yaml"
    cfg.write_text(block, encoding="utf-8")
    policy = resolve_policy(Catalogue(default_registry().metas()), cfg)
    assert policy.ruleset == "precision" and policy.disabled


def test_ci_doc_inline_waiver_example_fits_the_schema():
    import re

    import yaml

    from afecheck.model.schema import Design

    doc = (Path(__file__).parents[1] / "docs" / "CI.md").read_text(encoding="utf-8")
    block = next(b for b in re.findall(r"```yaml\n(.*?)```", doc, re.S) if b.startswith("components:"))
    design = Design.model_validate({"afecheck": 1, **yaml.safe_load(block)})
    assert design.components["R7"].waive[0].rule == "headroom.output-current" and design.waive[0].nets == ("PROBE",)
