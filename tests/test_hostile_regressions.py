"""Minimised reproducers of every hostile-input defect found by fuzzing, one named test each.

Policy files (config, rule set, waivers), baselines, referenced paths and odd file types: each must end in a
clear ``file:line...: message`` error with exit status 2, never a traceback, a hang or a silent pass.
The expected behaviour is the project's own input contract (README "Input limits"); where a limit is a
fact of the trade it is marked "common practice".
"""

from __future__ import annotations

import io
import json
import os
import shutil
import threading
import time
from pathlib import Path

import pytest
from fixtures.gate.fakes import REGISTRY

from afecheck.cli import main

GATE = Path(__file__).parent / "fixtures" / "gate"
OK_WAIVERS = "afecheck-waivers: 1\nwaivers: []\n"


@pytest.fixture()
def work(tmp_path, monkeypatch):
    """A project folder (with a .git marker so config discovery stops there) holding the gate fixtures."""
    monkeypatch.setattr("afecheck.api._registry", lambda registry: registry or REGISTRY)
    project = tmp_path / "project"
    project.mkdir()
    (project / ".git").mkdir()
    for name in ("logger.yaml", "logger_new_defect.yaml", "mains_meter.yaml"):
        shutil.copy(GATE / name, project / name)
    monkeypatch.chdir(project)
    return project


def run(*argv: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    code = main(list(argv), out, err)
    return code, out.getvalue(), err.getvalue()


def refused(*argv: str, needle: str, where: str | None = None) -> str:
    """Run, demand exit 2 with ``needle`` in stderr and (if given) ``where`` naming file and line; no traceback."""
    code, out, err = run(*argv)
    assert code == 2, (code, out, err)
    assert "Traceback" not in err and needle in err, err
    if where is not None:
        assert where in err, err
    return err


def config(work: Path, text: str) -> Path:
    (work / ".afecheck.yaml").write_text(text, encoding="utf-8")
    return work / ".afecheck.yaml"


# --- config, rule-set and waiver files go through the design reader ---------------------------------------

def test_config_fail_on_given_twice_is_refused_not_last_one_wins(work):
    config(work, "afecheck-config: 1\nfail-on: error\nfail-on: never\n")
    refused("check", "logger.yaml", needle="duplicate key 'fail-on'", where=".afecheck.yaml:3:1")


def test_config_merge_key_is_refused(work):
    config(work, "afecheck-config: 1\nbase: &b {fail-on: never}\n<<: *b\n")
    refused("check", "logger.yaml", needle="merge keys")


def test_config_object_tag_is_refused_not_constructed(work):
    config(work, "afecheck-config: 1\nfail-on: !!python/object/apply:os.system ['true']\n")
    refused("check", "logger.yaml", needle="tag '!!python/object/apply:os.system' is not allowed")


@pytest.mark.parametrize("text", ["[1, 2]\n", "just words\n", "42\n", "afecheck-config: true\n",
                                  "afecheck-config: 1.0\n", "---\n", "{}\n"])
def test_config_that_is_not_a_versioned_mapping_is_refused(work, text):
    config(work, text)
    refused("check", "logger.yaml", needle=".afecheck.yaml")


def test_config_alias_bomb_stops_at_the_alias_limit(work):
    lines = ["afecheck-config: 1", "a0: &a0 [x, x, x, x, x, x, x, x, x, x]"]
    lines += [f"a{i}: &a{i} [*a{i - 1}, *a{i - 1}, *a{i - 1}, *a{i - 1}, *a{i - 1}, *a{i - 1}, *a{i - 1}, "
              f"*a{i - 1}, *a{i - 1}, *a{i - 1}]" for i in range(1, 9)]
    config(work, "\n".join(lines) + "\n")
    start = time.process_time()  # CPU time: a loaded machine must not fail a sound refusal
    refused("check", "logger.yaml", needle="aliases expand to more than")
    assert time.process_time() - start < 5


def test_config_number_key_is_refused(work):
    config(work, "afecheck-config: 1\nrules:\n  101: off\n")
    refused("check", "logger.yaml", needle="key 101 is not text", where=".afecheck.yaml:3")


@pytest.mark.parametrize(("value", "needle"), [
    ("1e400", "not a finite number"),
    (".inf", "not a finite number"),
    (".nan", "not a finite number"),
    ("-5", "cannot be negative"),
    ("'-5 ohm'", "cannot be negative"),
    ("1" + "0" * 310, "not a finite number"),
    ("1" + "0" * 5000, "at most 400 are read"),
])
def test_absurd_thresholds_are_refused(work, value, needle):
    config(work, f"afecheck-config: 1\nrules:\n  TST101: {{params: {{min_resistance: {value}}}}}\n")
    refused("check", "logger.yaml", needle=needle, where=".afecheck.yaml:3")


@pytest.mark.parametrize(("expires", "needle"), [
    ("99999-01-01", "expected a date written YYYY-MM-DD"),
    ("2027-02-30", "expected a date written YYYY-MM-DD"),
    ("2027-06-30T10:00:00", "expected a date written YYYY-MM-DD"),
    ("20270630", "expected a date written YYYY-MM-DD"),
    ("!!timestamp 2027-06-30", "tag '!!timestamp' is not allowed"),
    ("[2027, 6, 30]", "expected a date written YYYY-MM-DD"),
])
def test_bad_waiver_dates_are_refused(work, expires, needle):
    (work / "w.yaml").write_text(
        "afecheck-waivers: 1\nwaivers:\n  - fingerprint: 0123456789abcdef\n    justification: bench\n"
        f"    accepted-by: J. Reviewer\n    expires: {expires}\n", encoding="utf-8")
    refused("check", "logger.yaml", "--waivers", "w.yaml", needle=needle, where="w.yaml:6")


def test_waiver_fingerprint_that_looks_like_a_number_keeps_its_digits(work):
    # 1234e5678901234 would be a float (or inf) if built as a number; the fingerprint is read as written
    (work / "w.yaml").write_text(
        "afecheck-waivers: 1\nwaivers:\n  - fingerprint: 01234567e9012345\n    justification: bench\n"
        "    accepted-by: J. Reviewer\n", encoding="utf-8")
    code, _, err = run("check", "--fail-on", "never", "logger.yaml", "--waivers", "w.yaml")
    assert code == 0 and "01234567e9012345" not in err


def test_same_waiver_file_given_twice_is_refused(work):
    (work / "w.yaml").write_text(OK_WAIVERS, encoding="utf-8")
    refused("check", "logger.yaml", "--waivers", "w.yaml", "--waivers", "./w.yaml", needle="waiver file given twice")


def test_same_waiver_file_in_config_and_on_the_command_line_is_refused(work):
    (work / "w.yaml").write_text(OK_WAIVERS, encoding="utf-8")
    config(work, "afecheck-config: 1\nwaivers: [w.yaml]\n")
    refused("check", "logger.yaml", "--waivers", "w.yaml", needle="waiver file given twice")


# --- only regular files are read, never for ever ---------------------------------------------------------

def _fast_refusal(*argv: str, needle: str) -> None:
    """The run ends within 5 s (a FIFO or /dev/zero must not block or be read for ever)."""
    result: list = []
    thread = threading.Thread(target=lambda: result.append(run(*argv)), daemon=True)
    thread.start()
    thread.join(5)
    assert result, f"afecheck {' '.join(argv)} still running after 5 s"
    code, _, err = result[0]
    assert code == 2 and needle in err, err


@pytest.mark.parametrize("option", ["--waivers", "--config", "--baseline", "--intent", "--parts", "--ruleset"])
def test_device_fifo_and_folder_inputs_are_refused_quickly(work, option):
    fifo = work / "pipe.yaml"
    os.mkfifo(fifo)
    (work / "folder.yaml").mkdir()
    if option == "--ruleset":  # a rule-set name must look like a file to be read as one
        _fast_refusal("check", "logger.yaml", option, "pipe.yaml", needle="unknown rule set")
        return
    for target, needle in ((str(fifo), "FIFO"), ("/dev/zero", "character device"), ("folder.yaml", "a folder")):
        _fast_refusal("check", "logger.yaml", option, target, needle=needle)


def test_design_that_is_a_fifo_is_refused_quickly(work):
    os.mkfifo(work / "d.yaml")
    _fast_refusal("check", "d.yaml", needle="FIFO")


@pytest.mark.parametrize("name", ["lib\x00.yaml", "x" * 300 + ".yaml", "a/" * 600 + "b.yaml"])
def test_bad_file_names_in_a_design_are_refused(work, name):
    text = (GATE / "logger.yaml").read_text(encoding="utf-8") + f"part_libraries: [{json.dumps(name)}]\n"
    (work / "d.yaml").write_text(text, encoding="utf-8")
    refused("check", "d.yaml", needle="part_libraries.0")
    text = (GATE / "logger.yaml").read_text(encoding="utf-8") + f"intent: {json.dumps(name)}\n"
    (work / "e.yaml").write_text(text, encoding="utf-8")
    refused("check", "e.yaml", needle="intent")


@pytest.mark.parametrize("option", ["--intent", "--parts", "--waivers", "--baseline", "--config"])
def test_bad_file_names_on_the_command_line_are_refused(work, option):
    for name in ("x\x00.yaml", "y" * 300 + ".yaml"):
        code, _, err = run("check", "logger.yaml", option, name)
        assert code == 2 and "Traceback" not in err, err


# --- one containment rule for every path written inside a file ----------------------------------------------

@pytest.mark.parametrize("target", ["/etc/passwd", "../../x.yaml", "../outside.yaml"])
def test_config_waivers_outside_the_project_are_refused(work, target):
    (work.parent / "outside.yaml").write_text(OK_WAIVERS, encoding="utf-8")
    config(work, f"afecheck-config: 1\nwaivers: [{target}]\n")
    refused("check", "logger.yaml", needle="waivers.0", where=".afecheck.yaml:2")


@pytest.mark.parametrize("target", ["/etc/passwd.yaml", "../outside.yaml", "../../x.yaml"])
def test_config_ruleset_outside_the_project_is_refused(work, target):
    (work.parent / "outside.yaml").write_text("afecheck-ruleset: 1\n", encoding="utf-8")
    config(work, f"afecheck-config: 1\nruleset: {target}\n")
    refused("check", "logger.yaml", needle="ruleset", where=".afecheck.yaml:2")


def test_ruleset_symlink_leading_outside_is_refused(work):
    (work.parent / "outside.yaml").write_text("afecheck-ruleset: 1\n", encoding="utf-8")
    (work / "link.yaml").symlink_to(work.parent / "outside.yaml")
    config(work, "afecheck-config: 1\nruleset: link.yaml\n")
    refused("check", "logger.yaml", needle="leads outside")


@pytest.mark.parametrize("target", ["/etc/passwd.yaml", "../outside.yaml"])
def test_ruleset_extends_outside_its_folder_is_refused(work, target):
    (work.parent / "outside.yaml").write_text("afecheck-ruleset: 1\n", encoding="utf-8")
    (work / "sets").mkdir()
    (work / "sets" / "mine.yaml").write_text(f"afecheck-ruleset: 1\nextends: {target}\n", encoding="utf-8")
    config(work, "afecheck-config: 1\nruleset: sets/mine.yaml\n")
    refused("check", "logger.yaml", needle="extends", where="mine.yaml:2")


def test_ruleset_inside_the_project_is_still_read(work):
    (work / "sets").mkdir()
    (work / "sets" / "base.yaml").write_text("afecheck-ruleset: 1\nfail-on: never\n", encoding="utf-8")
    (work / "sets" / "mine.yaml").write_text("afecheck-ruleset: 1\nextends: base.yaml\n", encoding="utf-8")
    config(work, "afecheck-config: 1\nruleset: sets/mine.yaml\n")
    code, out, err = run("check", "logger.yaml")
    assert code == 0 and "fail level never" in out, (out, err)


def test_config_found_in_a_parent_folder_is_confined_to_its_own_folder(work):
    sub = work / "boards"
    sub.mkdir()
    shutil.copy(GATE / "logger.yaml", sub / "logger.yaml")
    config(work, "afecheck-config: 1\nwaivers: [../../x.yaml]\n")
    refused("check", "boards/logger.yaml", needle="leads outside")


# --- baselines ------------------------------------------------------------------------------------------------

@pytest.mark.parametrize(("content", "needle"), [
    (b"\xff\xfe{}", "not UTF-8"),
    (b"[]", "not an afecheck baseline"),
    (b'{"afecheck_baseline": true, "findings": []}', "not an afecheck baseline"),
    (b'{"afecheck_baseline": 1, "findings": {}}', "not an afecheck baseline"),
    (b'{"afecheck_baseline": 1, "findings": [1]}', "findings.0"),
    (b'{"afecheck_baseline": 1, "findings": [{"rule": 5}]}', "missing"),
    (b'{"afecheck_baseline": 1, "afecheck_baseline": 1, "findings": []}', "duplicate key"),
    (b'{"afecheck_baseline": 1, "findings": [], "designs": "x"}', "designs"),
    (b'{"afecheck_baseline": 1, "findings": [], "designs": [{"name": 1, "file": []}]}', "designs"),
    (b'{"afecheck_baseline": 1, "findings": [1e999]}', "not a finite number"),
])
def test_broken_baselines_are_input_errors(work, content, needle):
    (work / "b.json").write_bytes(content)
    refused("check", "logger.yaml", "--baseline", "b.json", needle=needle, where="b.json")


def _record(**changes: object) -> dict:
    record = {"rule": "TST101", "slug": "s", "severity": "error", "message": "m", "fix": "f",
              "design": "gate fixture logger", "file": "logger.yaml", "line": 1, "path": "", "refs": ["R1"],
              "nets": [], "pins": [], "ctx": {}}
    record.update(changes)
    return record


@pytest.mark.parametrize("change", [{"refs": "R1"}, {"refs": [1]}, {"line": "3"}, {"line": True}, {"ctx": [1]},
                                    {"severity": "fatal"}, {"message": None}, {"file": 7}])
def test_baseline_records_of_the_wrong_shape_are_input_errors(work, change):
    (work / "b.json").write_text(json.dumps({"afecheck_baseline": 1, "findings": [_record(**change)]}),
                                 encoding="utf-8")
    for fmt in ("text", "json", "sarif", "junit", "markdown"):
        refused("check", "logger.yaml", "--baseline", "b.json", "--format", fmt, needle="findings.0")


def test_baseline_for_another_design_is_a_usage_error(work):
    assert run("baseline", "mains_meter.yaml", "--output", "b.json")[0] == 0
    recorded = json.loads((work / "b.json").read_text(encoding="utf-8"))
    assert recorded["designs"] == [{"name": "gate fixture mains monitor", "file": "mains_meter.yaml"}]
    refused("check", "logger.yaml", "--baseline", "b.json", needle="recorded for 'gate fixture mains monitor'")
    code, _, err = run("check", "logger.yaml", "--baseline", "b.json", "--baseline-any-design", "--format", "json")
    assert code == 1, err  # asked for explicitly: every logger finding is new against the other design's


def test_baseline_of_the_same_design_renamed_in_place_still_applies(work):
    assert run("baseline", "logger.yaml", "--output", "b.json")[0] == 0
    text = (work / "logger.yaml").read_text(encoding="utf-8").replace("name: gate fixture logger",
                                                                      "name: bench logger v2")
    (work / "logger.yaml").write_text(text, encoding="utf-8")
    code, out, err = run("check", "logger.yaml", "--baseline", "b.json", "--format", "json")
    assert code == 0, (out, err)
    assert {f["status"] for f in json.loads(out)["findings"]} == {"unchanged"}


def test_old_baseline_without_designs_is_accepted_with_one_note(work):
    assert run("baseline", "logger.yaml", "--output", "b.json")[0] == 0
    data = json.loads((work / "b.json").read_text(encoding="utf-8"))
    del data["designs"]
    (work / "b.json").write_text(json.dumps(data), encoding="utf-8")
    code, _, err = run("check", "logger.yaml", "--baseline", "b.json")
    assert code == 0
    notes = [line for line in err.splitlines() if "note:" in line]
    assert len(notes) == 1 and "does not say which designs" in notes[0], err


# --- numbers in design files ---------------------------------------------------------------------------------

@pytest.mark.parametrize(("field", "needle"), [
    ("tolerance: 1" + "0" * 300, "tolerance"),
    ("tolerance: 0." + "0" * 300 + "1e999", "tolerance"),
    ("tolerance: " + "1" * 5000, "at most 400 are read"),
    ("value: 1e400", "not a finite number"),
    ("value: .inf", "not a finite number"),
    ("value: .nan", "not a finite number"),
    ("value: " + "9" * 350, "not a finite number"),
])
def test_numbers_no_float_can_hold_are_input_errors(work, field, needle):
    text = (GATE / "logger.yaml").read_text(encoding="utf-8").replace(
        "R1: {kind: resistor, value: 470, tolerance: 1%,", f"R1: {{kind: resistor, value: 470, {field},")
    if field.startswith("value"):
        text = text.replace("value: 470, ", "")
    (work / "d.yaml").write_text(text, encoding="utf-8")
    refused("check", "d.yaml", needle=needle, where="d.yaml:10")


def test_json_number_no_float_can_hold_is_an_input_error(work):
    (work / "d.json").write_text('{"afecheck": 1,\n "name": 1e400}\n', encoding="utf-8")
    refused("check", "d.json", needle="not a finite number", where="d.json:2:10")


# --- names that could act on a terminal or break a report's markup ---------------------------------------------

HOSTILE_NAME = "".join(chr(c) for c in range(32)) + "\x1b[2J|<&]]>\u202e\x7f\x9b`*_"


def _hostile_design(work: Path) -> Path:
    import yaml

    data = yaml.safe_load((GATE / "logger.yaml").read_text(encoding="utf-8"))
    data["components"]["R1" + HOSTILE_NAME] = data["components"].pop("R1")  # named in TST101's message
    data["name"] = "logger " + HOSTILE_NAME
    path = work / "hostile.json"
    path.write_text(json.dumps(data), encoding="utf-8")
    return path


@pytest.mark.parametrize("fmt", ["text", "markdown", "junit"])
def test_control_characters_in_names_are_shown_visibly_never_raw(work, fmt):
    path = _hostile_design(work)
    code, out, err = run("check", "--fail-on", "never", "--format", fmt, str(path))
    assert code == 0, err
    raw = {c for c in HOSTILE_NAME if not c.isprintable()} - {"\n"}
    assert not raw & set(out), sorted(raw & set(out))
    assert out.count("\n") == run("check", "--fail-on", "never", "--format", fmt, str(GATE / "logger.yaml"))[1].count(
        "\n")  # a newline in a name never starts a line of its own
    assert "\\x1b[2J" in out or "\\x1b\\[2J" in out  # the escape is shown, not sent to the terminal
    assert "\\u202e" in out


def test_junit_report_of_hostile_names_is_well_formed_xml(work):
    import xml.etree.ElementTree as ET

    path = _hostile_design(work)
    code, out, _ = run("check", "--fail-on", "never", "--format", "junit", str(path))
    root = ET.fromstring(out.encode("utf-8"))
    text = ET.tostring(root, encoding="unicode")
    assert "]]>" not in out.replace("]]&gt;", "")
    assert "R1\\x00" in text and "\\x1b[2J|&lt;&amp;]]&gt;" in out


def test_markdown_table_survives_pipes_and_markup_in_names(work):
    path = _hostile_design(work)
    _, out, _ = run("check", "--fail-on", "never", "--format", "markdown", str(path))
    rows = [line for line in out.splitlines() if line.startswith("| ") and "TST" in line]
    assert rows
    for row in rows:  # every row keeps its six cells: no unescaped pipe inside a cell
        import re

        assert len(re.findall(r"(?<!\\)\|", row)) == 6, row
    assert "<&" not in out and "\\<\\&" in out


def test_lone_surrogate_in_a_json_name_is_an_input_error(work):
    (work / "d.json").write_text('{"afecheck": 1, "name": "x\\ud800"}', encoding="utf-8")
    refused("check", "d.json", needle="lone surrogate", where="d.json:1")


def test_exponent_too_large_for_decimal_is_an_input_error(work):
    # found by tests/test_fuzz_inputs.py: decimal.Overflow escaped from the unit parser
    text = (GATE / "logger.yaml").read_text(encoding="utf-8").replace("value: 470,", "value: 0123e45678901234,")
    (work / "d.yaml").write_text(text, encoding="utf-8")
    refused("check", "d.yaml", needle="R1.value", where="d.yaml:10")
