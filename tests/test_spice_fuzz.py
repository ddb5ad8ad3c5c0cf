"""Damaged netlists never produce a traceback: findings (exit 0/1) or an input error with file and line (exit 2)."""

from __future__ import annotations

import io
import re
import tempfile
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from afecheck.cli import main

ROOT = Path(__file__).resolve().parent.parent
SAMPLE = (ROOT / "sample_designs" / "hive_scale.cir").read_text(encoding="utf-8")
INTENT = (ROOT / "sample_designs" / "hive_scale.intent.yaml").read_text(encoding="utf-8")
PIECES = ["{", "}", "'", "(", ")", "=", "+", ";", "$", "*", ".subckt X a b", ".ends", ".param q={q}", "X1 a b X",
          "1e999", "4k7", "-1", "0", "params:", ".include hive.cir", ".lib hive.cir s", ".control", ".endc",
          "\x00", "é", "\t", "\n+ ", "\n", "R", "V", "XU1", "{1/0}", "{sqrt(-1)}", "{", "{{1}}", "m=0", "AC", "SIN("]
FAST = settings(max_examples=40, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
LONG = settings(max_examples=1500, deadline=None, suppress_health_check=[HealthCheck.too_slow])


@st.composite
def damaged_netlists(draw: st.DrawFn) -> str:
    lines = SAMPLE.splitlines()
    for _ in range(draw(st.integers(1, 4))):
        i = draw(st.integers(0, len(lines) - 1))
        action = draw(st.sampled_from(["insert", "drop", "repeat", "splice"]))
        if action == "drop" and len(lines) > 1:
            lines.pop(i)
        elif action == "repeat":
            lines.insert(i, lines[i])
        elif action == "insert":
            lines.insert(i, " ".join(draw(st.lists(st.sampled_from(PIECES), min_size=1, max_size=5))))
        else:
            line = lines[i]
            at = draw(st.integers(0, len(line)))
            lines[i] = line[:at] + draw(st.sampled_from(PIECES)) + line[at:]
    return "\n".join(lines) + "\n"


def _never_crashes(text: str) -> None:
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        (folder / "hive.cir").write_text(text, encoding="utf-8", errors="surrogatepass")
        (folder / "hive.intent.yaml").write_text(INTENT, encoding="utf-8")
        out, err = io.StringIO(), io.StringIO()
        code = main(["check", str(folder / "hive.cir"), "--intent", str(folder / "hive.intent.yaml")], out, err)
        assert code in (0, 1, 2), err.getvalue()
        if code == 2:
            first = err.getvalue().splitlines()[0]
            assert re.match(r"error: \S+(:\d+)?", first), first


@FAST
@given(damaged_netlists())
def test_damaged_netlists_never_crash(text: str) -> None:
    _never_crashes(text)


@pytest.mark.slow
@LONG
@given(damaged_netlists())
def test_many_damaged_netlists_never_crash(text: str) -> None:
    _never_crashes(text)
