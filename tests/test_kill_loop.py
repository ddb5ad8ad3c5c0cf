"""Loop gain at DC, against the textbook product A0·β, for a part whose dominant pole sits at 1 Hz."""

from __future__ import annotations

import pytest

from afecheck.analysis import analyse
from afecheck.model.load import load_design

FOLLOWER = """
afecheck: 1
name: follower, pole at 1 Hz
parts:
  LOWPOLE: {gbw: 1 MHz, open_loop_gain: 1e6, output_resistance: 0, input_resistance_diff: 1e15,
            input_resistance_cm: 1e15, input_capacitance_diff: 0, input_capacitance_cm: 0}
rails: {VP: {voltage: 5 V}, VN: {voltage: -5 V}}
signals:
  IN: {dc: [0, 0], band: [1 Hz, 1 kHz]}
components:
  U1: {kind: opamp, part: LOWPOLE, pins: {in+: IN, in-: OUT, out: OUT, v+: VP, v-: VN}}
"""


def test_dc_loop_gain_is_a0_times_beta_not_the_gain_at_the_first_pole(tmp_path) -> None:
    # T(0) = A0·β with β = 1 for a follower (S. Franco, "Design with Operational Amplifiers and Analog Integrated
    # Circuits", 4th ed., ch. 1 and 8); the dominant pole GBW/A0 = 1 Hz, so |T| at 1 Hz is A0/√2, 29 % less
    path = tmp_path / "d.yaml"
    path.write_text(FOLLOWER, encoding="utf-8")
    (stage,) = analyse(load_design(path)).stages
    assert stage.feedback == "negative"
    assert abs(stage.loop_gain_dc) == pytest.approx(1e6, rel=1e-6)
