"""Two channels alike but for their sources' resistance: the loop gain of a stage solved with its neighbour is
shared between channels only when their circuits are the same, so each inverting stage keeps its own crossover
(the source resistance adds to the input resistor in the feedback factor)."""

from __future__ import annotations

import math

import pytest

from tests.hand_part import part, stages_of

GBW, A0 = 1e6, 1e5

CHANNEL = """
  VS{c}: {{kind: signal_source, dc: [0, 0], ac_amplitude: 10 mV, band: [10 Hz, 1 kHz], source_resistance: {rs},
          pins: {{p: S{c}, n: GND}}}}
  RI{c}: {{kind: resistor, value: 10k, pins: {{1: S{c}, 2: M{c}}}}}
  RF{c}: {{kind: resistor, value: 10k, pins: {{1: M{c}, 2: O{c}}}}}
  U{c}: {{kind: opamp, part: P, pins: {{in+: GND, in-: M{c}, out: O{c}, v+: VP, v-: VN}}}}
  B{c}: {{kind: opamp, part: P, pins: {{in+: O{c}, in-: Q{c}, out: Q{c}, v+: VP, v-: VN}}}}"""

DESIGN = """
afecheck: 1
name: two channels
parts:
""" + part("P") + """
rails: {VP: {voltage: 5 V}, VN: {voltage: -5 V}}
components:""" + CHANNEL.format(c="A", rs="1k") + CHANNEL.format(c="B", rs="100k") + """
loads: {QA: {resistance: 10k}, QB: {resistance: 10k}}
"""


def _crossover(rs: float) -> float:
    """|A(jf)·β| = 1 by bisection in log f: A = A0/((1 + jf/fp1)(1 + jf/1 THz)), fp1 = GBW/A0, and
    β = (RI + Rs)/(RI + Rs + RF) (the inverting amplifier's feedback factor with the source resistance in series
    with RI; hand calculation)."""
    beta = (10e3 + rs) / (20e3 + rs)

    def t(f: float) -> float:
        return abs(A0 / ((1 + 1j * f / (GBW / A0)) * (1 + 1j * f / 1e12)) * beta)

    lo, hi = 1e3, 1e8
    for _ in range(200):
        mid = math.sqrt(lo * hi)
        lo, hi = (mid, hi) if t(mid) > 1 else (lo, mid)
    return math.sqrt(lo * hi)


def test_each_channel_keeps_the_crossover_of_its_own_source(tmp_path):
    stages = stages_of(tmp_path, DESIGN)
    # about GBW·β: 524 kHz behind 1 kΩ, 917 kHz behind 100 kΩ
    assert stages["UA"].crossover_hz == pytest.approx(_crossover(1e3), rel=1e-5)
    assert stages["UB"].crossover_hz == pytest.approx(_crossover(100e3), rel=1e-5)
