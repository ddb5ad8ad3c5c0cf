"""Fuzzing every input kind (design, intent, part library, config, rule set, waivers, baseline, CLI arguments)
through the command line and the library readers with our own generators (tests/tools/fuzz_inputs.py).

Default run: a fixed-seed sample of a few hundred cases. ``pytest -m slow``: at least 100 000 cases in four parts
(mostly library readers, which are cheap, plus 4 000 whole command-line runs over all eight kinds), each part's
counts and slowest case printed at the end of the run; AFECHECK_FUZZ_CASES and AFECHECK_FUZZ_SEED change the count
and seed.
"""

from __future__ import annotations

import os
import random
import re
import time
from collections import Counter
from pathlib import Path

import pytest
from tools.fuzz_inputs import (
    BASELINE_SEED,
    CONFIG_SEED,
    DESIGN_SEEDS,
    INTENT_SEED,
    KINDS,
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


class Tally:
    """Cases run, by route and kind, and the slowest one (printed by the long run)."""

    def __init__(self) -> None:
        self.counts: Counter[tuple[str, str]] = Counter()
        self.slowest = (0.0, "")

    def add(self, route: str, kind: str, took: float) -> None:
        self.counts[(route, kind)] += 1
        if took > self.slowest[0]:
            self.slowest = (took, f"{route} {kind}")

    def total(self, route: str | None = None) -> int:
        return sum(n for (r, _), n in self.counts.items() if route in (None, r))

    def kinds(self) -> set[str]:
        return {k for _, k in self.counts}


def _library_cases(folder, rng: random.Random, count: int, tally: Tally) -> None:
    kinds = sorted(SEEDS)
    (folder / "design.yaml").write_text(DESIGN_SEEDS[0].split("\nintent:")[0], encoding="utf-8")
    for i in range(count):
        kind = kinds[i % len(kinds)]
        seed = re.sub(r"^intent:.*$", "", rng.choice(DESIGN_SEEDS), flags=re.M) if kind == "design" else SEEDS[kind]
        took = run_library_case(folder, kind, mutate_text(rng, seed, as_json=kind == "baseline"))
        tally.add("library", kind, took)


def _cli_cases(folder, rng: random.Random, count: int, tally: Tally) -> None:
    for i in range(count):
        kind, files, argv = make_case(rng)
        _, took = run_cli_case(folder, files, argv, fmt="json" if i % 3 else "text")
        tally.add("command line", kind, took)


def test_library_readers_survive_a_sample_of_hostile_files(folder):
    tally = Tally()
    _library_cases(folder, random.Random(1), 300, tally)
    assert tally.kinds() == set(SEEDS)


def test_command_line_survives_a_sample_of_hostile_inputs(folder):
    tally = Tally()
    _cli_cases(folder, random.Random(2), 40, tally)
    assert tally.kinds() == set(KINDS)


def test_command_line_cases_write_only_inside_their_folder(folder):
    # the generator names outputs such as /etc/passwd or ../../x.yaml, and CI often runs as root
    design = {"design.yaml": DESIGN_SEEDS[0].split("\nintent:")[0]}
    probe = Path("/etc/afecheck-fuzz-probe")
    for target, lands in ((str(probe), folder / "etc" / "afecheck-fuzz-probe"), ("../../x.yaml", folder / "x.yaml")):
        (folder / "etc").mkdir(exist_ok=True)
        run_cli_case(folder, design, ["--no-config", "--output", target])
        assert lands.is_file() and not probe.exists()


def test_every_seed_is_itself_valid(folder):
    # the generators start from valid files, so that an edit, not the seed, is what is under test
    assert run_cli_case(folder, {"design.yaml": DESIGN_SEEDS[0].split("\nintent:")[0], "w.yaml": WAIVER_SEED,
                                 "precision.yaml": RULESET_SEED, ".afecheck.yaml": CONFIG_SEED}, [])[0] in (0, 1)
    for kind in ("library", "ruleset", "waivers", "config"):
        run_library_case(folder, kind, SEEDS[kind])


TOTAL = int(os.environ.get("AFECHECK_FUZZ_CASES", "100000"))
PARTS = 4  # the long run in four parts, each its own seed and every kind, so that two xdist workers share it


@pytest.mark.slow
@pytest.mark.parametrize("part", range(PARTS))
def test_one_hundred_thousand_hostile_inputs(folder, record_property, part):
    count = -(-TOTAL // PARTS)  # PARTS x count >= TOTAL, 100 000 by default
    rng = random.Random(int(os.environ.get("AFECHECK_FUZZ_SEED", "20261203")) + part)
    tally = Tally()
    start = time.perf_counter()
    _cli_cases(folder, rng, count // 25, tally)
    _library_cases(folder, rng, count - count // 25, tally)
    took = time.perf_counter() - start
    by_kind = ", ".join(f"{k} {sum(n for (_, kk), n in tally.counts.items() if kk == k)}" for k in KINDS)
    record_property("figures", f"part {part + 1} of {PARTS}: {tally.total()} cases in {took:.0f} s: "
                    f"{tally.total('command line')} through the command line, {tally.total('library')} through the "
                    f"library readers; by kind: {by_kind}; slowest case {tally.slowest[0]:.2f} s of processor time "
                    f"({tally.slowest[1]})")
    assert tally.total() == count and PARTS * count >= TOTAL and tally.kinds() == set(KINDS)
    assert tally.slowest[0] < 10  # each case also asserts it on its own
