"""afecheck.checks.common, the helpers every rule grades and prints with, against independent definitions.

Printing precision is checked against Python's own ``format`` with three significant figures (the comparison
policy of docs/CONFIDENCE.md: a value within half a unit of the last printed digit of its limit meets it, and
headroom ignores differences below 1e-9 of the quantities involved); resistor arithmetic against Ohm's and
Kirchhoff's laws; the thresholds with a value exactly on each edge and the next float past it.
"""

from __future__ import annotations

import math

import pytest
from fixtures.rules import kit

from afecheck.checks import common
from afecheck.checks.common import (
    design_band,
    finding,
    grade_above,
    grade_below,
    grade_headroom,
    intended_gain,
    noise_floor,
    parallel,
    part_value,
    pct,
    print_tolerance,
    rails_known,
    resistance_at,
    snap,
    stage_role,
    switching,
)
from afecheck.checks.stability import phase_margin
from afecheck.engine.context import Context
from afecheck.engine.finding import Severity

W, E = Severity.WARNING, Severity.ERROR


def test_numbers_print_with_an_si_prefix_and_three_significant_figures() -> None:
    # SI prefixes (BIPM, The International System of Units, 9th ed.); three significant figures, common practice
    assert common.fmt(4.1e6, "Hz") == "4.10 MHz"
    assert common.fmt(47.0, "Ω", 2) == "47 Ω"


def test_percentages_keep_three_significant_figures() -> None:
    # three significant figures (common practice for engineering read-outs), never fewer than zero decimals
    assert pct(0.333333) == "33.3 %"
    assert pct(0.05) == "5.00 %"
    assert pct(0.01) == "1.00 %"
    assert pct(-0.05) == "-5.00 %"
    assert pct(1.5) == "150 %"
    assert pct(12.3456) == "1235 %"
    assert pct(0.0) == "0 %"
    # 0.01 % itself is still printed with fixed decimals; below it the general format takes over
    assert pct(1e-4) == "0.0100 %"
    assert pct(1e-5) == "0.001 %"
    assert pct(math.inf) == "inf %"


@pytest.mark.parametrize("limit", [45.0, 60.0, 0.25, 3.3e-6, 1500.0, -12.0])
@pytest.mark.parametrize("digits", [2, 3])
def test_print_tolerance_is_half_the_last_printed_digit(limit: float, digits: int) -> None:
    # Python's own %g rounding decides what "prints as the limit" means (docs/CONFIDENCE.md)
    tol = print_tolerance(limit, digits)
    shown = f"{limit:.{digits}g}"
    assert f"{limit + 0.98 * tol:.{digits}g}" == shown and f"{limit - 0.98 * tol:.{digits}g}" == shown
    assert f"{limit + 1.02 * tol:.{digits}g}" != shown and f"{limit - 1.02 * tol:.{digits}g}" != shown


def test_print_tolerance_of_zero_or_infinity_is_zero() -> None:
    assert print_tolerance(0.0) == 0.0 and print_tolerance(math.inf) == 0.0 and print_tolerance(-math.inf) == 0.0


def test_noise_floor_is_1e_9_of_the_largest_finite_magnitude() -> None:
    # docs/CONFIDENCE.md: differences below a relative 1e-9 of the quantities involved are round-off
    assert noise_floor(0.5) == pytest.approx(0.5e-9, rel=1e-12)
    assert noise_floor(1.0, -3.0, math.inf, math.nan) == pytest.approx(3e-9, rel=1e-12)
    assert noise_floor() == 0.0 and noise_floor(math.inf) == 0.0
    # snap: exactly on the floor is round-off (zero), the next float above it is a value
    floor = noise_floor(1.0)
    assert snap(floor, 1.0) == 0.0 and snap(-floor, 1.0) == 0.0
    up = math.nextafter(floor, 1.0)
    assert snap(up, 1.0) == up


def test_grade_above_exactly_at_each_printed_limit() -> None:
    # a value that prints as the limit (three significant figures) meets it; the next float past that does not
    warn, err = 10.0, 20.0
    w_edge = warn + print_tolerance(warn)
    e_edge = err + print_tolerance(err)
    assert grade_above(w_edge, warn, err) is None
    assert grade_above(math.nextafter(w_edge, math.inf), warn, err) is W
    assert grade_above(e_edge, warn, err) is W
    assert grade_above(math.nextafter(e_edge, math.inf), warn, err) is E


def test_grade_below_exactly_at_each_printed_limit() -> None:
    # phase margin 60° warning / 45° error (Franco, 4th ed., ch. 8): 59.95° prints as 60.0° and meets it
    warn, err = 60.0, 45.0
    assert print_tolerance(warn) == pytest.approx(0.05) and print_tolerance(err) == pytest.approx(0.05)
    w_edge = warn - print_tolerance(warn)
    e_edge = err - print_tolerance(err)
    assert grade_below(w_edge, warn, err) is None
    assert grade_below(math.nextafter(w_edge, -math.inf), warn, err) is W
    assert grade_below(e_edge, warn, err) is W
    assert grade_below(math.nextafter(e_edge, -math.inf), warn, err) is E


def test_grade_headroom_exactly_at_zero_and_at_the_band() -> None:
    # a 0.1 V band against 5 V rails: margin −5 nV (1e-9 of the 5 V scale) is round-off, one float more is an error
    band, rail = 0.1, 5.0
    floor = noise_floor(rail, band)
    assert floor == pytest.approx(5e-9, rel=1e-12)
    assert grade_headroom(-floor, band, rail) is W
    assert grade_headroom(math.nextafter(-floor, -math.inf), band, rail) is E
    edge = band - print_tolerance(band)
    assert grade_headroom(edge, band, rail) is None
    assert grade_headroom(math.nextafter(edge, -math.inf), band, rail) is W
    # a zero band: only the negative margin matters
    assert grade_headroom(0.0, 0.0, rail) is None


def test_parallel_resistances_by_kirchhoff() -> None:
    # 1/R = Σ 1/Ri (Kirchhoff's current law with Ohm's law): 1 kΩ ‖ 1 kΩ = 500 Ω, 1 kΩ ‖ 4 kΩ = 800 Ω
    assert parallel(1e3, 1e3) == pytest.approx(500.0, rel=1e-15)
    assert parallel(1e3, 4e3) == pytest.approx(800.0, rel=1e-15)
    assert parallel(0.0, 1e3) == 0.0 and parallel(1e3, 0.0) == 0.0
    assert parallel(math.inf, 1e3) == pytest.approx(1e3) and parallel(math.inf) == math.inf and parallel() == math.inf


def _ctx(loaded):
    return Context(loaded).for_rule(phase_margin.META)


def test_finding_caps_an_estimate_at_warning_and_keeps_flags_as_flags() -> None:
    loaded = kit.design()
    base = dict(value=30.0, limit=45.0, unit="°", margin=-15.0, limit_source="x", message="m", fix="f",
                refs=("U1",))
    computed = finding(_ctx(loaded), E, **base)
    assert computed.severity is E and computed.confidence == "computed" and computed.message == "m. Fix: f"
    # resting on an assumed parameter: estimated, so no worse than a warning (docs/CONFIDENCE.md)
    assumed = finding(_ctx(loaded), E, **base, assumed=("U1.gbw", "U1.gbw"))
    assert assumed.severity is W and assumed.confidence == "estimated" and assumed.assumed == ("U1.gbw",)
    assert finding(_ctx(loaded), E, **base, estimated=True).severity is W
    assert finding(_ctx(loaded), Severity.INFO, **base, estimated=True).severity is Severity.INFO
    # numbers become floats; flags and words stay what they are
    f = finding(_ctx(loaded), W, **base, extra={"count": 3, "flag": True, "name": "OUT"})
    assert f.ctx["count"] == 3.0 and type(f.ctx["count"]) is float
    assert f.ctx["flag"] is True and f.ctx["name"] == "OUT"
    assert finding(_ctx(loaded), W, **{**base, "fix": ""}).message == "m"
    # a rule that cannot judge says so as information, with its reason
    gap = common.not_evaluated(_ctx(loaded), "U1 phase margin", "no crossover", refs=("U1",))
    assert gap.severity is Severity.INFO and gap.confidence == "not-evaluated"
    assert gap.message == "U1 phase margin not evaluated: no crossover" and gap.ctx == {"reason": "no crossover"}


def test_part_value_reports_defaults_as_assumed() -> None:
    loaded = kit.design(part={"cmrr": None, "supply_max": None})
    ctx = _ctx(loaded)
    assert part_value(ctx, "U1", "gbw") == (1e6, ())
    value, assumed = part_value(ctx, "U1", "cmrr")  # a defaulted parameter left out: a value, named as assumed
    assert value is not None and value > 0 and assumed == ("U1.cmrr",)
    assert part_value(ctx, "U1", "supply_max") == (None, ())  # no default: nothing to judge with
    assert part_value(ctx, "U9", "gbw") == (None, ())


def test_small_design_queries() -> None:
    comps = {
        "R1": {"kind": "resistor", "value": 1e3, "pins": {"1": "INM", "2": "OUT"}},
        "R2": {"kind": "resistor", "value": 4e3, "pins": {"1": "INM", "2": "GND"}},
        "C1": {"kind": "capacitor", "value": 1e-9, "pins": {"1": "INM", "2": "GND"}},
        "S1": {"kind": "signal_source", "band": [5.0, 2e3], "pins": {"p": "INP", "n": "GND"}},
        "U2": {**kit.OPAMP, "role": "schmitt", "intended_gain": -2.0,
               "pins": {"in+": "A", "in-": "B", "out": "C", "v+": "VCC", "v-": "FLOAT"}},
    }
    loaded = kit.design(comps, signals={"SIG": {"band": [10.0, 1e3]}})
    # Rf ‖ Rg at the inverting input: 1 kΩ ‖ 4 kΩ = 800 Ω (the capacitor is not a resistance)
    assert resistance_at(loaded, "INM") == pytest.approx(800.0)
    assert design_band(loaded) == (5.0, 2e3)
    assert design_band(kit.design(signals={"SIG": {"band": [10.0, 1e3]}})) == (10.0, 1e3)
    assert design_band(kit.design()) is None
    ctx = _ctx(loaded)
    assert rails_known(ctx, "U1") and not rails_known(ctx, "U2") and not rails_known(ctx, "R1")
    assert not rails_known(ctx, "U9")
    assert (stage_role(loaded, "U1"), stage_role(loaded, "U2"), stage_role(loaded, "U9")) == (
        "amplifier", "schmitt", "amplifier")
    assert switching(loaded, "U2") and not switching(loaded, "U1")
    assert intended_gain(loaded, "U2") == -2.0 and intended_gain(loaded, "U1") is None
    assert common.attached(loaded, "INM", "capacitor") == [("C1", "GND")]
    assert sorted(r for r, _ in common.attached(loaded, "INM")) == ["C1", "R1", "R2"]


def test_stage_assumptions_are_named_by_refdes() -> None:
    # the analysis names its own assumptions by parameter; a finding names them <refdes>.<parameter> (as part_value)
    st = kit.stage(assumed=("gbw", "U2.cmrr"))
    assert common.stage_assumed(st) == ("U1.gbw", "U2.cmrr")
