"""tests/conftest.py: under CI a missing ngspice, schema or browser fails the run instead of skipping quietly."""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

HERE = Path(__file__).parent
ROOT = HERE.parent


def _pytest(args: list[str], cwd: Path, env: dict[str, str]) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "pytest", "-p", "no:cacheprovider", *args], cwd=cwd, env=env,
                          capture_output=True, text=True, timeout=300)


def _env(ci: bool, path: str | None = None) -> dict[str, str]:
    env = {k: v for k, v in os.environ.items() if k != "CI"}
    if ci:
        env["CI"] = "true"
    if path is not None:
        env["PATH"] = path
    return env


@pytest.fixture()
def sandbox(tmp_path: Path) -> Path:
    """A folder with a copy of the real conftest and three tests that skip for want of an external."""
    shutil.copy(HERE / "conftest.py", tmp_path / "conftest.py")
    (tmp_path / "pytest.ini").write_text("[pytest]\nmarkers =\n    browser: b\n    ngspice: n\n", encoding="utf-8")
    (tmp_path / "test_externals.py").write_text(
        "import pytest\n"
        "@pytest.mark.browser\n"
        "def test_needs_browser():\n    pytest.skip('no chromium here')\n"
        "def test_needs_schema():\n    pytest.skip('official SARIF 2.1.0 schema not found')\n"
        "def test_other_skip():\n    pytest.skip('not on this platform')\n",
        encoding="utf-8")
    return tmp_path


def test_external_skips_fail_under_ci_with_their_reason(sandbox: Path) -> None:
    proc = _pytest(["-rs", "test_externals.py"], sandbox, _env(ci=True))
    assert proc.returncode == 1, proc.stdout
    assert "2 failed, 1 skipped" in proc.stdout, proc.stdout
    assert "CI is set, so this skip is a failure: no web browser" in proc.stdout
    assert "SARIF 2.1.0 schema" in proc.stdout
    assert "test_externals.py:8: not on this platform" in proc.stdout  # -rs prints the reason


def test_external_skips_stay_skips_without_ci(sandbox: Path) -> None:
    proc = _pytest(["-rs", "test_externals.py"], sandbox, _env(ci=False))
    assert proc.returncode == 0, proc.stdout
    assert "3 skipped" in proc.stdout
    assert "no chromium here" in proc.stdout  # -rs prints every reason


@pytest.mark.slow
def test_ci_without_ngspice_on_path_stops_the_run_clearly(tmp_path: Path) -> None:
    # PATH trimmed to a folder holding only a shell: the real ngspice comparisons would skip; under CI they must fail
    bare = tmp_path / "bin"
    bare.mkdir()
    (bare / "sh").symlink_to(shutil.which("sh") or "/bin/sh")
    proc = _pytest(["tests/test_spice_export.py", "tests/reference"], ROOT, _env(ci=True, path=str(bare)))
    assert proc.returncode == 3, proc.stdout + proc.stderr
    out = proc.stdout + proc.stderr
    assert "CI is set but ngspice is not on PATH" in out
    assert "install ngspice or unset CI" in out
    without_ci = _pytest(["tests/test_spice_export.py"], ROOT, _env(ci=False, path=str(bare)))
    assert without_ci.returncode == 0 and "skipped" in without_ci.stdout, without_ci.stdout
