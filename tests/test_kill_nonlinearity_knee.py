"""End-point nonlinearity whose worst grid point is the second of the 17: the vertex search still runs there."""

from __future__ import annotations

import math

import pytest

from afecheck.analysis.dc_error import analyse_dc_error
from afecheck.model.load import load_design

A0 = 1e5
# A wide-range thermistor (B = 5000 K, -80..300 °C) read by a constant 1 nA into it, buffered: the output is I·R(T),
# which falls by a factor of about e^17 across the range, so its deviation from the chord peaks near 8 % of the way.
CURRENT_READ = f"""
afecheck: 1
name: current-read thermistor
parts:
  P: {{gbw: 1 MHz, open_loop_gain: {A0:g}, output_resistance: 0, input_resistance_diff: 1e15,
      input_resistance_cm: 1e15, offset_voltage: 0, bias_current: 0, offset_current: 0}}
rails: {{VP: {{voltage: 10 V}}, VN: {{voltage: -10 V}}}}
signals:
  S: {{kind: current, current: [1 nA, 1 nA]}}
components:
  TH: {{kind: ntc, r25: 10k, beta: 5000 K, temperature: [-80 °C, 300 °C], pins: {{1: S, 2: GND}}}}
  U1: {{kind: opamp, part: P, pins: {{in+: S, in-: OUT, out: OUT, v+: VP, v-: VN}}}}
"""


def _out(t_c: float) -> float:
    """1 nA × the Beta model R = R25·exp(B·(1/T − 1/298.15 K)) (IEC 60539-1 B-value), through a follower of gain
    A0/(1 + A0) (S. Franco, "Design with Operational Amplifiers and Analog Integrated Circuits", 4th ed., ch. 1)."""
    return 1e-9 * 10e3 * math.exp(5000.0 * (1 / (t_c + 273.15) - 1 / 298.15)) * A0 / (1 + A0)


def test_a_deviation_peaking_next_to_the_low_end_is_refined(tmp_path):
    path = tmp_path / "d.yaml"
    path.write_text(CURRENT_READ, encoding="utf-8")
    nl = analyse_dc_error(load_design(path), ["OUT"]).nets["OUT"].nonlinearity
    lo, hi = -80.0, 300.0
    # rel 1e-6: the op-amp's 1e15 Ω input resistance beside the thermistor's 91 MΩ at -80 °C takes 1e-7 of the current
    assert list(nl.outputs) == pytest.approx([_out(lo + p * (hi - lo)) for p in nl.points], rel=1e-6)
    # end-point nonlinearity by definition (ISA-51.1 terminal-based linearity, from memory), searched on 20001 points
    v0, v1 = _out(lo), _out(hi)
    grid = [k / 20000 for k in range(20001)]
    dev = [_out(lo + p * (hi - lo)) - (v0 + p * (v1 - v0)) for p in grid]
    k = max(range(len(dev)), key=lambda i: abs(dev[i]))
    assert 1 / 16 - 1 / 32 < grid[k] < 1 / 16 + 1 / 32  # the grid's second point is the nearest to the peak
    # the reported worst is a solved point at the vertex of the parabola through the second point and its
    # neighbours: within 0.5 % of the dense search's peak here (the grid point itself is 1.3 % short of it)
    assert nl.worst == pytest.approx(dev[k], rel=5e-3)
    assert abs(nl.worst) > abs(dev[grid.index(1 / 16)])
    assert 1 / 16 < nl.at < 1 / 8
    # what moved: the thermistor is a part; S is a net's declared signal, named in words but not a part
    assert nl.over == "TH -80 to 300 °C; S over its declared range" and nl.refs == ("TH",)
