"""Thermocouple cold-junction error: the Seebeck coefficient against the ITS-90 tables, the error by hand, the
DC-error term through the circuit, and rule dc-accuracy.cold-junction at its exact limits.

Table values: NIST Monograph 175 (G. W. Burns et al., 1993), "Temperature-Electromotive Force Reference Functions
and Tables for the Letter-Designated Thermocouple Types Based on the ITS-90", mV with the reference junction at
0 °C, printed to 1 µV (values read from memory of those tables). A printed value is within ±0.5 µV of the
function, so a difference of two over an interval of w °C is the mean slope over it to ±1 µV / w; over a
symmetric interval that mean is the slope at its middle to within w²/24·|E'''|, under 0.01 µV/°C for these types
near room temperature and at 400 °C (E''' of order 1e-3 µV/°C³).
"""

from __future__ import annotations

import math
import re
from pathlib import Path

import pytest
import yaml

from afecheck.analysis.dc_error import analyse_dc_error
from afecheck.checks.common import noise_floor, print_tolerance
from afecheck.checks.dc_accuracy import cold_junction
from afecheck.engine.context import Context
from afecheck.engine.finding import Severity
from afecheck.model.load import load_design
from afecheck.model.schema import Thermocouple
from afecheck.sensors import thermocouple as tc
from afecheck.sensors.cold_junction import cold_junction_error
from afecheck.sensors.expand import thermocouple_range_v
from afecheck.sensors.measurand import net_scale
from tests.ngspice_harness import needs_ngspice, run_ngspice

ROOT = Path(__file__).resolve().parents[1]
KILN = ROOT / "sample_designs" / "kiln_thermocouple.yaml"
RULE = ROOT / "rules" / "dc-accuracy" / "cold-junction"

# (type, low °C, E(low) mV, high °C, E(high) mV) from the Monograph 175 tables
TABLE_INTERVALS = [
    ("K", -10, -0.392, 10, 0.397),  # slope at 0 °C: 0.789 mV / 20 °C = 39.45 µV/°C
    ("K", 20, 0.798, 30, 1.203),  # at 25 °C: 40.5 µV/°C
    ("K", 25, 1.000, 26, 1.041),  # E(T+1) − E(T): 41 µV at 25.5 °C, ±1 µV
    ("K", 390, 15.975, 410, 16.820),  # at 400 °C: 42.25 µV/°C
    ("K", 400, 16.397, 401, 16.439),  # E(T+1) − E(T): 42 µV at 400.5 °C, ±1 µV
    ("J", 40, 2.059, 60, 3.116),  # at 50 °C: 52.85 µV/°C
]


@pytest.mark.parametrize(("kind", "lo", "e_lo", "hi", "e_hi"), TABLE_INTERVALS,
                         ids=[f"{k}{lo}-{hi}" for k, lo, _, hi, _ in TABLE_INTERVALS])
def test_seebeck_coefficient_matches_the_table_differences(kind: str, lo: float, e_lo: float, hi: float,
                                                           e_hi: float) -> None:
    width = hi - lo
    from_table = (e_hi - e_lo) / width * 1000.0  # µV/°C, mean over the interval
    tolerance = 1.0 / width + 0.01  # printing (±0.5 µV at each end) plus curvature
    assert tc.seebeck_uv_per_c(kind, 0.5 * (lo + hi)) == pytest.approx(from_table, abs=tolerance)


def test_seebeck_coefficient_is_the_derivative_of_the_reference_function() -> None:
    # analytic derivative against the function's own central difference, across the piece boundary of type K
    for kind in tc.TYPES:
        for t in (-100.0, -0.5, 0.5, 25.0, 126.9686, 350.0):
            h = 1e-3
            numeric = (tc.emf_mv(kind, t + h) - tc.emf_mv(kind, t - h)) / (2 * h) * 1000.0
            assert tc.seebeck_uv_per_c(kind, t) == pytest.approx(numeric, rel=1e-6)


def _probe(**fields) -> Thermocouple:
    spec = {"kind": "thermocouple", "type": "K", "hot": (400.0, 400.0), "cold": (25.0, 25.0),
            "pins": {"p": "TCP", "n": "GND"}, **fields}
    return Thermocouple.model_validate(spec)


def test_compensated_probe_at_400_c_worked_by_hand() -> None:
    """A type K probe at 400 °C, terminals at 25 °C, compensation good to ±0.5 °C. From the tables:
    S(25) = (1.203 − 0.798) mV / 10 °C = 40.5 µV/°C and S(400) = (16.820 − 15.975) mV / 20 °C = 42.25 µV/°C.
    The correction is off by 0.5 × 40.5 = 20.25 µV at the terminals, which the hot junction reads as
    20.25 / 42.25 = 0.479 °C, i.e. 0.5·S(25)/S(400)."""
    cj = cold_junction_error("TC1", _probe(compensated=True, cjc_accuracy=0.5))
    # each table slope is good to ±0.1 µV/°C (1 µV over 10 °C) and ±0.05 µV/°C: 0.4 % together
    assert cj.emf_v == pytest.approx(20.25e-6, abs=0.05e-6)
    assert cj.at_hot_c == pytest.approx(0.479, rel=4e-3)
    # first order against the exact reading: the table inverted at E(400) − E(25) + E(25.5)
    exact = tc.temperature_c("K", tc.emf_mv("K", 400.0) - tc.emf_mv("K", 25.0) + tc.emf_mv("K", 25.5)) - 400.0
    assert cj.at_hot_c == pytest.approx(exact, rel=1e-3)


def test_uncompensated_probe_is_short_by_the_whole_cold_junction_voltage() -> None:
    """Without compensation the terminals at 25 °C take E(25) = 1.000 mV (table) off the reading: 1000 µV over
    S(400) = 42.25 µV/°C is 23.7 °C at the hot junction (first order)."""
    cj = cold_junction_error("TC1", _probe(compensated=False, cjc_accuracy=0.5))
    assert cj.emf_v == pytest.approx(1.000e-3, abs=0.5e-6)
    assert cj.at_hot_c == pytest.approx(1000.0 / 42.25, rel=3e-3)
    # the largest over a cold range is at the end farther from 0 °C: E(−10) = −0.392 mV against E(5) (table)
    wide = cold_junction_error("TC1", _probe(compensated=False, cold=(-10.0, 5.0)))
    assert (wide.cold_c, wide.emf_v) == (-10.0, pytest.approx(0.392e-3, abs=0.5e-6))


def test_compensation_takes_the_cold_temperature_of_largest_seebeck_and_the_hot_of_smallest() -> None:
    # type K rises from 39.45 µV/°C at 0 °C to 40.5 at 25 °C (tables above): the warm end of the block is worse
    cj = cold_junction_error("TC1", _probe(compensated=True, cjc_accuracy=1.0, cold=(0.0, 25.0),
                                           hot=(20.0, 1200.0)))
    assert cj.cold_c == 25.0
    # type K falls from 42.25 µV/°C at 400 °C to a mean of (48.838 − 41.276) mV / 200 °C = 37.81 µV/°C over
    # 1000..1200 °C (tables), still falling: the smallest is at the 1200 °C end of this range, below that mean
    assert cj.hot_c == 1200.0
    assert 35e-6 < cj.seebeck_hot_v_per_c < 37.81e-6
    assert cj.seebeck_hot_v_per_c == pytest.approx(tc.seebeck_uv_per_c("K", 1200.0) * 1e-6, rel=1e-12)


def test_dc_error_term_is_the_terminal_error_times_the_stage_gain() -> None:
    """Kiln sample: type K compensated to ±0.5 °C with its block at 10..45 °C, a non-inverting stage of
    1 + 49.9k/1.00k = 50.9 (Ohm's law, ideal op-amp). The term at OUT is 0.5 × S(45) × 50.9."""
    loaded = load_design(KILN)
    e = analyse_dc_error(loaded, ["OUT"]).nets["OUT"]
    (term,) = [t for t in e.terms if t.kind == "cold junction"]
    assert term.name == "TC1 cold-junction compensation" and term.refs == ("TC1",)
    s45 = tc.seebeck_uv_per_c("K", 45.0) * 1e-6
    assert term.limit == pytest.approx(0.5 * s45, rel=1e-12)
    assert term.offset == pytest.approx(0.5 * s45 * (1 + 49.9e3 / 1.00e3), rel=2e-4)
    assert term.error_low == pytest.approx(term.error_high, rel=1e-9) and term.gain_error == pytest.approx(0.0,
                                                                                                         abs=1e-9)
    # counted in the totals: the worst case is the sum of every counted term's offset
    assert e.offset_worst == pytest.approx(sum(abs(t.offset) for t in e.terms if t.kind != "sensor"), rel=1e-12)
    # in °C at the sensor it equals what the measurand helper gives at OUT (smallest slope at the 1200 °C end)
    scale = net_scale(loaded, "OUT")
    assert scale is not None
    assert term.hot_junction_c == pytest.approx(scale.equivalent(term.offset, "V"), rel=1e-3)


def test_uncompensated_term_is_named_for_it_and_equals_e_cold(tmp_path: Path) -> None:
    data = yaml.safe_load(KILN.read_text(encoding="utf-8"))
    data["components"]["TC1"]["compensated"] = False
    path = tmp_path / "kiln.yaml"
    path.write_text(yaml.safe_dump(data, allow_unicode=True), encoding="utf-8")
    e = analyse_dc_error(load_design(path), ["OUT"]).nets["OUT"]
    (term,) = [t for t in e.terms if t.kind == "cold junction"]
    # E(45 °C) = 1.817 mV (table) through the gain of 50.9
    assert term.name == "TC1 cold junction, uncompensated"
    assert term.limit == pytest.approx(1.817e-3, abs=0.5e-6)
    assert term.offset == pytest.approx(1.817e-3 * 50.9, rel=2e-4)


def _findings(path: Path, **params: float) -> list:
    ctx = Context(load_design(path))
    return list(cold_junction.check(ctx.for_rule(cold_junction.META, params or None)))


def _past_below(limit: float) -> float:
    """The largest limit that ``limit``, taken as the value, breaks: below it by more than print precision."""
    return math.nextafter(limit - max(print_tolerance(limit), noise_floor(limit)), -math.inf)


def test_rule_at_the_exact_budget_share_on_both_sides() -> None:
    bad = RULE / "bad.yaml"
    (f,) = _findings(bad)
    assert f.severity == Severity.ERROR and f.ctx["unit"] == "V"
    value, budget = f.ctx["value"], 15e-3
    assert f.ctx["measurand_sensor"] == "TC1" and f.ctx["measurand_value"] > 40.0
    # the limit exactly at the value passes; a limit just past it (beyond print precision) is broken
    assert _findings(bad, budget_share=value / budget) == []
    (g,) = _findings(bad, budget_share=_past_below(value) / budget)
    assert g.ctx["limit"] < g.ctx["value"]


def test_rule_at_the_exact_span_share_on_both_sides(tmp_path: Path) -> None:
    data = yaml.safe_load((RULE / "bad.yaml").read_text(encoding="utf-8"))
    del data["budgets"]
    path = tmp_path / "no_budget.yaml"
    path.write_text(yaml.safe_dump(data, allow_unicode=True), encoding="utf-8")
    (f,) = _findings(path)
    # E(50 °C) = 2.585 mV (type J table) over J's smallest Seebeck coefficient in 300..600 °C; span 300 °C
    assert f.severity == Severity.WARNING and f.ctx["unit"] == "K"
    assert f.ctx["emf_error_v"] == pytest.approx(2.585e-3, abs=0.5e-6)
    value, span = f.ctx["value"], 300.0
    assert value == pytest.approx(f.ctx["emf_error_v"] / f.ctx["seebeck_hot_v_per_c"], rel=1e-12)
    assert f.ctx["limit"] == pytest.approx(0.01 * span)
    assert _findings(path, span_share=value / span) == []
    assert len(_findings(path, span_share=_past_below(value) / span)) == 1


def test_good_example_sits_inside_and_a_looser_compensation_breaks_it(tmp_path: Path) -> None:
    good = RULE / "good.yaml"
    assert _findings(good) == []
    data = yaml.safe_load(good.read_text(encoding="utf-8"))
    # 15 mV at OUT over a gain of 101 and S(50 °C) of type J (52.85 µV/°C from the table) is 2.81 °C
    data["components"]["TC1"]["cjc_accuracy"] = "2.9 K"
    path = tmp_path / "loose.yaml"
    path.write_text(yaml.safe_dump(data, allow_unicode=True), encoding="utf-8")
    (f,) = _findings(path)
    assert f.ctx["value"] == pytest.approx(2.9 * 52.85e-6 * 101, rel=3e-3)
    data["components"]["TC1"]["cjc_accuracy"] = "2.7 K"
    path.write_text(yaml.safe_dump(data, allow_unicode=True), encoding="utf-8")
    assert _findings(path) == []


def test_no_budget_and_no_span_is_not_evaluated_and_a_perfect_compensation_adds_no_term(tmp_path: Path) -> None:
    data = yaml.safe_load((RULE / "good.yaml").read_text(encoding="utf-8"))
    del data["budgets"]
    data["components"]["TC1"]["hot"] = ["450 °C", "450 °C"]
    path = tmp_path / "fixed.yaml"
    path.write_text(yaml.safe_dump(data, allow_unicode=True), encoding="utf-8")
    (f,) = _findings(path)
    assert f.confidence == "not-evaluated" and "no span" in f.message
    del data["components"]["TC1"]["cjc_accuracy"]  # compensated, accuracy left out: declared perfect
    path.write_text(yaml.safe_dump(data, allow_unicode=True), encoding="utf-8")
    assert _findings(path) == []
    terms = analyse_dc_error(load_design(path), ["OUT"]).nets["OUT"].terms
    assert [t for t in terms if t.hot_junction_c is not None] == []


KILN_DECK = """hand-written: kiln stage, thermocouple source at its low end, then shifted by the cold-junction error
VTC s 0 DC {v0!r}
RLEAD s tcp 40
E1 out 0 tcp fb {a0!r}
R1 out fb 49.9k
R2 fb 0 1k
RL out 0 10k
.control
set numdgt=15
op
print v(out)
alter VTC dc = {v1!r}
op
print v(out)
quit
.endc
.end
"""


@needs_ngspice
@pytest.mark.ngspice
def test_dc_error_term_through_the_stage_matches_ngspice() -> None:
    # the stage as ngspice solves it with a gain-A0 amplifier: the output moves by the term when the source does
    loaded = load_design(KILN)
    e = analyse_dc_error(loaded, ["OUT"]).nets["OUT"]
    (term,) = [t for t in e.terms if t.kind == "cold junction"]
    v0 = thermocouple_range_v(loaded.sensors["TC1"])[0]
    text, _ = run_ngspice(KILN_DECK.format(v0=v0, v1=v0 + term.limit, a0=loaded.part("U1").open_loop_gain))
    before, after = (float(x) for x in re.findall(r"v\(out\)\s*=\s*(\S+)", text))
    assert term.error_low == pytest.approx(after - before, rel=1e-5)


def test_channel_keys_tell_cold_junction_compensation_apart(tmp_path: Path) -> None:
    # two kiln channels alike but for the compensation's accuracy are not the same channel for any cached result
    from afecheck.analysis.channel import channel_key, find_channels

    data = yaml.safe_load(KILN.read_text(encoding="utf-8"))
    keys = []
    for name, accuracy in (("a", "0.5 K"), ("b", "1 K"), ("c", "0.5 K")):
        data["components"]["TC1"]["cjc_accuracy"] = accuracy
        path = tmp_path / f"{name}.yaml"
        path.write_text(yaml.safe_dump(data, allow_unicode=True), encoding="utf-8")
        loaded = load_design(path)
        keys.append(channel_key(loaded, find_channels(loaded)["OUT"], "OUT"))
    assert keys[0] != keys[1] and keys[0] == keys[2]
