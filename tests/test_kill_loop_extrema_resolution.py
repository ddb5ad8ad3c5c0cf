"""The extremum search's resolution: a twin-T notch that dips 0.15 % under unity over a band only 2.2e-5 wide in
ln f is found wherever it falls between the points of a 12-a-decade grid.

The search narrows the two-step interval around a grid minimum (1/6 decade, ln 10/6 = 0.384 in ln f) to two of its
23 sub-steps per round; its fourth and last sub-grid has samples 0.384·(2/23)³/23 = 1.1e-5 apart, so one of them
lies inside any dip through unity wider than that (loop.py, _locate_extrema). Reference: the twin-T loop of
test_loop_crossings with its shunt resistor detuned further (the notch shallower), written out by nodal analysis
with numpy and bisected; nothing of afecheck's solver or grid."""

from __future__ import annotations

import numpy as np
import pytest
import test_loop_crossings
from test_kill_loop_extrema import notch_edges, notch_net
from test_loop_crossings import notch_loop

from afecheck.analysis.loop import default_loop_grid, loop_gain

SHALLOW = 7.988e-4  # the shunt resistor 0.08 % off R/2: |T| bottoms out at 0.9985 near 1 kHz
OFFSETS = 8  # the grid slid through one of its steps in eighths


def test_a_notch_dipping_just_under_unity_is_found_at_every_position_between_grid_points(monkeypatch) -> None:
    monkeypatch.setattr(test_loop_crossings, "DETUNE", SHALLOW)
    net = notch_net(SHALLOW)
    _, lowest, fall, rise = notch_edges(999.0, 1001.0)
    assert 0.998 < lowest < 0.999
    assert 2e-5 < np.log(rise / fall) < 2.4e-5  # twice the search's last sample spacing
    base = default_loop_grid(net.opamps["U1"])
    for k in range(OFFSETS):
        grid = base * 10 ** (k / (12 * OFFSETS))
        near = grid[(grid > 500.0) & (grid < 2000.0)]
        assert np.all(np.abs(notch_loop(near)) > 1.0)  # no grid point falls inside the notch
        lg = loop_gain(net, "U1", grid)
        assert len(lg.crossovers_hz) == 3, k  # the notch's two edges and the final crossover
        assert lg.crossovers_hz[:2] == pytest.approx((fall, rise), rel=1e-6)
