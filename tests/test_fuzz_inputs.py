"""Fuzzing every input kind (design, intent, part library, config, rule set, waivers, baseline, CLI arguments)
through the command line and the library readers with our own generators (tests/tools/fuzz_inputs.py).

Default run: a fixed-seed sample of a few hundred cases. ``pytest -m slow``: at least 100 000 cases (mostly
library readers, which are cheap, plus thousands of whole command-line runs); AFECHECK_FUZZ_CASES and
AFECHECK_FUZZ_SEED change the count and seed.
"""

from __future__ import annotations

import os
import random
import time

import pytest
from tools.fuzz_inputs import (
    BASELINE_SEED,
    CONFIG_SEED,
    DESIGN_SEEDS,
    INTENT_SEED,
    LIBRARY_SEED,
    RULESET_SEED,
    WAIVER_SEED,
    make_case,
    mutate_text,
    run_cli_case,
    run_library_case,
)

SEEDS = {"design": DESIGN_SEEDS[0], "intent": INTENT_SEED, "library": LIBRARY_SEED, "config": CONFIG_SEED,
         "ruleset": RULESET_SEED, "waivers": WAIVER_SEED, "baseline": BASELINE_SEED}


@pytest.fixture()
def folder(tmp_path):
    (tmp_path / ".git").mkdir()  # config discovery stops here
    return tmp_path


def _library_cases(folder, rng: random.Random, count: int) -> int:
    kinds = sorted(SEEDS)
    (folder / "design.yaml").write_text(DESIGN_SEEDS[0].split("\nintent:")[0], encoding="utf-8")
    for i in range(count):
        kind = kinds[i % len(kinds)]
        run_library_case(folder, kind, mutate_text(rng, SEEDS[kind], as_json=kind == "baseline"))
    return count


def _cli_cases(folder, rng: random.Random, count: int) -> int:
    for i in range(count):
        _, files, argv = make_case(rng)
        run_cli_case(folder, files, argv, fmt="json" if i % 3 else "text")
    return count


def test_library_readers_survive_a_sample_of_hostile_files(folder):
    _library_cases(folder, random.Random(1), 300)


def test_command_line_survives_a_sample_of_hostile_inputs(folder):
    _cli_cases(folder, random.Random(2), 40)


def test_every_seed_is_itself_valid(folder):
    # the generators start from valid files, so that an edit, not the seed, is what is under test
    assert run_cli_case(folder, {"design.yaml": DESIGN_SEEDS[0].split("\nintent:")[0], "w.yaml": WAIVER_SEED,
                                 "precision.yaml": RULESET_SEED, ".afecheck.yaml": CONFIG_SEED}, [])[0] in (0, 1)
    for kind in ("library", "ruleset", "waivers", "config"):
        run_library_case(folder, kind, SEEDS[kind])


@pytest.mark.slow
def test_one_hundred_thousand_hostile_inputs(folder):
    total = int(os.environ.get("AFECHECK_FUZZ_CASES", "100000"))
    rng = random.Random(int(os.environ.get("AFECHECK_FUZZ_SEED", "20261203")))
    start = time.perf_counter()
    cli = _cli_cases(folder, rng, total // 25)
    lib = _library_cases(folder, rng, total - cli)
    took = time.perf_counter() - start
    print(f"fuzz: {cli} command-line cases and {lib} library cases in {took:.0f} s")
    assert cli + lib >= total
