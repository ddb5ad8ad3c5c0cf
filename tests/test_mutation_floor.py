"""Mutation floor (slow, in CI's `pytest -m slow`): a fixed-seed sample of mutants of afecheck/analysis and
afecheck/checks must keep being killed by the tests.

The whole run (docs/MUTATION.md) takes hours on two shared cores, so CI runs the first 40 mutants of the
documented 200-mutant sample (seed 18), which fits in about ten minutes; the floor is the rate measured on those 40
with the slack docs/MUTATION.md gives (the sample moves when the code under test changes).
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
FLOOR = 0.55  # measured 23/40 = 57.5 % on 2026-12-03 after the budget, sensor and SPICE modules joined the
# mutated files (35/40 = 87.5 % before); raise it as survivors are killed (docs/MUTATION.md)


@pytest.mark.slow
def test_sampled_mutants_are_killed_at_least_at_the_floor() -> None:
    cmd = [sys.executable, "tests/tools/mutate.py", "--sample", "200", "--seed", "18", "--limit", "40",
           "--floor", str(FLOOR)]
    proc = subprocess.run(cmd, cwd=ROOT, capture_output=True, text=True, timeout=1800)
    assert proc.returncode == 0, proc.stdout[-4000:] + proc.stderr[-2000:]
    assert "kill rate" in proc.stdout
