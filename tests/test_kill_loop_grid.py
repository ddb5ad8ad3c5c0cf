"""The loop-gain and log grids by their documented definitions (hand calculation): from fp1/30 to 100 times the
larger of the gain-bandwidth and a second pole (one counted only below 1000 x GBW), both ends included."""

from __future__ import annotations

import math

import numpy as np
import pytest

from afecheck.analysis.loop import default_loop_grid
from afecheck.analysis.mna import log_grid
from afecheck.analysis.netlist import OpAmpInstance


def _op(a0: float, fp1: float, fp2: float) -> OpAmpInstance:
    return OpAmpInstance("U1", "p", "m", "o", "U1#gain", a0, fp1, fp2, 0.0)


@pytest.mark.parametrize(("fp2", "top"), [
    (30e6, 3e9),         # a second pole above the 10 MHz GBW: 100 × 30 MHz
    (1e6, 1e9),          # below the GBW: 100 × GBW
    (math.inf, 1e9),     # a single-pole part: 100 × GBW
    (1e10, 1e9),         # a pole at 1000 × GBW exactly is not counted (exact boundary)
    (0.99e10, 0.99e12),  # just below it is
])
def test_default_loop_grid_ends(fp2, top):
    # A0 = 1e5 with fp1 = 100 Hz: GBW = 10 MHz; the grid starts at fp1/30 = 3.333 Hz, 12 points a decade
    f = default_loop_grid(_op(1e5, 100.0, fp2))
    assert f[0] == pytest.approx(100.0 / 30.0, rel=1e-12)
    assert f[-1] == pytest.approx(top, rel=1e-12)
    decades = math.log10(top / (100.0 / 30.0))
    assert f.size == math.ceil(decades * 12) + 1


def test_log_grid_is_inclusive_with_at_least_two_points():
    # 10 Hz..10 kHz at 20 a decade: 3·20 + 1 = 61 points, equal ratios 10^(1/20) (hand calculation)
    f = log_grid(10.0, 1e4)
    assert f.size == 61 and np.allclose(f[1:] / f[:-1], 10 ** (1 / 20))
    # a range narrower than one step still has both ends
    g = log_grid(10.0, 10.01)
    assert g.size == 2 and g[0] == pytest.approx(10.0) and g[1] == pytest.approx(10.01)
    with pytest.raises(ValueError):
        log_grid(10.0, 10.0)
