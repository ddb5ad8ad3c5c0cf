"""The feedback capacitor a transimpedance stage is told to add for 65° of phase margin, against the loop written
out by hand: the least capacitance that gives 65°, the bottom of the search when the smallest value already does,
and the 60° threshold below which the capacitor is proposed at all (both sides of it)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from afecheck.analysis import analyse, stage_analysis
from afecheck.model.load import load_design
from tests.hand_part import template_part

GBW, A0, FP2 = 10e6, 1e5, 1e12

DESIGN = """
afecheck: 1
name: photodiode amplifier
parts:
""" + template_part("FAST", gbw="10 MHz") + """
rails: {{VP: {{voltage: 5 V}}, VN: {{voltage: -5 V}}}}
signals:
  PD: {{kind: current, current: [0 A, 1 pA], ac_current: 1 pA, band: [10 Hz, 1 kHz], capacitance: {cs}}}
components:
  RF: {{kind: resistor, value: {rf}, pins: {{1: PD, 2: OUT}}}}
  U1: {{kind: opamp, part: FAST, pins: {{in+: GND, in-: PD, out: OUT, v+: VP, v-: VN}}}}
loads: {{OUT: {{resistance: 1T}}}}
"""


def _loop(f: np.ndarray, cs: float, rf: float, cf: float) -> np.ndarray:
    """T = A·β: A(jf) = A0/((1 + jf/fp1)(1 + jf/fp2)), fp1 = GBW/A0; β = Zs/(Zs + Zf) with Zs the sensor's
    capacitance and Zf = Rf ∥ Cf (the noise-gain divider of a transimpedance amplifier: J. G. Graeme,
    "Photodiode Amplifiers: Op Amp Solutions", McGraw-Hill 1996, ch. 2, from memory)."""
    s = 2j * math.pi * f
    a = A0 / ((1 + s / (2 * math.pi * GBW / A0)) * (1 + s / (2 * math.pi * FP2)))
    zs = 1 / (s * cs)
    zf = rf / (1 + s * rf * cf)
    return a * zs / (zs + zf)


def _margin(cs: float, rf: float, cf: float) -> float:
    """180° + arg T at the crossover |T| = 1, found by bisection in log f (|T| falls monotonically there)."""
    lo, hi = 1.0, 1e11
    for _ in range(200):
        mid = math.sqrt(lo * hi)
        lo, hi = (mid, hi) if abs(_loop(np.array([mid]), cs, rf, cf)[0]) > 1 else (lo, mid)
    return 180.0 + math.degrees(np.angle(_loop(np.array([math.sqrt(lo * hi)]), cs, rf, cf)[0]))


def _stage(tmp_path, cs: str, rf: str):
    path = tmp_path / "d.yaml"
    path.write_text(DESIGN.format(cs=cs, rf=rf), encoding="utf-8")
    return analyse(load_design(path)).stages[0]


@pytest.mark.parametrize(("cs", "rf", "bracket"), [
    # 10 pF sensor, 1 MΩ feedback, 10 MHz op-amp: about 2° bare, 65° between 0.1 and 1 pF (0.549 pF)
    ((10e-12, "10p"), (1e6, "1M"), (1e-13, 1e-12)),
    # 0.1 pF behind 1 GΩ: under 1° bare, 65° at 1.75 fF, in the search's first step above its 1 fF bottom
    ((0.1e-12, "0.1p"), (1e9, "1G"), (1e-15, 1e-14)),
])
def test_the_proposed_capacitor_is_the_least_that_gives_65_degrees(tmp_path, cs, rf, bracket):
    # the margin rises with Cf through 65° inside the bracket, where bisection on the hand loop finds the least Cf
    u1 = _stage(tmp_path, cs[1], rf[1])
    assert u1.topology == "transimpedance"
    assert u1.phase_margin_deg == pytest.approx(_margin(cs[0], rf[0], 0.0), abs=1e-3)
    lo, hi = math.log(bracket[0]), math.log(bracket[1])
    assert _margin(cs[0], rf[0], math.exp(lo)) < 65.0 < _margin(cs[0], rf[0], math.exp(hi))
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        lo, hi = (lo, mid) if _margin(cs[0], rf[0], math.exp(mid)) >= 65.0 else (mid, hi)
    assert u1.feedback_capacitance_for_margin == pytest.approx(math.exp(hi), rel=1e-4, abs=0.0)


def test_the_search_stops_at_one_femtofarad_when_that_already_gives_65_degrees(tmp_path):
    # 0.1 pF sensor behind 100 GΩ: under 1° bare, yet 1 fF across the feedback already gives more than 65°
    # (the hand loop); the search starts at 1 fF (its documented bottom) and proposes exactly that
    u1 = _stage(tmp_path, "0.1p", "100G")
    assert u1.phase_margin_deg == pytest.approx(_margin(0.1e-12, 100e9, 0.0), abs=1e-3)
    assert _margin(0.1e-12, 100e9, 0.0) < 60.0
    assert _margin(0.1e-12, 100e9, 1e-15) >= 65.0
    assert u1.feedback_capacitance_for_margin == pytest.approx(1e-15, rel=1e-12, abs=0.0)


@pytest.mark.parametrize(("pm", "proposed"), [(60.0, False), (math.nextafter(60.0, 0.0), True)])
def test_a_capacitor_is_proposed_only_below_60_degrees(tmp_path, monkeypatch, pm, proposed):
    # the threshold is the 65° target less 5° (stage_analysis.TIA_TARGET_PM_DEG): exactly 60° is no proposal,
    # the next float below is one. The loop's own margin is replaced by the boundary value, nothing else.
    real = stage_analysis._loop_numbers

    def at_boundary(*args, **kwargs):
        loop = real(*args, **kwargs)
        numbers = list(loop.numbers)
        numbers[3] = pm
        return stage_analysis._Loop(tuple(numbers), loop.reasons)

    monkeypatch.setattr(stage_analysis, "_loop_numbers", at_boundary)
    u1 = _stage(tmp_path, "10p", "1M")
    assert u1.phase_margin_deg == pm
    assert (u1.feedback_capacitance_for_margin is not None) is proposed
