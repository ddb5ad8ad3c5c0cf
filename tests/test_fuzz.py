"""Hostile input never produces a traceback: findings (exit 0/1) or an input error naming file and line (exit 2).

Default run: a few hundred hypothesis examples over mutated samples, random designs and damaged text;
tests/test_fuzz_long.py runs many thousands under the ``slow`` mark.
"""

from __future__ import annotations

from hypothesis import HealthCheck, given, settings
from tools.fuzzing import damaged_bytes, damaged_texts, mutated_samples, random_designs, run_check

FAST = settings(max_examples=100, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])


@FAST
@given(mutated_samples())
def test_mutated_samples_never_crash(case: tuple[str, str]) -> None:
    run_check(*case)


@settings(FAST, max_examples=80)
@given(random_designs())
def test_random_designs_never_crash(case: tuple[str, str]) -> None:
    run_check(*case)


@settings(FAST, max_examples=60)
@given(damaged_texts())
def test_damaged_text_never_crashes(case: tuple[str, str]) -> None:
    run_check(*case)


@settings(FAST, max_examples=40)
@given(damaged_bytes())
def test_damaged_bytes_never_crash(case: tuple[bytes, str]) -> None:
    run_check(*case)


def test_empty_and_non_mapping_files_are_input_errors() -> None:
    # common practice: a file that is not a mapping of sections is refused with its place named
    for text in ("", "---\n", "[]\n", "42\n", "just words\n", "afecheck: 1\ncomponents: [1, 2]\n", "{\n"):
        rc, _, _ = run_check(text, ".yaml")
        assert rc == 2, text


def test_design_with_only_rails_is_not_a_crash() -> None:
    rc, _, _ = run_check("afecheck: 1\nrails:\n  VCC: {voltage: 5 V}\n", ".yaml")
    assert rc == 0  # nothing to review is a clean review


def test_op_amp_cycle_is_not_a_crash() -> None:
    text = (
        "afecheck: 1\nrails:\n  VCC: {voltage: 5 V}\ncomponents:\n"
        "  U1: {kind: opamp, part: AFE-GP1, pins: {in+: B, in-: A, out: A, v+: VCC, v-: GND}}\n"
        "  U2: {kind: opamp, part: AFE-GP1, pins: {in+: A, in-: B, out: B, v+: VCC, v-: GND}}\n"
    )
    rc, _, _ = run_check(text, ".yaml")
    assert rc in (0, 1, 2)
