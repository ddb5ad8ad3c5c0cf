"""Where the plotted curves are swept: the decade grid's exact ends, the closed-loop sweep's span around the band and
the crossover, and the band a stage is judged over when its signal declares a band from DC."""

from __future__ import annotations

import math

import numpy as np
import pytest

from afecheck.analysis.curves import decade_grid, design_curves
from afecheck.model.load import load_design
from tests.test_curves import GAIN5


def test_decade_grid_ends_exactly_on_grid_points_given_in_floating_point():
    # 10^(1/20) and 10^(2/20) as floats give log10·20 = 0.9999999999999992 and 2.0000000000000004: the grid of an
    # 'ac dec 20' sweep started there holds exactly those two points, not a neighbour either side (hand check)
    f = decade_grid(10 ** (1 / 20), 10 ** (2 / 20), 20)
    assert f.size == 2
    assert f[0] == pytest.approx(10 ** (1 / 20), rel=1e-12) and f[-1] == pytest.approx(10 ** (2 / 20), rel=1e-12)
    # a range of one frequency still gives a sweep of two points, the second one step up
    one = decade_grid(10.0, 10.0, 20)
    assert one.size == 2 and one[0] == pytest.approx(10.0) and one[1] == pytest.approx(10 ** (21 / 20))


def _curves(tmp_path, text: str):
    path = tmp_path / "d.yaml"
    path.write_text(text, encoding="utf-8")
    return design_curves(load_design(path))


def test_closed_loop_sweep_spans_a_decade_beyond_the_band_and_three_times_the_crossover(tmp_path):
    # The closed-loop plot runs from a decade below the band's 10 Hz (1 Hz, a grid point) to three times the loop
    # crossover (above the band's decade, 100 kHz), rounded up to the next point of 20 a decade (the module's
    # documented sweep: curves.py)
    analysis, curves = _curves(tmp_path, GAIN5)
    (resp,) = curves["U1"].closed_loop
    fc = analysis.stages[0].crossover_hz
    assert resp.freqs_hz[0] == pytest.approx(1.0, rel=1e-12)
    top = 10 ** (math.ceil(20 * math.log10(3 * fc) - 1e-9) / 20)
    assert resp.freqs_hz[-1] == pytest.approx(top, rel=1e-12)
    assert np.allclose(np.diff(np.log10(resp.freqs_hz)), 1 / 20)
    # the loop gain's own sweep is on the same 20-a-decade grid
    assert np.allclose(np.diff(np.log10(curves["U1"].loop_gain.freqs_hz)), 1 / 20)


def test_a_band_from_dc_is_judged_over_two_decades_below_its_top(tmp_path):
    # A band declared from 0 Hz has no lower edge to show: the plot is judged from a hundredth of its top,
    # 10 kHz/100 = 100 Hz, and the closed-loop sweep starts a decade below that, at 10 Hz
    _, curves = _curves(tmp_path, GAIN5.replace("band: [10 Hz, 10 kHz]", "band: [0 Hz, 10 kHz]"))
    assert curves["U1"].band_hz == (pytest.approx(100.0), pytest.approx(1e4))
    assert curves["U1"].closed_loop[0].freqs_hz[0] == pytest.approx(10.0, rel=1e-12)
