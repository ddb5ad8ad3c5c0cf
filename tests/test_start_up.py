"""What the command line imports and sets up before any work: commands that solve no circuit never import numpy,
pydantic's plugin discovery is skipped unless the user asked for it, and the collector tuning is put back."""

from __future__ import annotations

import ast
import gc
import io
import os
import subprocess
import sys
from pathlib import Path

import pytest

from afecheck import cli

ROOT = Path(__file__).resolve().parents[1]
SAMPLE = ROOT / "sample_designs" / "soil_probe_reader.yaml"

CHILD = """
import io, sys
from afecheck.cli import main
seen = []
for args in {cases!r}:
    status = main(args, stdout=io.StringIO(), stderr=io.StringIO())
    seen.append((args, status, "numpy" in sys.modules))
print(repr(seen))
"""


def test_commands_that_solve_nothing_never_import_numpy(tmp_path: Path) -> None:
    bad = tmp_path / "bad.yaml"
    bad.write_text('afecheck: 1\nname: bad\ncomponents:\n  R1: {kind: resistor, value: -5, pins: {"1": a, "2": b}}\n',
                   encoding="utf-8")
    cases = [["--help"], ["rules"], ["rules", "stability.phase-margin"], ["schema"], ["parts"],
             ["check", str(bad)], ["check", "--fail-on", "never", str(SAMPLE)]]
    proc = subprocess.run([sys.executable, "-c", CHILD.format(cases=cases)], capture_output=True, text=True,
                          timeout=120, cwd=tmp_path)
    assert proc.returncode == 0, proc.stderr
    seen = ast.literal_eval(proc.stdout.strip().splitlines()[-1])
    assert [status for _, status, _ in seen] == [0, 0, 0, 0, 0, 2, 0]
    assert [numpy for _, _, numpy in seen] == [False] * 6 + [True]  # the last one solves: numpy, as it must


@pytest.mark.parametrize(("given", "expected"), [(None, "__all__"), ("some_plugin", "some_plugin")])
def test_plugin_discovery_is_skipped_unless_the_user_chose(monkeypatch: pytest.MonkeyPatch, given: str | None,
                                                           expected: str) -> None:
    if given is None:
        monkeypatch.delenv(cli.PLUGINS_VARIABLE, raising=False)
    else:
        monkeypatch.setenv(cli.PLUGINS_VARIABLE, given)
    assert cli.main(["--version"], stdout=io.StringIO(), stderr=io.StringIO()) == 0
    assert os.environ[cli.PLUGINS_VARIABLE] == expected


def test_collector_thresholds_are_raised_while_running_and_put_back(monkeypatch: pytest.MonkeyPatch) -> None:
    before = gc.get_threshold()
    seen: list[tuple[int, int, int]] = []

    class _Spy:
        def run(self, args: object, stdout: object, stderr: object) -> int:
            seen.append(gc.get_threshold())
            return 0

    original = cli.build_parser
    monkeypatch.setattr(cli, "build_parser", lambda argv: (original([])[0], _Spy()))
    assert cli.main(["rules"], stdout=io.StringIO(), stderr=io.StringIO()) == 0
    assert seen and seen[0][0] == max(before[0], cli.START_UP_THRESHOLD) and seen[0][1:] == before[1:]
    assert gc.get_threshold() == before
