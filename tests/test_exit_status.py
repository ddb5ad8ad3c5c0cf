"""Exit statuses a CI gate can tell apart: a bug inside afecheck is one line on stderr and status 3, never 1 (the
status of findings) and never a traceback unless AFECHECK_DEBUG asks for it; README and --help list every status."""

from __future__ import annotations

import io
import re
from pathlib import Path

import pytest

from afecheck.cli import DEBUG_VARIABLE, EXIT_INTERNAL, EXIT_STATUSES, main

ROOT = Path(__file__).resolve().parents[1]
SAMPLE = str(ROOT / "sample_designs" / "soil_probe_reader.yaml")


def _run(*argv: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    return main(list(argv), out, err), out.getvalue(), err.getvalue()


def _broken(exc: BaseException):
    def run(*_args, **_kwargs):
        raise exc
    return run


@pytest.mark.parametrize(("module", "argv"), [
    ("afecheck.commands.check", ("check", SAMPLE)),
    ("afecheck.commands.spice", ("spice", SAMPLE)),
    ("afecheck.commands.rules", ("rules",)),
])
def test_an_internal_failure_is_one_line_and_status_3(monkeypatch, module, argv):
    monkeypatch.delenv(DEBUG_VARIABLE, raising=False)
    monkeypatch.setattr(f"{module}.run", _broken(ZeroDivisionError("float division\nby zero")))
    code, out, err = _run(*argv)
    assert code == EXIT_INTERNAL == 3 and out == ""
    assert err.count("\n") == 1 and "Traceback" not in err
    assert err.startswith("afecheck: internal error: ZeroDivisionError: float division by zero (")


def test_a_failure_deep_in_a_reporter_is_status_3(monkeypatch):
    monkeypatch.delenv(DEBUG_VARIABLE, raising=False)
    monkeypatch.setattr("afecheck.report.render", _broken(KeyError("sarif")))
    code, _, err = _run("check", SAMPLE, "--format", "sarif")
    assert code == 3 and err.startswith("afecheck: internal error: KeyError: 'sarif'")


def test_debug_variable_lets_the_traceback_through(monkeypatch):
    monkeypatch.setenv(DEBUG_VARIABLE, "1")
    monkeypatch.setattr("afecheck.commands.rules.run", _broken(RuntimeError("boom")))
    with pytest.raises(RuntimeError, match="boom"):
        _run("rules")


def test_every_status_is_documented_in_readme_and_help(capsys):
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    code, _, _ = _run("--help")  # argparse prints help on the process's own stdout
    out = capsys.readouterr().out
    assert code == 0 and "exit status:" in out
    for status, _meaning in EXIT_STATUSES:
        assert re.search(rf"^\s+{status}\s+\S", out, re.M), status
        assert re.search(rf"\| `{status}` \|", readme), status
