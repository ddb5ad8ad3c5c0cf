"""The limits rules at their exact boundaries, with the figures they compare worked out by hand.

Supply span at the rails' tolerance corners is arithmetic on the declared rails; the input overdrive current is
Ohm's law across the series resistance once the source passes a rail by more than the protection diode's 0.5 V
(common practice for ESD structures, the drop afecheck documents). Each limit is then set exactly on the computed
figure (passes: the rule pages say "above"/"below") and one float past it (flagged).
"""

from __future__ import annotations

import dataclasses
import math

import pytest
from fixtures.rules import kit

from afecheck.analysis import analyse
from afecheck.analysis.supply import analyse_supply
from afecheck.checks.limits import capacitive_load, input_current, supply_range
from afecheck.model.load import load_design

PART = """
parts:
  GP:
    gbw: 5 MHz
    open_loop_gain: 110 dB
    second_pole: 25 MHz
    min_stable_gain: 1
    output_resistance: 50
    input_resistance_diff: 10 MΩ
    input_resistance_cm: 1 GΩ
    input_capacitance_diff: 0
    input_capacitance_cm: 0
    bias_current: 10 pA
    offset_current: 1 pA
    offset_voltage: 0.5 mV
    slew_rate: 5 V/us
    cmrr: 100 dB
    input_cm_low: -0.1 V
    input_cm_high: -0.1 V
    output_drop_low: 0.05 V
    output_drop_high: 0.05 V
    output_sat_resistance: 10
    output_current_limit: 40 mA
    supply_min: 4.5 V
    supply_max: 36 V
    max_capacitive_load: 100 pF
{extra}"""


def _load(tmp_path, body: str, extra: str = "    input_current_limit: 10 mA\n"):
    path = tmp_path / "d.yaml"
    path.write_text("afecheck: 1\nname: limits boundary\n" + PART.format(extra=extra) + body, encoding="utf-8")
    loaded = load_design(path)
    return loaded, analyse(loaded)


def _with_part(loaded, **changes):
    parts = {name: m.model_copy(update=changes) for name, m in loaded.parts.items()}
    return dataclasses.replace(loaded, parts=parts)


def _run(module, loaded, analysis):
    return [f for f in kit.run(module, loaded, analysis.stages, nets=dict(analysis.nets))
            if f.confidence != "not-evaluated"]


FOLLOWER = """
rails:
  VP: {{voltage: {vp}, tolerance: {tol}}}
  VN: {{voltage: {vn}, tolerance: {tol}}}
signals:
  IN: {{dc: [{lo}, {hi}], ac_amplitude: {ac}, band: [1 Hz, 1 kHz], source_resistance: {rs}}}
components:
  R1: {{kind: resistor, value: {r1}, tolerance: 1%, pins: {{1: IN, 2: P}}}}
  U1: {{kind: opamp, part: GP, pins: {{in+: P, in-: OUT, out: OUT, v+: VP, v-: {minus}}}}}
loads:
  OUT: {{resistance: 10k, capacitance: {cl}}}
"""


def _follower(tmp_path, vp="16 V", vn="-16 V", tol="25%", lo="0 V", hi="0 V", ac="0 V", rs=0, r1=100, cl="0",
              minus="VN", extra="    input_current_limit: 10 mA\n"):
    return _load(tmp_path, FOLLOWER.format(vp=vp, vn=vn, tol=tol, lo=lo, hi=hi, ac=ac, rs=rs, r1=r1, cl=cl,
                                           minus=minus), extra)


def test_supply_span_is_the_rails_corners_worked_by_hand(tmp_path) -> None:
    # ±16 V at 25 %: V+ 12..20 V, V− −20..−12 V, so the span is 24..40 V (chosen so every figure is exact)
    loaded, analysis = _follower(tmp_path)
    c = analyse_supply(loaded, analysis).opamps["U1"]
    assert (c.span_min, c.span_max) == (24.0, 40.0)
    # V− on ground: the span is V+ alone, 12..20 V
    loaded, analysis = _follower(tmp_path, minus="GND")
    c = analyse_supply(loaded, analysis).opamps["U1"]
    assert (c.span_min, c.span_max) == (12.0, 20.0)


def test_supply_range_limits_exactly(tmp_path) -> None:
    loaded, analysis = _follower(tmp_path)
    assert _run(supply_range, _with_part(loaded, supply_min=24.0, supply_max=40.0), analysis) == []
    (f,) = _run(supply_range, _with_part(loaded, supply_min=24.0, supply_max=math.nextafter(40.0, 0)), analysis)
    assert f.ctx["value"] == 40.0 and "maximum" in f.message
    assert (f.ctx["limit"], f.ctx["margin"]) == (math.nextafter(40.0, 0), math.nextafter(40.0, 0) - 40.0)
    (f,) = _run(supply_range, _with_part(loaded, supply_min=math.nextafter(24.0, 99), supply_max=40.0), analysis)
    assert f.ctx["value"] == 24.0 and "minimum" in f.message
    assert (f.ctx["limit"], f.ctx["margin"]) == (math.nextafter(24.0, 99), 24.0 - math.nextafter(24.0, 99))
    # a part with no declared range is never flagged
    assert _run(supply_range, _with_part(loaded, supply_min=None, supply_max=None), analysis) == []


def test_input_overdrive_current_is_ohms_law_past_the_diode(tmp_path) -> None:
    # +12 V DC and 1 V peak into ±5 V rails through 100 Ω + 100 Ω source: (12 + 1 − 5 − 0.5)/200 = 37.5 mA
    loaded, analysis = _follower(tmp_path, vp="5 V", vn="-5 V", tol="0%", lo="0 V", hi="12 V", ac="1 V", rs=100)
    (d,) = analyse_supply(loaded, analysis).opamps["U1"].inputs
    assert (d.beyond_v, d.resistance) == (7.5, 200.0)
    assert d.current == pytest.approx(7.5 / 200, rel=1e-15)
    # the low side alone: −9 V − 1 V peak against −5 V − 0.5 V is 4.5 V past, through 200 Ω
    loaded, analysis = _follower(tmp_path, vp="5 V", vn="-5 V", tol="0%", lo="-9 V", hi="0 V", ac="1 V", rs=100)
    (d,) = analyse_supply(loaded, analysis).opamps["U1"].inputs
    assert d.beyond_v == 4.5 and d.current == pytest.approx(4.5 / 200, rel=1e-15)
    # within a diode drop of the rail: no overdrive at all
    loaded, analysis = _follower(tmp_path, vp="5 V", vn="-5 V", tol="0%", lo="-5.5 V", hi="5.5 V", ac="0 V")
    assert analyse_supply(loaded, analysis).opamps["U1"].inputs == ()


def test_input_current_limit_exactly(tmp_path) -> None:
    loaded, analysis = _follower(tmp_path, vp="5 V", vn="-5 V", tol="0%", lo="0 V", hi="12 V", rs=0)
    current = 6.5 / 100  # (12 − 5 − 0.5) V across R1
    assert _run(input_current, _with_part(loaded, input_current_limit=current), analysis) == []
    (f,) = _run(input_current, _with_part(loaded, input_current_limit=math.nextafter(current, 0)), analysis)
    assert f.ctx["value"] == pytest.approx(current, rel=1e-15) and f.ctx["resistance"] == 100.0
    assert f.ctx["limit"] == math.nextafter(current, 0)
    assert f.ctx["margin"] == pytest.approx(math.nextafter(current, 0) - current, abs=1e-17) and f.ctx["margin"] < 0


def test_input_current_limit_defaults_to_10_ma_and_says_so(tmp_path) -> None:
    loaded, analysis = _follower(tmp_path, vp="5 V", vn="-5 V", tol="0%", lo="0 V", hi="12 V", extra="")
    c = analyse_supply(loaded, analysis).opamps["U1"]
    assert c.input_current_limit == 10e-3 and "U1.input_current_limit" in c.assumed
    loaded, analysis = _follower(tmp_path, vp="5 V", vn="-5 V", tol="0%", lo="0 V", hi="12 V")
    assert analyse_supply(loaded, analysis).opamps["U1"].assumed == ()


DIRECT = """
rails:
  VP: {{voltage: 5 V}}
  VN: {{voltage: -5 V}}
signals:
  IN: {{dc: [0 V, 12 V], band: [1 Hz, 1 kHz], source_resistance: {rs}}}
components:
  U1: {{kind: opamp, part: GP, pins: {{in+: IN, in-: OUT, out: OUT, v+: VP, v-: VN}}}}
loads:
  OUT: {{resistance: 10k}}
"""


def test_an_overdrive_with_no_resistance_is_named_by_its_voltage(tmp_path) -> None:
    loaded, analysis = _load(tmp_path, DIRECT.format(rs=0))
    (d,) = analyse_supply(loaded, analysis).opamps["U1"].inputs
    assert d.resistance == 0.0 and d.current == math.inf
    (f,) = _run(input_current, loaded, analysis)
    assert f.ctx["value"] == 6.5 and "no resistance" in f.message
    assert (f.ctx["limit"], f.ctx["margin"]) == (0.0, -6.5)


def test_capacitive_load_limit_exactly(tmp_path) -> None:
    loaded, analysis = _follower(tmp_path, vp="5 V", vn="-5 V", tol="0%", cl="100 pF")
    c = analyse_supply(loaded, analysis).opamps["U1"]
    assert c.load_capacitance == pytest.approx(100e-12, rel=1e-12)  # the declared load, nothing else on OUT
    at = c.load_capacitance
    assert _run(capacitive_load, _with_part(loaded, max_capacitive_load=at), analysis) == []
    (f,) = _run(capacitive_load, _with_part(loaded, max_capacitive_load=math.nextafter(at, 0)), analysis)
    assert f.ctx["value"] == at
    assert (f.ctx["limit"], f.ctx["margin"]) == (math.nextafter(at, 0), math.nextafter(at, 0) - at)
    riso = analyse_supply(_with_part(loaded, max_capacitive_load=math.nextafter(at, 0)), analysis).opamps["U1"]
    assert riso.isolation_resistance is not None and f.ctx["isolation_resistance"] == riso.isolation_resistance
    assert f"{riso.phase_margin_with_iso_deg:.1f}° of phase margin" in f.message
    assert _run(capacitive_load, _with_part(loaded, max_capacitive_load=None), analysis) == []


def test_a_fraction_of_an_ohm_still_limits_the_current(tmp_path) -> None:
    # 6.5 V past the diode through a 0.5 Ω source: Ohm's law gives 13 A, a current, not the "no resistance" case
    loaded, analysis = _load(tmp_path, DIRECT.format(rs=0.5))
    (f,) = _run(input_current, loaded, analysis)
    assert f.ctx["value"] == pytest.approx(13.0, rel=1e-12) and f.ctx["unit"] == "A"
    assert "no resistance" not in f.message
