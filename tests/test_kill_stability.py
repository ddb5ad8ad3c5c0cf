"""Stability causes: the isolation-resistor suggestion is an E12 value, checked against the standard's table."""

from __future__ import annotations

import pytest

from afecheck.checks.stability.causes import isolation_resistor

# IEC 60063, E12 series (one decade), typed from the standard's table
IEC_60063_E12 = (10, 12, 15, 18, 22, 27, 33, 39, 47, 56, 68, 82)


@pytest.mark.parametrize("value", IEC_60063_E12)
def test_an_output_resistance_that_is_an_e12_value_is_suggested_as_is(value: int) -> None:
    # Riso ≈ Ro (common practice), rounded to the nearest E12 value: an Ro that already is one comes back unchanged
    assert isolation_resistor(float(value)) == pytest.approx(value, rel=1e-12)


def test_between_two_e12_values_the_nearer_on_a_log_scale_wins() -> None:
    # 30 Ω lies between 27 and 33: ln(33/30) = 0.0953 is less than ln(30/27) = 0.1054, so 33 Ω is nearer
    assert isolation_resistor(30.0) == pytest.approx(33.0)
    # 100 Ω and above: the top of the 10..100 Ω window
    assert isolation_resistor(100.0) == pytest.approx(100.0) and isolation_resistor(1e3) == pytest.approx(100.0)
