"""The long hostile-input run: the same strategies as tests/test_fuzz.py, many thousands of examples.

Marked slow (CI runs it; a few minutes at most). Counts: 3000 mutated samples, 2000 random designs,
1500 damaged texts, 1000 damaged byte strings.
"""

from __future__ import annotations

import pytest
from hypothesis import HealthCheck, given, settings
from tools.fuzzing import damaged_bytes, damaged_texts, mutated_samples, random_designs, run_check

LONG = settings(max_examples=3000, deadline=None, derandomize=False, database=None,
                suppress_health_check=[HealthCheck.too_slow])

pytestmark = pytest.mark.slow


@LONG
@given(mutated_samples())
def test_mutated_samples_never_crash_long(case: tuple[str, str]) -> None:
    run_check(*case)


@settings(LONG, max_examples=2000)
@given(random_designs())
def test_random_designs_never_crash_long(case: tuple[str, str]) -> None:
    run_check(*case)


@settings(LONG, max_examples=1500)
@given(damaged_texts())
def test_damaged_text_never_crashes_long(case: tuple[str, str]) -> None:
    run_check(*case)


@settings(LONG, max_examples=1000)
@given(damaged_bytes())
def test_damaged_bytes_never_crash_long(case: tuple[bytes, str]) -> None:
    run_check(*case)
