"""End-point nonlinearity of a thermistor divider against the Beta equation evaluated here on a dense grid, and its
edge cases (a sensor that does not move, the solved grid), without ngspice."""

from __future__ import annotations

import math

import pytest

from afecheck.analysis.channel import find_channels
from afecheck.analysis.dc_error import analyse_dc_error, channel_dc_error
from afecheck.analysis.nonlinearity import channel_nonlinearity
from afecheck.model.load import load_design

A0 = 1e5
DIVIDER = f"""
afecheck: 1
name: thermistor divider straightness
parts:
  P:
    gbw: 1 MHz
    open_loop_gain: {A0:g}
    output_resistance: 0
    input_resistance_diff: 1e15
    input_resistance_cm: 1e15
    offset_voltage: 0
    bias_current: 0
    offset_current: 0
rails: {{{{VP: {{{{voltage: 10 V}}}}, VN: {{{{voltage: -10 V}}}}, VREF: {{{{voltage: 2.5 V}}}}}}}}
components:
  RT: {{{{kind: resistor, value: 10k, pins: {{{{1: VREF, 2: S}}}}}}}}
  TH: {{{{kind: ntc, r25: 10k, beta: 3950 K, temperature: [{{lo}} °C, {{hi}} °C], pins: {{{{1: S, 2: GND}}}}}}}}
  U1: {{{{kind: opamp, part: P, pins: {{{{in+: S, in-: OUT, out: OUT, v+: VP, v-: VN}}}}}}}}
"""


def _nonlinearity(tmp_path, lo: float, hi: float):
    path = tmp_path / "d.yaml"
    path.write_text(DIVIDER.format(lo=lo, hi=hi), encoding="utf-8")
    loaded = load_design(path)
    return channel_nonlinearity(loaded, find_channels(loaded)["OUT"], ["OUT"])["OUT"]


def _out(t_c: float) -> float:
    """OUT at t_c: the Beta model R = R25·exp(B·(1/T − 1/298.15 K)) (IEC 60539-1 B-value) below 10 kΩ from 2.5 V,
    through a follower of open-loop gain A0 (gain A0/(1 + A0), Franco, "Design with Operational Amplifiers", ch. 1)."""
    r = 10e3 * math.exp(3950.0 * (1 / (t_c + 273.15) - 1 / 298.15))
    return 2.5 * r / (10e3 + r) * A0 / (1 + A0)


def test_thermistor_divider_worst_deviation_matches_a_dense_search(tmp_path):
    lo, hi = -20.0, 80.0
    nl = _nonlinearity(tmp_path, lo, hi)
    # every solved point is the Beta equation at lo + p·(hi − lo)
    assert list(nl.outputs) == pytest.approx([_out(lo + p * (hi - lo)) for p in nl.points], rel=1e-9)
    # the grid: 17 evenly spaced points (sixteenths of the range) and one more at the parabola's vertex
    assert len(nl.points) == 18
    assert {k / 16 for k in range(17)} <= set(nl.points)
    assert list(nl.points) == sorted(nl.points)
    # end-point nonlinearity by definition (ISA-51.1 terminal-based linearity, from memory), searched here on 20001
    # points: the largest deviation from the chord through the two ends, signed, and where it lies
    v0, v1 = _out(lo), _out(hi)
    grid = [k / 20000 for k in range(20001)]
    dev = [_out(lo + p * (hi - lo)) - (v0 + p * (v1 - v0)) for p in grid]
    k = max(range(len(dev)), key=lambda i: abs(dev[i]))
    assert nl.worst == pytest.approx(dev[k], rel=1e-4)
    assert nl.at == pytest.approx(grid[k], abs=0.01)
    assert nl.span == pytest.approx(v1 - v0, rel=1e-9)
    assert nl.fraction == pytest.approx(abs(dev[k]) / abs(v1 - v0), rel=1e-4)
    assert nl.over == "TH -20 to 80 °C" and nl.refs == ("TH",)


def test_a_thermistor_that_does_not_move_has_no_fraction(tmp_path):
    # A range of one temperature (25..25 °C): the output does not move, so there is no span to divide by; every
    # deviation is zero (all points are the same solve).
    nl = _nonlinearity(tmp_path, 25.0, 25.0)
    assert nl.span == pytest.approx(0.0, abs=1e-12)
    assert nl.fraction is None
    assert nl.worst == 0.0 and set(nl.deviations) == {0.0}
    assert nl.outputs[0] == pytest.approx(_out(25.0), rel=1e-9)  # 1.25 V: R = R25 = 10 kΩ, half of 2.5 V


def test_the_dc_error_budget_carries_the_nonlinearity_unless_told_not_to(tmp_path):
    # The DC error of a sensor channel includes its end-point nonlinearity by default (afecheck.analysis.dc_error:
    # offset, gain error and nonlinearity split the error), the same figure as the nonlinearity analysis itself;
    # callers that judge no nonlinearity leave it out.
    path = tmp_path / "d.yaml"
    path.write_text(DIVIDER.format(lo=-20.0, hi=80.0), encoding="utf-8")
    loaded = load_design(path)
    channel = find_channels(loaded)["OUT"]
    own = channel_nonlinearity(loaded, channel, ["OUT"])["OUT"]
    assert analyse_dc_error(loaded, ["OUT"]).nets["OUT"].nonlinearity.worst == pytest.approx(own.worst, rel=1e-12)
    assert channel_dc_error(loaded, channel, ["OUT"])["OUT"].nonlinearity.worst == pytest.approx(own.worst, rel=1e-12)
    assert analyse_dc_error(loaded, ["OUT"], nonlinearity=False).nets["OUT"].nonlinearity is None
