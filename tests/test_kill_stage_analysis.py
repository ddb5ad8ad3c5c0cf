"""Stage figures in circuits the older tests did not build, each against the closed-loop formula it must follow."""

from __future__ import annotations

import pytest

from afecheck.analysis import analyse
from afecheck.model.load import load_design

COMPOSITE = """
afecheck: 1
name: composite amplifier
parts:
  SLOW: {gbw: 1 MHz, open_loop_gain: 1e5}
  FAST: {gbw: 100 MHz, open_loop_gain: 1e4}
rails: {VP: {voltage: 5 V}, VN: {voltage: -5 V}}
signals:
  IN: {dc: [0, 0], ac_amplitude: 0.1 V, band: [10 Hz, 1 kHz], source_resistance: 1k}
components:
  A2: {kind: opamp, part: FAST, pins: {in+: MID, in-: OUT, out: OUT, v+: VP, v-: VN}}
  A1: {kind: opamp, part: SLOW, pins: {in+: IN, in-: FB, out: MID, v+: VP, v-: VN}}
  RF: {kind: resistor, value: 9k, pins: {1: OUT, 2: FB}}
  RG: {kind: resistor, value: 1k, pins: {1: FB, 2: GND}}
"""


def test_composite_amplifier_reports_the_band_gain_of_both_stages(tmp_path) -> None:
    # A follower (A2) inside the feedback loop of A1: the pair is one coupled unit, listed with A2 first. The
    # closed loop is non-inverting, gain 1 + RF/RG = 10 (S. Franco, "Design with Operational Amplifiers and Analog
    # Integrated Circuits", 4th ed., ch. 1); the loop gain over the band is at least A1's GBW/(10·1 kHz) = 100
    # times larger, so the band gain is 10 within about 1 %; MID is OUT within A2's 1/A0 = 1e-4.
    path = tmp_path / "d.yaml"
    path.write_text(COMPOSITE, encoding="utf-8")
    stages = {s.opamp: s for s in analyse(load_design(path)).stages}
    assert set(stages["A1"].group) == {"A1", "A2"}
    for ref in ("A1", "A2"):
        (inp,) = stages[ref].inputs
        assert inp.net == "IN"
        assert inp.gain == pytest.approx(10.0, rel=1e-3)
        assert inp.band_gain is not None and inp.band_gain == pytest.approx(10.0, rel=1e-2)


ONE_OHM = """
afecheck: 1
name: inverting stage, one-ohm source
parts:
  HI: {gbw: 10 MHz, open_loop_gain: 1e6, output_resistance: 0}
rails: {VCC: {voltage: 5 V}, VEE: {voltage: -5 V}}
components:
  V1: {kind: signal_source, dc: [-1 V, 1 V], source_resistance: 1, pins: {p: IN, n: GND}}
  R1: {kind: resistor, value: 1, pins: {1: IN, 2: INM}}
  R2: {kind: resistor, value: 2, pins: {1: INM, 2: OUT}}
  U1: {kind: opamp, part: HI, pins: {in+: GND, in-: INM, out: OUT, v+: VCC, v-: VEE}}
"""


def test_a_one_ohm_source_resistance_is_in_the_inverting_gain(tmp_path) -> None:
    # inverting gain −R2/(Rs + R1) = −2/(1 + 1) = −1 (ideal op-amp, Ohm and Kirchhoff; A0 = 1e6 at noise gain 3
    # moves it by 3e-6): the source's own ohm counts as much as R1's
    path = tmp_path / "d.yaml"
    path.write_text(ONE_OHM, encoding="utf-8")
    (stage,) = analyse(load_design(path)).stages
    (inp,) = [i for i in stage.inputs if i.net == "IN"]
    assert inp.gain == pytest.approx(-1.0, rel=1e-5)
    assert inp.loading_error_max == pytest.approx(0.5, rel=1e-5)
