"""Mutation floor (slow, in CI's `pytest -m slow`): a seeded sample of mutants of afecheck/analysis and
afecheck/checks must keep being killed by the tests.

The runner (tests/tools/mutate.py, docs/MUTATION.md) records once which test runs which line, then runs each
mutant against only the tests that reach it, so CI can afford SAMPLE mutants in a few minutes on two cores.
The sample is the SAMPLE mutants of smallest seeded hash of a key without line numbers, so it moves only where the
code under test is edited. Recorded equivalents (tests/tools/equivalent_mutants.txt) are skipped and left out of
the rate; the rest must be killed at least at FLOOR. A fall below the floor names its survivors, each to be killed
by a new test or recorded as equivalent with its reason.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
SAMPLE = 100  # 62 s coverage pass plus 91 mutant runs at 1.3 s on a quiet two-core machine, 3 min (2026-12-03)
FLOOR = 0.95  # 93/93 = 100 % on main of 2026-12-03 20:58 UTC, 7 equivalent left out (docs/MUTATION.md); issue: 90 %


@pytest.mark.slow
def test_sampled_mutants_are_killed_at_least_at_the_floor() -> None:
    cmd = [sys.executable, "tests/tools/mutate.py", "--sample", str(SAMPLE), "--seed", "18", "--floor", str(FLOOR)]
    proc = subprocess.run(cmd, cwd=ROOT, capture_output=True, text=True, timeout=1800)
    assert proc.returncode == 0, proc.stdout[-4000:] + proc.stderr[-2000:]
    assert "kill rate" in proc.stdout
