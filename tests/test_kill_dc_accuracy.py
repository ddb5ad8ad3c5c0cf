"""dc-accuracy.sensor-self-heating at its exact limits, its figures equal to the self-heating computation.

Hand calculation (Ohm's law; ΔT = P/δ, IEC 60751:2022): 2.5 V across 4.99 kΩ + a Pt1000 at 0 °C (1000 Ω) drives
2.5/5990 A, so the sensor takes 1000·(2.5/5990)² = 174.2 µW; at δ = 2 mW/K it runs 0.0871 °C warm, 29.0 % of
class B's ±0.30 °C at 0 °C (IEC 60751: ±(0.30 + 0.005·|t|) °C).
"""

from __future__ import annotations

import math

import pytest
from fixtures.rules import kit

from afecheck.checks.common import noise_floor, print_tolerance
from afecheck.checks.dc_accuracy import sensor_self_heating
from afecheck.engine.finding import Severity
from afecheck.model.load import load_design
from afecheck.sensors.self_heating import self_heating

DESIGN = """afecheck: 1
name: self-heating boundary
rails:
  VREF: {{voltage: 2.5 V}}
components:
  R1: {{kind: resistor, value: 4.99k, pins: {{1: VREF, 2: RTD}}}}
  RT1: {{kind: rtd, r0: 1000, temperature: [0 °C, 0 °C], dissipation: 2 mW/K, {extra}pins: {{1: RTD, 2: GND}}}}
loads:
  RTD: {{resistance: 1T}}
"""


def _load(tmp_path, extra: str = "class: B, "):
    path = tmp_path / "d.yaml"
    path.write_text(DESIGN.format(extra=extra), encoding="utf-8")
    return load_design(path)


def _run(loaded, **params):
    return kit.run(sensor_self_heating, loaded, (), params=params or None)


def test_self_heating_figures_by_hand(tmp_path) -> None:
    loaded = _load(tmp_path)
    s = self_heating(loaded, "RT1")
    p = 1000.0 * (2.5 / 5990.0) ** 2
    # (the 1 TΩ load across the sensor moves these by 1e-9)
    assert s.power_w == pytest.approx(p, rel=1e-8) and s.rise_k == pytest.approx(p / 2e-3, rel=1e-8)
    assert s.accuracy_k == pytest.approx(0.30, rel=1e-12)
    # 29.0 %: over the 25 % warning share, under the 100 % error share
    (f,) = _run(loaded)
    assert f.severity is Severity.WARNING and f.ctx["value"] == s.rise_k and f.ctx["share"] == s.rise_k / 0.30
    assert f.ctx["limit"] == pytest.approx(0.25 * 0.30, rel=1e-12)
    assert f.ctx["margin"] == pytest.approx(0.075 - s.rise_k, rel=1e-12)
    assert "29.0 % of its accuracy there, ±0.3 °C" in f.message and "(limit 25.0 %, 0.075 °C)" in f.message
    assert f.location.refs == ("RT1",)


def _smallest_limit_met(value: float) -> float:
    """The smallest limit ``value`` still meets under docs/CONFIDENCE.md's policy: a value within half a unit of the
    limit's third printed digit (or round-off, 1e-9 relative) meets it."""
    def meets(limit: float) -> bool:
        return value <= limit + max(print_tolerance(limit), noise_floor(value, limit))
    limit = value - print_tolerance(value)
    while not meets(limit):
        limit = math.nextafter(limit, math.inf)
    while meets(math.nextafter(limit, 0.0)):
        limit = math.nextafter(limit, 0.0)
    return limit


def test_self_heating_exactly_at_each_share(tmp_path) -> None:
    loaded = _load(tmp_path)
    s = self_heating(loaded, "RT1")
    edge = _smallest_limit_met(s.rise_k / s.accuracy_k)
    below = math.nextafter(edge, 0.0)
    assert _run(loaded, share_warn=edge) == []
    (f,) = _run(loaded, share_warn=below)
    assert f.severity is Severity.WARNING and f.ctx["limit"] == pytest.approx(below * 0.30, rel=1e-12)
    assert _run(loaded, share_warn=0.1, share_error=edge)[0].severity is Severity.WARNING
    (f,) = _run(loaded, share_warn=0.1, share_error=below)
    assert f.severity is Severity.ERROR and f.ctx["limit"] == pytest.approx(below * 0.30, rel=1e-12)


def test_a_sensor_with_no_accuracy_is_not_evaluated_and_one_without_dissipation_is_skipped(tmp_path) -> None:
    (f,) = _run(_load(tmp_path, extra=""))
    assert f.confidence == "not-evaluated" and "0.0871 °C" in f.message
    path = tmp_path / "quiet.yaml"
    path.write_text(DESIGN.format(extra="class: B, ").replace("dissipation: 2 mW/K, ", ""), encoding="utf-8")
    assert _run(load_design(path)) == []
