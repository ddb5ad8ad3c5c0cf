"""The DC-error split at its span floor: an ideal output span of exactly 1e-12 V (at 0 V) still has a gain error;
just below it the term is reported as its larger end error with no gain error."""

from __future__ import annotations

import pytest

from afecheck.analysis.dc_error import analyse_dc_error
from afecheck.model.load import load_design

# Input 0 V to HI through a 1 Ω (±1 %) / 1 Ω divider: X = HI/2, exact in binary (Ohm; the solve of two equal unit
# conductances halves exactly), so HI = 2e-12 V puts the ideal span on the floor 1e-12 · max(1, |ideal low|) V.
DIVIDER = """
afecheck: 1
name: split at the floor
signals:
  IN: {{dc: [0 V, {hi}], source_resistance: 0}}
components:
  R1: {{kind: resistor, value: 1, tolerance: 1%, pins: {{1: IN, 2: X}}}}
  R2: {{kind: resistor, value: 1, tolerance: 0, pins: {{1: X, 2: GND}}}}
"""


def _term(tmp_path, hi: str):
    path = tmp_path / "d.yaml"
    path.write_text(DIVIDER.format(hi=hi), encoding="utf-8")
    net = analyse_dc_error(load_design(path), ["X"], nonlinearity=False).nets["X"]
    return net, {t.name: t for t in net.terms}["R1 tolerance"]


def test_a_span_exactly_on_the_floor_has_a_gain_error(tmp_path):
    net, t = _term(tmp_path, "2e-12 V")
    assert (net.ideal_low, net.ideal_high) == (0.0, 1e-12)
    # R1 × 1.01: X = HI/2.01 against HI/2, a gain error of 2/2.01 − 1 = −0.4975 % (divider formula, Ohm); the
    # error is zero at 0 V, so the offset is 0
    assert t.gain_error == pytest.approx(2 / 2.01 - 1, rel=1e-9)
    assert t.offset == 0.0


def test_a_span_just_below_the_floor_has_none(tmp_path):
    net, t = _term(tmp_path, "1.9e-12 V")
    assert net.ideal_high == pytest.approx(0.95e-12, rel=1e-12)
    assert t.gain_error is None
    # the larger end error instead: at 1.9e-12 V the 1 % moves X by HI/2.01 − HI/2
    assert t.offset == pytest.approx(1.9e-12 / 2.01 - 0.95e-12, rel=1e-6)
