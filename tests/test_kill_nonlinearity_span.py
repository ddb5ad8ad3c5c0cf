"""End-point nonlinearity at its edges: when an output's span is too small to count (the module's floor of 1e-12 of
the largest output, at and just above it) and when a sensor's output is a straight line (no vertex is solved)."""

from __future__ import annotations

import pytest

from afecheck.analysis.dc_error import analyse_dc_error
from afecheck.analysis.nonlinearity import POINTS
from afecheck.model.load import load_design
from tests.test_nonlinearity import A0, PART

# A 1 Ω / 1 Ω divider halves the input; with binary-exact values the solve gives exactly half (Ohm; IEEE 754
# division by two is exact), so the span at X can be put exactly on the floor. X_HI·1e-12 is exactly 2^-40 V.
X_HI = 0.9094947017729282
STEP = 2.0**-40
DIVIDER = """
afecheck: 1
name: span at the floor
signals:
  IN: {{dc: [{lo!r}, {hi!r}], source_resistance: 0}}
components:
  R1: {{kind: resistor, value: 1, tolerance: 0, pins: {{1: IN, 2: X}}}}
  R2: {{kind: resistor, value: 1, tolerance: 0, pins: {{1: X, 2: GND}}}}
"""


def _at_x(tmp_path, span: float):
    path = tmp_path / "d.yaml"
    path.write_text(DIVIDER.format(lo=2 * (X_HI - span), hi=2 * X_HI), encoding="utf-8")
    return analyse_dc_error(load_design(path), ["X"]).nets["X"].nonlinearity


def test_an_output_moving_exactly_the_floor_does_not_move(tmp_path):
    assert X_HI * 1e-12 == STEP and X_HI - (X_HI - STEP) == STEP  # the arithmetic the case rests on
    at = _at_x(tmp_path, STEP)
    assert at.outputs == (X_HI - STEP, X_HI) and at.span == STEP
    assert at.fraction is None  # |span| > 1e-12 · max |output| is strict: equal is "does not move"


def test_an_output_moving_half_again_the_floor_has_a_fraction(tmp_path):
    # 1.5 × 2^-40 V ≈ 1.36e-12 V over 0.91 V: above the floor, far above the solver's rounding (about 1e-16 of the
    # output), so the span counts; with no sensor the channel is affine (superposition) and its nonlinearity is 0.
    moved = _at_x(tmp_path, 1.5 * STEP)
    assert moved.span == 1.5 * STEP
    assert moved.fraction == 0.0 and moved.worst == 0.0


FULL_BRIDGE = """components:
  B1: {{kind: bridge, arrangement: full, resistance: 350, sensitivity: {s} mV/V, measurand: [0, 50], unit: kg,
       span: 50, pins: {{exc+: VREF, exc-: GND, out+: S, out-: M}}}}
  RB: {{kind: resistor, value: 1e12, pins: {{1: M, 2: GND}}}}
  U1: {{kind: opamp, part: P, pins: {{in+: S, in-: OUT, out: OUT, v+: VP, v-: VN}}}}
"""


@pytest.mark.parametrize("s_mv_per_v", [3, 10, 20])
def test_a_straight_sensor_output_is_solved_on_the_grid_only(tmp_path, s_mv_per_v):
    # A full bridge's out+ is V·R(1 + x)/(R(1 − x) + R(1 + x)) = V·(1 + x)/2, a straight line in x (docs/FORMAT.md's
    # arms; the full bridge's output V·x, K. Hoffmann, "An Introduction to Measurements using Strain Gages", HBM,
    # 1989), through a follower of gain A0/(1 + A0). Its deviations from the chord are the solver's rounding, below
    # the floor: nonlinearity 0, and no vertex to look for, so the grid's 17 points are all that is solved.
    path = tmp_path / "b.yaml"
    path.write_text("afecheck: 1\nname: straight bridge\n" + PART + FULL_BRIDGE.format(s=s_mv_per_v),
                    encoding="utf-8")
    nl = analyse_dc_error(load_design(path), ["OUT"]).nets["OUT"].nonlinearity
    x_fs = s_mv_per_v * 1e-3
    assert nl.points == tuple(k / (POINTS - 1) for k in range(POINTS))
    assert nl.outputs == pytest.approx([2.5 * (1 + x_fs * m) / 2 * A0 / (1 + A0) for m in nl.points], rel=1e-12)
    assert nl.fraction == 0.0 and nl.worst == 0.0
