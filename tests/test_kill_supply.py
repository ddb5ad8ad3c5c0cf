"""Supply span and input overdrive by hand: asymmetric rail tolerances, a grounded V−, the diode drop's exact
boundary on both sides, an AC peak, the series resistance and the assumed input current limit."""

from __future__ import annotations

import math

import pytest

from afecheck.analysis import analyse
from afecheck.analysis.supply import analyse_supply
from afecheck.model.load import load_design

# A follower fed from a signal through 9 kΩ (plus the signal's own 1 kΩ): 10 kΩ in front of the input pin.
FOLLOWER = """
afecheck: 1
name: supply by hand
parts:
  P:
    gbw: 1 MHz
    open_loop_gain: 1e5
    output_resistance: 0
    input_resistance_diff: 1e15
    input_resistance_cm: 1e15
    supply_min: 4 V
    supply_max: 36 V
    {limit}
rails: {{VP: {{voltage: 5 V, tolerance: 10%}}, VN: {{voltage: {vn}, tolerance: {vn_tol}}}}}
signals:
  IN: {{dc: [{lo}, {hi}], ac_amplitude: {ac}, source_resistance: {rs}}}
components:
  U1: {{kind: opamp, part: P, pins: {{in+: X, in-: OUT, out: OUT, v+: VP, v-: {vminus}}}}}
  R1: {{kind: resistor, value: 9k, pins: {{1: IN, 2: X}}}}
"""


def _supply(tmp_path, *, lo="0 V", hi="1 V", ac="0 V", rs="1k", vn="-5 V", vn_tol="2%", vminus="VN", limit=""):
    path = tmp_path / "d.yaml"
    path.write_text(FOLLOWER.format(lo=lo, hi=hi, ac=ac, rs=rs, vn=vn, vn_tol=vn_tol, vminus=vminus, limit=limit),
                    encoding="utf-8")
    loaded = load_design(path)
    return analyse_supply(loaded, analyse(loaded)).opamps["U1"]


def test_span_at_asymmetric_rail_tolerances(tmp_path):
    # V+ = 5 V ± 10 % (4.5..5.5 V), V− = −5 V ± 2 % (−5.1..−4.9 V): the span runs from 4.5 + 4.9 = 9.4 V to
    # 5.5 + 5.1 = 10.6 V (hand calculation at the tolerance corners).
    c = _supply(tmp_path)
    assert c.span_min == pytest.approx(9.4) and c.span_max == pytest.approx(10.6)
    assert (c.supply_min, c.supply_max) == (pytest.approx(4.0), pytest.approx(36.0))


def test_span_with_v_minus_on_ground(tmp_path):
    # V− on ground: the span is V+ alone at its corners, 4.5..5.5 V (hand calculation).
    c = _supply(tmp_path, vminus="GND")
    assert c.span_min == pytest.approx(4.5) and c.span_max == pytest.approx(5.5)


@pytest.mark.parametrize(("hi", "ac", "beyond"), [
    # Nominal rails (5 V) plus the protection diode's 0.5 V (common practice for ESD structures): the input is
    # over-driven only past 5.5 V. Exactly 5.5 V is not past it; 6 V is 0.5 V past; 5 V with a 1 V peak is too.
    ("5.5 V", "0 V", None),
    ("6 V", "0 V", 0.5),
    ("5 V", "1 V", 0.5),
])
def test_overdrive_above_the_positive_rail(tmp_path, hi, ac, beyond):
    c = _supply(tmp_path, hi=hi, ac=ac)
    if beyond is None:
        assert c.inputs == ()
        return
    (d,) = c.inputs
    # current through the 1 kΩ source and 9 kΩ series resistor: 0.5 V / 10 kΩ = 50 µA (Ohm)
    assert d.beyond_v == pytest.approx(beyond)
    assert d.resistance == pytest.approx(10e3)
    assert d.current == pytest.approx(beyond / 10e3)
    assert d.pin == "in+"


@pytest.mark.parametrize(("lo", "beyond"), [("-5.5 V", None), ("-6.5 V", 1.0)])
def test_overdrive_below_the_negative_rail(tmp_path, lo, beyond):
    # −5 V less the diode's 0.5 V: −5.5 V exactly is not past it; −6.5 V is 1 V past, 100 µA through 10 kΩ (Ohm).
    c = _supply(tmp_path, lo=lo, hi="0 V")
    if beyond is None:
        assert c.inputs == ()
        return
    (d,) = c.inputs
    assert d.beyond_v == pytest.approx(beyond) and d.current == pytest.approx(1e-4)


def test_input_current_limit_declared_or_assumed(tmp_path):
    # No limit declared: 10 mA assumed (the common rating of input protection structures: common practice), and
    # said so; a declared 5 mA is used as given.
    assumed = _supply(tmp_path)
    assert assumed.input_current_limit == pytest.approx(10e-3) and "U1.input_current_limit" in assumed.assumed
    declared = _supply(tmp_path, limit="input_current_limit: 5 mA")
    assert declared.input_current_limit == pytest.approx(5e-3) and declared.assumed == ()


def test_current_with_and_without_series_resistance(tmp_path):
    # A 0 Ω source: only the 9 kΩ resistor limits the current, 1 V past gives 1 V / 9 kΩ (Ohm). With the source
    # straight on the pin nothing limits it: the current is unbounded (reported as infinite, never a division error).
    c = _supply(tmp_path, hi="6.5 V", rs="0")
    (d,) = c.inputs
    assert d.resistance == pytest.approx(9e3) and d.current == pytest.approx(1.0 / 9e3)
    path = tmp_path / "direct.yaml"
    text = FOLLOWER.format(lo="0 V", hi="6.5 V", ac="0 V", rs="0", vn="-5 V", vn_tol="2%", vminus="VN", limit="")
    text = text.replace("in+: X", "in+: IN").replace("  R1: {kind: resistor, value: 9k, pins: {1: IN, 2: X}}\n", "")
    path.write_text(text, encoding="utf-8")
    loaded = load_design(path)
    (direct,) = analyse_supply(loaded, analyse(loaded)).opamps["U1"].inputs
    assert direct.resistance == 0.0 and direct.current == math.inf
