"""The long hostile-design run: the strategies of tests/test_fuzz.py (mutated samples, random designs, damaged
text and bytes), many thousands of examples, each through ``afecheck check --format json`` in-process.

Marked slow (CI runs it). Every example must end in findings or a positioned input error: no exception, no
internal-error finding, no NaN/inf in the report, under 10 s (tools/fuzz_inputs.Clock); each test records its
case count and slowest case, printed at the end of the run (tests/conftest.py). The examples are the same on every
run (derandomised) so that the gate is reproducible; AFECHECK_FUZZ_RANDOM=1 draws fresh ones to hunt for defects.
tests/test_fuzz_inputs.py runs the 100 000 cases over every input kind.
"""

from __future__ import annotations

import os
import time
from collections.abc import Callable

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from tools.fuzzing import damaged_bytes, damaged_texts, mutated_samples, random_designs, run_check

pytestmark = pytest.mark.slow

FRESH = os.environ.get("AFECHECK_FUZZ_RANDOM", "") not in ("", "0")


def _long_run(strategy: st.SearchStrategy, examples: int, record: Callable[[str, str], None]) -> None:
    """``examples`` cases of ``strategy`` through :func:`run_check`; records the count and the slowest case."""
    times: list[float] = []

    @settings(max_examples=examples, deadline=None, derandomize=not FRESH, database=None,
              suppress_health_check=list(HealthCheck))
    @given(strategy)
    def one(case: tuple[str | bytes, str]) -> None:
        start = time.process_time()
        run_check(*case)
        times.append(time.process_time() - start)

    one()
    mean_ms = sum(times) / len(times) * 1000
    record("figures", f"{len(times)} cases, slowest {max(times):.2f} s of processor time, mean {mean_ms:.0f} ms")
    assert len(times) >= examples * 0.9  # hypothesis may stop early only when it runs out of distinct cases


def test_mutated_samples_never_crash_long(record_property) -> None:
    _long_run(mutated_samples(), 3000, record_property)


def test_random_designs_never_crash_long(record_property) -> None:
    _long_run(random_designs(), 2000, record_property)


def test_damaged_text_never_crashes_long(record_property) -> None:
    _long_run(damaged_texts(), 1500, record_property)


def test_damaged_bytes_never_crash_long(record_property) -> None:
    _long_run(damaged_bytes(), 1000, record_property)
