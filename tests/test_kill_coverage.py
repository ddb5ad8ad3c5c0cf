"""coverage.not-evaluated: what the analysis could not compute is reported, and only a single switching stage's
linear-only gaps ("no DC feedback", "no crossover": a comparator has no loop to judge on purpose) are dropped."""

from __future__ import annotations

from fixtures.rules import kit

from afecheck.checks import coverage
from afecheck.engine.finding import Severity

COMPARATOR = {"U1": {**kit.OPAMP, "role": "comparator"}}
U2 = {"U2": {**kit.OPAMP, "pins": {"in+": "A", "in-": "B", "out": "C", "v+": "VCC", "v-": "GND"}}}


def _reasons(loaded, not_evaluated) -> list[str]:
    found = kit.run(coverage, loaded, (), not_evaluated=not_evaluated)
    assert all(f.severity is Severity.WARNING for f in found)
    return [f.ctx["reason"] for f in found]


def test_a_design_wide_gap_with_no_parts_is_reported() -> None:
    # no refs at all (the whole design could not be solved): reported as "design", never looked up as a stage
    loaded = kit.design(COMPARATOR)
    assert _reasons(loaded, (((), "no crossover"),)) == ["no crossover"]
    (f,) = kit.run(coverage, loaded, (), not_evaluated=(((), "singular circuit"),))
    assert f.message == "design not evaluated: singular circuit"
    (f,) = kit.run(coverage, loaded, (), not_evaluated=((("U1", "U2"), "singular circuit"),))
    assert f.message == "U1, U2 not evaluated: singular circuit"


def test_only_a_lone_switching_stage_drops_its_linear_only_gaps() -> None:
    loaded = kit.design(COMPARATOR | U2)
    # U1 alone is a comparator: its missing crossover is by design, the singular solve is not
    assert _reasons(loaded, ((("U1",), "no crossover; singular circuit"),)) == ["singular circuit"]
    assert _reasons(loaded, ((("U1",), "no DC feedback"),)) == []
    # a group of two stages led by the comparator is a composite loop: its missing crossover is a real gap
    assert _reasons(loaded, ((("U1", "U2"), "no crossover"),)) == ["no crossover"]
    # an amplifier's missing crossover is always reported
    assert _reasons(kit.design(), ((("U1",), "no crossover"),)) == ["no crossover"]
