"""Headroom operating-range numbers (checks/headroom/limits.py) worked by hand.

The swing model is the one docs/FORMAT.md gives for a part: the output reaches within ``output_drop`` of a rail,
less ``output_sat_resistance`` times the output current (common practice for rail-to-rail outputs); the rails are
taken at the tolerance corner that leaves the least room.
"""

from __future__ import annotations

import pytest
from fixtures.rules import kit

from afecheck.analysis.results import DesignAnalysis
from afecheck.checks.headroom import floating_input, input_common_mode, output_swing, supply_rail
from afecheck.checks.headroom.limits import cm_extremes, output_current, output_extremes, swing, worst_rails
from afecheck.checks.stability import phase_margin
from afecheck.engine.context import Context
from afecheck.engine.finding import Severity

SPLIT = {"U1": {**kit.OPAMP, "pins": {**kit.OPAMP["pins"], "v-": "VEE"}}}


def _ctx(loaded, nets=None):
    ctx = Context(loaded)
    ctx.memo("analysis", lambda: DesignAnalysis(stages=(), nets=nets or {}, not_evaluated=()))
    return ctx.for_rule(phase_margin.META)


def test_worst_rails_move_each_rail_inward_by_its_tolerance() -> None:
    # ±5 V at 10 %: V+ 4.5 V, V− −4.5 V (hand calculation); a rail with no tolerance stays where it is
    loaded = kit.design(SPLIT, rails={"VCC": {"voltage": 5.0, "tolerance": 0.1},
                                      "VEE": {"voltage": -5.0, "tolerance": 0.1}})
    st = kit.stage(rail_plus=5.0, rail_minus=-5.0)
    assert worst_rails(_ctx(loaded), st) == pytest.approx((-4.5, 4.5), rel=1e-15)
    loaded = kit.design(SPLIT, rails={"VCC": {"voltage": 5.0, "tolerance": 0.1}, "VEE": {"voltage": -5.0}})
    assert worst_rails(_ctx(loaded), st) == pytest.approx((-5.0, 4.5), rel=1e-15)
    # a supply pin on a net that is not a declared rail (a regulator's output, say) has no tolerance to apply
    loaded = kit.design(SPLIT, rails={"VCC": {"voltage": 5.0, "tolerance": 0.1}})
    assert worst_rails(_ctx(loaded), st) == pytest.approx((-5.0, 4.5), rel=1e-15)


def test_extremes_widen_the_dc_range_by_the_ac_peak() -> None:
    st = kit.stage(vcm_min=1.0, vcm_max=2.0, vout_min=1.0, vout_max=3.0, vout_ac_peak=0.5)
    ctx = _ctx(kit.design(), nets={"INP": kit.net("INP", 1.0, 2.0, ac=0.25)})
    assert cm_extremes(ctx, st) == (0.75, 2.25)
    assert cm_extremes(_ctx(kit.design()), st) == (1.0, 2.0)  # no AC on in+
    assert cm_extremes(ctx, kit.stage(vcm_min=None)) is None and cm_extremes(ctx, kit.stage(vcm_max=None)) is None
    assert output_extremes(st) == (0.5, 3.5)
    assert output_extremes(kit.stage(vout_min=None)) is None and output_extremes(kit.stage(vout_max=None)) is None


def test_output_current_is_the_analysis_peak_else_ohms_law() -> None:
    assert output_current(kit.stage(iout_peak=-0.012), 3.0) == 0.012
    assert output_current(kit.stage(load_resistance=1e3), -2.0) == pytest.approx(2e-3, rel=1e-15)  # 2 V / 1 kΩ
    assert output_current(kit.stage(load_resistance=None), 2.0) == 0.0


def test_swing_limits_by_hand() -> None:
    # KIT-AMP: 0.1 V drop each side, 50 Ω saturation resistance; 5 V and ground; 1 kΩ load; output 1..3 V ± 0.5 V
    # high: 5 − 0.1 − 50·3.5 mA = 4.725 V; low: 0 + 0.1 + 50·0.5 mA = 0.125 V (hand calculation)
    st = kit.stage(vout_min=1.0, vout_max=3.0, vout_ac_peak=0.5, load_resistance=1e3)
    s = swing(_ctx(kit.design()), st)
    assert (s.high_limit, s.low_limit) == (pytest.approx(4.725, rel=1e-14), pytest.approx(0.125, rel=1e-14))
    assert (s.low_required, s.high_required) == (0.5, 3.5) and s.assumed == ()
    assert swing(_ctx(kit.design()), kit.stage(vout_min=None)) is None


def test_output_swing_without_an_output_range_is_not_evaluated() -> None:
    # either end of the output range missing: the rule says so (never a silent pass)
    for changes in ({"vout_min": None}, {"vout_max": None}, {"vout_min": None, "vout_max": None}):
        (f,) = kit.run(output_swing, kit.design(), [kit.stage(**changes)])
        assert f.confidence == "not-evaluated" and f.message.startswith("U1 output range not evaluated")


def test_output_swing_clipping_by_hand_without_a_sensor_note() -> None:
    # 1..4.8 V required on 5 V with 0.1 V drop and 50 Ω × 4.8 mA (1 kΩ load): limit 4.66 V, 0.14 V short
    st = kit.stage(vout_min=1.0, vout_max=4.8, load_resistance=1e3)
    (f,) = kit.run(output_swing, kit.design(), [st])
    assert f.ctx["limit"] == pytest.approx(5.0 - 0.1 - 50 * 4.8e-3, rel=1e-12)
    assert f.ctx["margin"] == pytest.approx(-0.14, rel=1e-9)
    assert f.message.split(". Fix:")[0].endswith("(140 mV short): the signal clips")


def test_supply_pin_off_any_rail_names_the_nearest_rail() -> None:
    # the supply must be known to judge any range (afecheck format, rails:); a near miss of a rail's name is offered
    # (difflib ratio 2·3/7 = 0.86 for GNDA against GND, over the 0.6 cutoff; nothing near XYZ)
    u1 = {"U1": {**kit.OPAMP, "pins": {**kit.OPAMP["pins"], "v-": "GNDA"}}}
    r1 = {"R1": {"kind": "resistor", "value": 1e3, "pins": {"1": "XYZ", "2": "GND"}}}
    (f,) = kit.run(supply_rail, kit.design(u1 | r1), ())
    assert f.message.startswith("U1 v-: GNDA is not a declared rail; did you mean GND? (declared rails: GND, VCC)")
    assert (f.ctx["value"], f.ctx["limit"], f.ctx["margin"]) == (0.0, 0.0, 0.0) and f.location.pins == ("v-",)
    u1 = {"U1": {**kit.OPAMP, "pins": {**kit.OPAMP["pins"], "v+": "XYZ"}}}
    (f,) = kit.run(supply_rail, kit.design(u1), ())
    assert f.message.startswith("U1 v+: XYZ is not a declared rail (declared rails: GND, VCC)")
    # a rail declared without a voltage is named as such, and is not among the rails with a known voltage
    u1 = {"U1": {**kit.OPAMP, "pins": {**kit.OPAMP["pins"], "v+": "VBAT"}}}
    (f,) = kit.run(supply_rail, kit.design(u1, rails={"VCC": {"voltage": 5.0}, "VBAT": {}}), ())
    assert f.message.startswith("U1 v+: rail VBAT declares no voltage (declared rails: GND, VCC)")
    # both pins on declared rails with voltages: nothing to say
    assert kit.run(supply_rail, kit.design(r1), ()) == []


def test_an_input_with_no_dc_path_is_named_with_what_sits_on_it() -> None:
    # in+ reached only through a series capacitor: no DC return for its bias current (Jung, Op Amp Applications
    # Handbook, 2005, ch. 1)
    c1 = {"C1": {"kind": "capacitor", "value": 1e-6, "pins": {"1": "SIG", "2": "INP"}},
          "C2": {"kind": "capacitor", "value": 1e-9, "pins": {"1": "INP", "2": "GND"}},
          "RF": {"kind": "resistor", "value": 10e3, "pins": {"1": "INM", "2": "OUT"}},
          "RG": {"kind": "resistor", "value": 10e3, "pins": {"1": "INM", "2": "GND"}}}
    (f,) = kit.run(floating_input, kit.design(c1, signals={"SIG": {"dc": [1.0, 1.0]}}), [kit.stage()])
    assert f.message.startswith("U1 in+ on INP has no DC path to a defined voltage (only C1, C2 on it)")
    assert f.location.refs == ("U1", "C1") and f.ctx["pin"] == "in+"
    assert (f.ctx["value"], f.ctx["limit"], f.ctx["margin"]) == (0.0, 0.0, 0.0)  # a path exists or not
    # a bias resistor to ground gives it one
    rb = {"RB": {"kind": "resistor", "value": 1e6, "pins": {"1": "INP", "2": "GND"}}}
    assert kit.run(floating_input, kit.design(c1 | rb, signals={"SIG": {"dc": [1.0, 1.0]}}), [kit.stage()]) == []


def test_a_floating_inverting_input_is_left_to_the_feedback_rule_or_a_switching_stage() -> None:
    # capacitor-only feedback with no DC loop: stability.feedback-sense reports it; a comparator's in− may float
    cf = {"CF": {"kind": "capacitor", "value": 1e-9, "pins": {"1": "INM", "2": "OUT"}},
          "RB": {"kind": "resistor", "value": 1e6, "pins": {"1": "INP", "2": "GND"}}}
    assert kit.run(floating_input, kit.design(cf), [kit.stage(feedback="none")]) == []
    (f,) = kit.run(floating_input, kit.design(cf), [kit.stage(feedback="negative")])
    assert f.ctx["pin"] == "in-"
    comparator = cf | {"U1": {**kit.OPAMP, "role": "comparator"}}
    assert kit.run(floating_input, kit.design(comparator), [kit.stage(feedback="negative")]) == []


def test_input_common_mode_low_limit_is_the_negative_rail_plus_the_parts_headroom() -> None:
    # headroom.input-common-mode at the low end: a part whose inputs must stay 0.2 V above V− (input_cm_low 0.2 V)
    # on a 0..5 V supply has its lowest common mode at 0 + 0.2 = 0.2 V (docs/FORMAT.md's headroom model, by hand);
    # a common mode down to 0.1 V is 0.1 V beyond it, an error quoting that limit and margin.
    loaded = kit.design(part={"input_cm_low": 0.2})
    (f,) = kit.run(input_common_mode, loaded, [kit.stage(vcm_min=0.1, vcm_max=2.0)])
    assert f.severity == Severity.ERROR
    assert f.ctx["limit"] == pytest.approx(0.2, abs=1e-12)
    assert f.ctx["margin"] == pytest.approx(-0.1, abs=1e-12)
