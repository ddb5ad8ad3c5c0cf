"""The four arms of a bridge follow its one measurand together: a full bridge's excitation current does not move
with the load, because each half's two arms change by equal and opposite amounts."""

from __future__ import annotations

import math

import pytest

from afecheck.analysis import analyse
from afecheck.model.load import load_design
from tests.hand_part import part

# a 2.5 V excitation buffer (a follower on a reference rail) driving a 350 Ω full bridge; the bridge outputs leave
# the board into 1 TΩ (negligible: 1.25 V / 1 TΩ is 1.7e-10 of the excitation current)
DESIGN = """
afecheck: 1
name: bridge excitation buffer
parts:
""" + part("BUF") + """
rails: {VP: {voltage: 5 V}, VN: {voltage: -5 V}, VREF: {voltage: 2.5 V}}
components:
  U1: {kind: opamp, part: BUF, pins: {in+: VREF, in-: EXC, out: EXC, v+: VP, v-: VN}}
  LC1: {kind: bridge, arrangement: full, resistance: 350, sensitivity: 2 mV/V, measurand: [0, 1],
        pins: {exc+: EXC, exc-: GND, out+: SP, out-: SN}}
loads: {SP: {resistance: 1T}, SN: {resistance: 1T}}
"""


@pytest.fixture(scope="module")
def analysis(tmp_path_factory):
    path = tmp_path_factory.mktemp("bridge") / "d.yaml"
    path.write_text(DESIGN, encoding="utf-8")
    return analyse(load_design(path))


def test_a_full_bridge_draws_the_same_excitation_current_at_every_load(analysis):
    # follower: V(EXC) = 2.5 V · A0/(1 + A0), A0 = 1e5 (Black's formula, unity feedback); full bridge with
    # sensitivity S = 2 mV/V: arms R(1 ∓ S·m) and R(1 ± S·m) in each half (docs/FORMAT.md), so each half is 2R at
    # every measurand m and the bridge is R = 350 Ω to ground: I = V(EXC)/R (Ohm; hand calculation). Arms swept as
    # four independent quantities would let a half range over 2R(1 ± S/2) and the current by ±0.1 %.
    u1 = analysis.stages[0]
    v_exc = 2.5 * 1e5 / (1 + 1e5)
    assert analysis.nets["EXC"].dc_min == pytest.approx(v_exc, rel=1e-9)
    assert u1.iout_peak == pytest.approx(v_exc / 350.0, rel=1e-8)


def test_the_bridge_outputs_follow_the_one_measurand(analysis):
    # out+ = V·(1 + S·m)/2 and out− = V·(1 − S·m)/2 over m in 0..1 (the divider rule on each half; hand
    # calculation): 1.25 V to 1.2525 V and 1.2475 V to 1.25 V (times the follower's A0/(1 + A0))
    v_exc = 2.5 * 1e5 / (1 + 1e5)
    sp, sn = analysis.nets["SP"], analysis.nets["SN"]
    assert (sp.dc_min, sp.dc_max) == (pytest.approx(v_exc / 2, rel=1e-9), pytest.approx(v_exc * 1.002 / 2, rel=1e-9))
    assert (sn.dc_min, sn.dc_max) == (pytest.approx(v_exc * 0.998 / 2, rel=1e-9), pytest.approx(v_exc / 2, rel=1e-9))
    assert analysis.forms["SP"].swept == ("LC1",)


# the same bridge straight off a rail into off-board loads, no op-amp: its output nets are ranged as dividers
# beside the stages (with an NTC divider for comparison)
LOOSE = """
afecheck: 1
name: bridge on a rail
rails: {VREF: {voltage: 2.5 V}}
components:
  LC1: {kind: bridge, arrangement: full, resistance: 350, sensitivity: 2 mV/V, measurand: [0, 1],
        pins: {exc+: VREF, exc-: GND, out+: SP, out-: SN}}
  RT1: {kind: ntc, r25: 10k, beta: 3950 K, temperature: [0 °C, 50 °C], pins: {1: VREF, 2: TH}}
  R1: {kind: resistor, value: 10k, pins: {1: TH, 2: GND}}
loads: {SP: {resistance: 1T}, SN: {resistance: 1T}, TH: {resistance: 1T}}
"""


def test_a_bridge_output_no_stage_reads_still_spans_the_measurand(tmp_path):
    # found by this test: the divider pass beside the stages looked the arms up under their own names, while the
    # swept quantity is the bridge's, so the outputs sat at mid-measurand (1.25125 V and 1.24875 V) as constants.
    # Divider rule on each half (hand calculation): out+ = 2.5 V·(1 + 0.002·m)/2, out− = 2.5 V·(1 − 0.002·m)/2
    path = tmp_path / "d.yaml"
    path.write_text(LOOSE, encoding="utf-8")
    a = analyse(load_design(path))
    sp, sn = a.nets["SP"], a.nets["SN"]
    assert (sp.dc_min, sp.dc_max) == (pytest.approx(1.25, rel=1e-9), pytest.approx(1.2525, rel=1e-9))
    assert (sn.dc_min, sn.dc_max) == (pytest.approx(1.2475, rel=1e-9), pytest.approx(1.25, rel=1e-9))
    # the NTC divider beside it: R(T) = R25·exp(B·(1/T − 1/298.15 K)) (IEC 60539 Beta model), TH = 2.5 V·R1/(R1 + R)
    def th(t_c: float) -> float:
        r = 10e3 * math.exp(3950.0 * (1.0 / (t_c + 273.15) - 1.0 / 298.15))
        return 2.5 * 10e3 / (10e3 + r)
    assert (a.nets["TH"].dc_min, a.nets["TH"].dc_max) == (pytest.approx(th(0.0), rel=1e-6),
                                                          pytest.approx(th(50.0), rel=1e-6))
