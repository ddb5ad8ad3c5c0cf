"""Headroom operating-range numbers (checks/headroom/limits.py) worked by hand.

The swing model is the one docs/FORMAT.md gives for a part: the output reaches within ``output_drop`` of a rail,
less ``output_sat_resistance`` times the output current (common practice for rail-to-rail outputs); the rails are
taken at the tolerance corner that leaves the least room.
"""

from __future__ import annotations

import pytest
from fixtures.rules import kit

from afecheck.analysis.results import DesignAnalysis
from afecheck.checks.headroom.limits import cm_extremes, output_current, output_extremes, swing, worst_rails
from afecheck.checks.stability import phase_margin
from afecheck.engine.context import Context

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
