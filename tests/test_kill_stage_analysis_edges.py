"""Two edges of a stage result: an output that draws no DC current (a comparator into a capacitive input) takes its
load from the AC solution, and a stage too large to solve carries no computed figures at all."""

from __future__ import annotations

import math

import pytest

from afecheck.analysis import analyse
from afecheck.model.load import load_design
from tests.hand_part import part

COMPARATOR = """
afecheck: 1
name: comparator into a logic input
parts:
""" + part("P") + """
rails: {VP: {voltage: 5 V}, VN: {voltage: -5 V}, VREF: {voltage: 1 V}}
signals:
  IN: {dc: [0.5 V, 1.5 V], ac_amplitude: 0.1 V, band: [10 Hz, 1 kHz]}
components:
  U1: {kind: opamp, part: P, role: comparator, pins: {in+: IN, in-: VREF, out: OUT, v+: VP, v-: VN}}
loads: {OUT: {capacitance: 10p}}
"""


def test_a_capacitive_only_load_is_read_from_the_ac_solution(tmp_path):
    # at DC the output drives nothing (0 A per volt of input): the load is |Vout/Iout| of the AC solution in the
    # middle of the band, sqrt(10 Hz · 1 kHz) = 100 Hz, where the 10 pF is 1/(2π·100 Hz·10 pF) = 159.15 MΩ
    # (capacitive reactance; hand calculation), never a division by that zero current
    path = tmp_path / "d.yaml"
    path.write_text(COMPARATOR, encoding="utf-8")
    u1 = analyse(load_design(path)).stages[0]
    assert u1.load_resistance == pytest.approx(1 / (2 * math.pi * 100.0 * 10e-12), rel=1e-9)


def test_a_stage_too_large_to_solve_reports_no_signal(tmp_path):
    # an inverting stage fed through a ladder of 120 resistors: its local circuit is over the part limit, so it is
    # not evaluated, and none of its signal figures may read as computed (zero amplitude, no slew requirement)
    chain = "\n".join(f"  R{k}: {{kind: resistor, value: 100, pins: {{1: {'IN' if k == 0 else f'N{k - 1}'}, 2: N{k}}}}}"
                      for k in range(120))
    text = f"""
afecheck: 1
name: long ladder
parts:
  P: {{gbw: 1 MHz, open_loop_gain: 1e5}}
rails: {{VP: {{voltage: 5 V}}, VN: {{voltage: -5 V}}}}
signals:
  IN: {{dc: [0.5 V, 1.5 V], ac_amplitude: 0.1 V, band: [10 Hz, 1 kHz]}}
components:
{chain}
  RF: {{kind: resistor, value: 100k, pins: {{1: N119, 2: OUT}}}}
  U1: {{kind: opamp, part: P, pins: {{in+: GND, in-: N119, out: OUT, v+: VP, v-: VN}}}}
loads: {{OUT: {{resistance: 10k}}}}
"""
    path = tmp_path / "d.yaml"
    path.write_text(text, encoding="utf-8")
    u1 = analyse(load_design(path)).stages[0]
    assert "more than 100 passives" in u1.not_evaluated[0]
    assert (u1.vout_ac_peak, u1.f_max, u1.required_slew_rate, u1.load_capacitance) == (0.0, 0.0, 0.0, 0.0)
    assert u1.vout_min is None and u1.iout_peak is None and u1.phase_margin_deg is None


def test_no_load_figure_without_a_signal_to_read_it_from(tmp_path):
    # the same comparator with a band but no amplitude declared: no DC current and no AC signal at the output, so
    # there is no operating point to read a load from (the stage reports none rather than the reactance of an
    # excitation that does not exist)
    path = tmp_path / "d.yaml"
    path.write_text(COMPARATOR.replace("ac_amplitude: 0.1 V, ", ""), encoding="utf-8")
    u1 = analyse(load_design(path)).stages[0]
    assert u1.vout_ac_peak == 0.0
    assert u1.load_resistance is None
