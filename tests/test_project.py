"""Project-level promises: README's two set-up commands, CI running README's test command, packaging data."""

from __future__ import annotations

import re
import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def _readme_commands() -> list[str]:
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    setup = text.split("## Set-up", 1)[1].split("\n## ", 1)[0]
    return re.findall(r"```sh\n(.+?)\n```", setup)


def test_readme_opens_with_one_paragraph_stating_the_job() -> None:
    lines = (ROOT / "README.md").read_text(encoding="utf-8").splitlines()
    assert lines[0] == "# afecheck"
    assert lines[1] == ""
    assert "before PCB layout" in lines[2] and len(lines[2]) > 200
    assert lines[3] == ""


def test_readme_has_exactly_two_setup_commands_and_ci_runs_the_test_one() -> None:
    commands = _readme_commands()
    assert len(commands) == 2, commands
    run_sample, run_tests = commands
    assert "afecheck check " in run_sample and " sample_designs/" in run_sample
    sample = next(word for word in run_sample.split() if word.startswith("sample_designs/"))
    assert (ROOT / sample).is_file()
    assert "pytest" in run_tests
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    assert run_tests in ci.splitlines() or any(line.strip() == run_tests for line in ci.splitlines())


def test_ci_fails_when_the_slow_suite_fails() -> None:
    """The slow suite (the 100 000-case fuzz among it) gates CI: its command stands alone under ``set -e``, never
    inside an ``if`` or after ``||`` that would swallow its exit status."""
    lines = [line.strip() for line in (ROOT / ".ci" / "run").read_text(encoding="utf-8").splitlines()]
    assert "set -euo pipefail" in lines
    [slow] = [line for line in lines if "pytest -m slow" in line and not line.startswith("#")]
    assert slow.startswith("python -m pytest -m slow") and not re.search(r"\|\||;|&&|\bif\b|!", slow), slow


def test_wheel_package_list_covers_every_package_folder() -> None:
    """setuptools gets an explicit package list; a new sub-package missing from it would vanish from the wheel."""
    config = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    listed = set(config["tool"]["setuptools"]["packages"])
    found = {
        ".".join(p.parent.relative_to(ROOT).parts)
        for p in (ROOT / "afecheck").rglob("__init__.py")
        if "__pycache__" not in p.parts
    }
    assert found <= listed, sorted(found - listed)
    assert "afecheck._catalogue" in listed


def test_readme_design_example_loads_and_checks_clean(tmp_path: Path) -> None:
    import io

    from afecheck.cli import main

    text = (ROOT / "README.md").read_text(encoding="utf-8")
    example = re.findall(r"```yaml\n(.+?)```", text, re.S)[0]
    path = tmp_path / "readme_example.yaml"
    path.write_text(example, encoding="utf-8")
    out, err = io.StringIO(), io.StringIO()
    assert main(["check", str(path)], stdout=out, stderr=err) == 0, out.getvalue() + err.getvalue()
    assert "0 errors, 0 warnings" in out.getvalue()
