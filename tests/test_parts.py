"""The shipped archetypes and user part libraries: complete, plausible, and loaded with their origins.

Plausibility is checked with published relations, not against the data itself: the two-pole phase
margin formula ([GHLM], RULES-REFERENCE R2, itself checked here against the R2(a) table), the estimate
f2 = GBW/(√2·Gmin) (R2 check value 7.071 MHz), the typical ranges of RULES-REFERENCE 0.3 ([FM]) and the
common-mode and transition-window check values of R3 ([DER]).
"""

from __future__ import annotations

import io
import json
import math
from pathlib import Path

import pytest

from afecheck.cli import main
from afecheck.errors import InputError
from afecheck.parts.library import builtin_entries, builtin_library, load_parts, missing_parameters
from afecheck.parts.model import OpAmpModel

ARCHETYPES = ("AFE-GP1", "AFE-PREC1", "AFE-RRIO1", "AFE-JFET1", "AFE-HS1", "AFE-DECOMP5")
LIB = builtin_library()


def phase_margin_two_pole(gbw: float, f2: float, noise_gain: float, a0: float) -> float:
    """PM (degrees) of A(s) = A0/((1 + s/wp1)(1 + s/wp2)) with β = 1/NG, crossover found by bisection [GHLM]."""
    fp1 = gbw / a0

    def loop_gain(f: float) -> float:
        return a0 / noise_gain / math.hypot(1, f / fp1) / math.hypot(1, f / f2)

    lo, hi = fp1, 1e3 * gbw
    for _ in range(200):
        mid = math.sqrt(lo * hi)
        lo, hi = (mid, hi) if loop_gain(mid) > 1 else (lo, mid)
    fc = math.sqrt(lo * hi)
    return 180.0 - math.degrees(math.atan(fc / fp1)) - math.degrees(math.atan(fc / f2))


@pytest.mark.parametrize(
    ("gbw", "f2", "ng", "pm"),
    [(10e6, 10e6, 1, 51.83), (10e6, 10e6, 2, 65.53), (50e6, 10e6, 2, 34.94), (50e6, 10e6, 5, 51.83),
     (50e6, 10e6, 7.5, 60.00)],
)
def test_phase_margin_helper_reproduces_the_published_table(gbw: float, f2: float, ng: float, pm: float) -> None:
    assert phase_margin_two_pole(gbw, f2, ng, 1e5) == pytest.approx(pm, abs=0.01)  # [GHLM] R2(a) table, A0 = 1e5


def test_the_six_archetypes_ship_under_their_agreed_names() -> None:
    assert set(ARCHETYPES) <= set(LIB)
    assert len({e.model.archetype for e in builtin_entries()}) == len(builtin_entries())


@pytest.mark.parametrize("name", ARCHETYPES)
def test_every_archetype_fills_every_parameter(name: str) -> None:
    model = LIB[name]
    assert missing_parameters(model) == []
    assert model.archetype and model.description


@pytest.mark.parametrize("name", [n for n in ARCHETYPES if n != "AFE-DECOMP5"])
def test_unity_gain_stable_archetypes_have_margin_at_unity_gain(name: str) -> None:
    m = LIB[name]
    assert m.min_stable_gain == 1
    pm = phase_margin_two_pole(m.gbw, m.second_pole, 1.0, m.open_loop_gain)
    assert 60.0 <= pm <= 80.0  # [GHLM] two-pole formula; 45° minimum, 60° preferred (R2 thresholds, [CP])


def test_decompensated_archetype_needs_a_noise_gain_of_five() -> None:
    m = LIB["AFE-DECOMP5"]
    assert m.min_stable_gain == 5
    assert phase_margin_two_pole(m.gbw, m.second_pole, 5.0, m.open_loop_gain) >= 45.0  # [GHLM] two-pole
    assert phase_margin_two_pole(m.gbw, m.second_pole, 1.0, m.open_loop_gain) < 30.0  # far below 45° as a follower
    # R2 check value: Gmin = 5 with GBW 50 MHz -> estimated f2 = 7.071 MHz
    estimate = OpAmpModel(gbw=m.gbw, min_stable_gain=5).estimated_second_pole()
    assert estimate == pytest.approx(7.071e6, rel=1e-4)
    assert m.second_pole == pytest.approx(estimate, rel=0.1)


@pytest.mark.parametrize("name", ARCHETYPES)
def test_archetypes_lie_in_the_typical_ranges(name: str) -> None:
    m = LIB[name]  # RULES-REFERENCE 0.3 typical ranges [FM]
    assert 1e4 <= m.open_loop_gain <= 1e7
    assert 100e3 <= m.gbw <= 1e9
    assert 10 <= m.output_resistance <= 1000
    assert 1e-12 <= m.input_capacitance_cm <= 10e-12 and 1e-12 <= m.input_capacitance_diff <= 10e-12
    assert m.offset_current < m.bias_current
    assert m.supply_min < m.supply_max


def test_input_bias_currents_follow_the_input_technology() -> None:
    # RULES-REFERENCE 0.3 [FM]: CMOS/JFET 1 fA..100 pA, bipolar 1 nA..1 µA
    for name in ("AFE-RRIO1", "AFE-JFET1"):
        assert 1e-15 <= LIB[name].bias_current <= 100e-12
    for name in ("AFE-GP1", "AFE-PREC1"):
        assert 1e-9 <= LIB[name].bias_current <= 1e-6
    assert LIB["AFE-PREC1"].offset_voltage < LIB["AFE-GP1"].offset_voltage / 10
    assert LIB["AFE-PREC1"].offset_drift < LIB["AFE-GP1"].offset_drift / 10


def test_general_purpose_part_has_the_single_supply_common_mode_range() -> None:
    # R3 check value [DER]: 5 V supply, CM range 0 V..V+ - 1.5 V, a follower at 4 V is 0.5 V over
    m = LIB["AFE-GP1"]
    top = 5.0 - m.input_cm_high
    assert top == pytest.approx(3.5)
    assert 4.0 - top == pytest.approx(0.5)
    assert m.input_cm_low <= 0.0


def test_rail_to_rail_part_has_a_transition_window_a_follower_crosses() -> None:
    m = LIB["AFE-RRIO1"]
    assert m.input_stage == "rail-to-rail-complementary"
    assert m.input_cm_low < 0 and m.input_cm_high < 0  # beyond both rails
    low = 5.0 - m.transition_below_vplus - m.transition_width  # R3 window [V+ - Vtr - w, V+ - Vtr + w]
    high = 5.0 - m.transition_below_vplus + m.transition_width
    assert low < 4.0 and high > 1.0  # R3 [DER]: a follower swinging 1..4 V crosses it
    assert not low <= 2.5 <= high  # an inverting stage biased at 2.5 V does not


def test_transition_parameters_count_as_missing_only_for_complementary_inputs() -> None:
    plain = OpAmpModel(gbw=1e6)
    complementary = OpAmpModel(gbw=1e6, input_stage="rail-to-rail-complementary")
    assert "transition_width" not in missing_parameters(plain)
    assert "transition_width" in missing_parameters(complementary)
    assert "slew_rate" in missing_parameters(plain)


def test_library_file_with_an_error_reports_its_own_line(tmp_path: Path) -> None:
    lib = tmp_path / "lib.yaml"
    lib.write_text("afecheck-parts: 1\nparts:\n  A-1: {gbw: 1 MHz}\n  A-2: {gbw: 1 MHz, input_stage: magic}\n",
                   encoding="utf-8")
    with pytest.raises(InputError) as info:
        load_parts([lib])
    (problem,) = info.value.problems
    assert (problem.file, problem.line, problem.path) == (str(lib), 4, "parts.A-2.input_stage")


def test_library_without_parts_key_is_refused(tmp_path: Path) -> None:
    lib = tmp_path / "lib.yaml"
    lib.write_text("A-1: {gbw: 1 MHz}\n", encoding="utf-8")
    with pytest.raises(InputError) as info:
        load_parts([lib])
    messages = [str(p) for p in info.value.problems]
    assert f"{lib}:1:1: A-1: unknown key 'A-1'" in messages
    assert f"{lib}:1:1: required key 'parts' is missing" in messages


def _run(*argv: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    rc = main(list(argv), stdout=out, stderr=err)
    return rc, out.getvalue(), err.getvalue()


def test_parts_command_lists_the_archetypes() -> None:
    rc, out, _ = _run("parts")
    assert rc == 0
    lines = out.splitlines()
    assert lines[0].split() == ["name", "archetype", "GBW", "min", "gain", "input", "stage", "origin"]
    for name in ARCHETYPES:
        assert any(line.startswith(name + " ") for line in lines)
    assert "missing parameters" not in out
    decomp = next(line for line in lines if line.startswith("AFE-DECOMP5"))
    assert "50.0 MHz" in decomp and " 5 " in decomp and "built-in (decomp5.yaml)" in decomp


def test_parts_command_with_a_library_marks_missing_parameters(tmp_path: Path) -> None:
    lib = tmp_path / "lib.yaml"
    lib.write_text("parts:\n  THIN-AMP: {gbw: 3 MHz, open_loop_gain: 1e5}\n", encoding="utf-8")
    rc, out, _ = _run("parts", "--parts", str(lib), "--json")
    assert rc == 0
    rows = {row["name"]: row for row in json.loads(out)["parts"]}
    thin = rows["THIN-AMP"]
    assert thin["origin"] == f"{lib}:2" and thin["gbw_hz"] == 3e6
    assert "open_loop_gain" not in thin["missing"] and "output_resistance" in thin["missing"]
    assert rows["AFE-GP1"]["missing"] == []
    rc, out, _ = _run("parts", "--parts", str(lib))
    assert "THIN-AMP: " in out.split("missing parameters")[1]


def test_parts_command_with_a_design_shows_its_inline_parts() -> None:
    design = Path(__file__).parent / "fixtures" / "load" / "soil_logger.yaml"
    rc, out, _ = _run("parts", "--design", str(design), "--json")
    rows = {row["name"]: row for row in json.loads(out)["parts"]}
    assert rc == 0
    assert rows["AFE-GP1"]["origin"].startswith(str(design) + ":")
    assert rows["FIELD-AMP"]["origin"].endswith("field_parts.yaml:4")


def test_parts_command_bad_library_exits_2(tmp_path: Path) -> None:
    lib = tmp_path / "lib.yaml"
    lib.write_text("parts:\n  X: {gbw: lots}\n", encoding="utf-8")
    rc, _, err = _run("parts", "--parts", str(lib))
    assert rc == 2 and f"{lib}:2:" in err
