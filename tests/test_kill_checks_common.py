"""Helpers every rule prints with, against their published definitions."""

from __future__ import annotations

import math

import pytest

from afecheck.checks.common import db


def test_decibels_of_a_voltage_ratio_are_20_log10_on_both_sides_of_unity() -> None:
    # level of a field quantity ratio: 20·log10(ratio) dB (IEC 60027-3, logarithmic quantities and units); ratios
    # below one (a small error against a signal, a loop gain under 0 dB) are negative, not minus infinity
    assert db(10.0) == pytest.approx(20.0, abs=1e-12)
    assert db(1.0) == 0.0
    assert db(0.5) == pytest.approx(-6.0206, abs=1e-4)
    assert db(1e-3) == pytest.approx(-60.0, abs=1e-12)
    assert db(0.0) == -math.inf
