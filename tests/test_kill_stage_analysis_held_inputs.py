"""What a stage takes as its inputs and what it holds beside them, against hand calculations: another op-amp's
input resistance loading a shared source, a rail reached only through a bias divider's legs (no input of its own),
and the loop gain at the highest signal frequency when no signal has one."""

from __future__ import annotations

import pytest

from tests.hand_part import part, stages_of

PARTS = """
parts:
""" + part("HIZ") + "\n" + part("LOZ", rcm="10k") + """
rails: {VP: {voltage: 5 V}, VN: {voltage: -5 V}}
"""

SHARED = """
afecheck: 1
name: two followers on one source
""" + PARTS + """
signals:
  X: {dc: [1 V, 1 V], source_resistance: 10k}
components:
  U2: {kind: opamp, part: HIZ, pins: {in+: X, in-: O2, out: O2, v+: VP, v-: VN}}
  U3: {kind: opamp, part: LOZ, pins: {in+: X, in-: O3, out: O3, v+: VP, v-: VN}}
loads: {O2: {resistance: 1T}, O3: {resistance: 1T}}
"""

BIASED = """
afecheck: 1
name: reference buffer
""" + PARTS + """
components:
  R1: {kind: resistor, value: 30k, pins: {1: VP, 2: X}}
  R2: {kind: resistor, value: 10k, pins: {1: X, 2: GND}}
  U1: {kind: opamp, part: HIZ, pins: {in+: X, in-: OUT, out: OUT, v+: VP, v-: VN}}
  RL: {kind: resistor, value: 10k, pins: {1: OUT, 2: VP}}
"""

FOLLOWER = 1e5 / (1 + 1e5)  # unity feedback around A0 = 1e5 (Black's formula)


def test_another_op_amps_input_resistance_loads_the_shared_source(tmp_path):
    # U3's 10 kΩ common-mode input resistance sits on X beside U2's input: the 10 kΩ source sees 10 kΩ ∥ 1 PΩ
    # (hand calculation, the divider rule): X = 1 V·Rcm/(Rs + Rcm) = 0.5 V, U2's gain 0.5·A0/(1 + A0) and its
    # loading error Rs/(Rs + Rcm) = 0.5
    u2 = stages_of(tmp_path, SHARED)["U2"]
    rin = 1.0 / (1.0 / 10e3 + 1.0 / 1e15)
    (x,) = u2.inputs
    assert x.loading_error_max == pytest.approx(10e3 / (10e3 + rin), rel=1e-9)
    assert x.gain == pytest.approx(rin / (10e3 + rin) * FOLLOWER, rel=1e-9)
    assert u2.vout_min == pytest.approx(rin / (10e3 + rin) * FOLLOWER, rel=1e-9)


def test_a_rail_behind_the_bias_divider_and_the_output_load_is_no_input(tmp_path):
    # the buffer's only input is its bias divider (5 V·10k/40k = 1.25 V Thevenin, 7.5 kΩ): VP reaches the stage
    # through the divider's legs (inside that Thevenin source) and through the output load RL, which loads the
    # output and drives no input. Output 1.25 V·A0/(1 + A0); RL carries (5 V − 1.25 V)/10 kΩ = 375 µA (Ohm)
    u1 = stages_of(tmp_path, BIASED)["U1"]
    assert [(i.net, i.source.kind) for i in u1.inputs] == [("X", "divider")]
    assert u1.vout_max == pytest.approx(1.25 * FOLLOWER, rel=1e-9)
    assert u1.iout_peak == pytest.approx((5.0 - 1.25 * FOLLOWER) / 10e3, rel=1e-9)


def test_no_loop_gain_at_fmax_without_a_signal_frequency(tmp_path):
    # a DC-only source declares no frequency: f_max is 0 and there is no |T(f_max)| to report
    for stage in stages_of(tmp_path, BIASED).values():
        assert stage.f_max == 0.0
        assert stage.loop_gain_at_fmax is None
        assert stage.loop_gain_dc == pytest.approx(1e5, rel=1e-6)
