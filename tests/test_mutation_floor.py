"""Mutation floor (slow, in CI's `pytest -m slow`): a fixed-seed sample of mutants of afecheck/analysis and
afecheck/checks must keep being killed by the tests.

The whole run (docs/MUTATION.md) takes hours on two shared cores, so CI runs the first 16 mutants of the
documented 120-mutant sample (seed 18): recorded equivalents (tests/tools/equivalent_mutants.txt) are skipped and
left out of the rate, the rest must be killed at least at FLOOR. The sample moves when the code under test
changes (mutant ids carry line numbers); a fall below the floor names its survivors, each to be killed by a new
test or recorded as equivalent with its reason.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
FLOOR = 0.55  # 9/16 = 56.2 % on these 16 in .ci/run on 2026-12-03 (docs/MUTATION.md, "In CI"); issue 18 asks 90 %
LIMIT = 16


@pytest.mark.slow
def test_sampled_mutants_are_killed_at_least_at_the_floor() -> None:
    cmd = [sys.executable, "tests/tools/mutate.py", "--sample", "120", "--seed", "18", "--limit", str(LIMIT),
           "--floor", str(FLOOR)]
    proc = subprocess.run(cmd, cwd=ROOT, capture_output=True, text=True, timeout=1800)
    assert proc.returncode == 0, proc.stdout[-4000:] + proc.stderr[-2000:]
    assert "kill rate" in proc.stdout
