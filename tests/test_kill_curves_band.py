"""The band a stage's closed-loop plot is judged over (curves.py): a stage driven by its own signals takes their
lowest band edge even when another signal of the design reaches lower; a stage fed only by another stage takes the
design's lowest edge; a stage that only sees DC has no band at all. Expected values read off the design by hand."""

from __future__ import annotations

import math

import pytest

from afecheck.analysis.curves import decade_grid, design_curves
from afecheck.model.load import load_design
from tests.test_curves import GAIN5

# GAIN5's U1 (gain 5 from IN) with its band moved to 100 Hz..10 kHz, a follower U2 on U1's output, and a follower U3
# on a second signal IN2 whose band, 1 Hz..20 Hz, reaches lower than IN's
THREE = GAIN5.replace("band: [10 Hz, 10 kHz]", "band: [100 Hz, 10 kHz]").replace("components:\n", """components:
  U2: {kind: opamp, part: REF-AMP, pins: {in+: OUT, in-: OUT2, out: OUT2, v+: VCC, v-: VEE}}
  U3: {kind: opamp, part: REF-AMP, pins: {in+: IN2, in-: OUT3, out: OUT3, v+: VCC, v-: VEE}}
""") + "  IN2: {dc: [0, 0.1 V], ac_amplitude: 10 mV, band: [1 Hz, 20 Hz]}\n"


def _curves(tmp_path, text: str):
    path = tmp_path / "d.yaml"
    path.write_text(text, encoding="utf-8")
    return design_curves(load_design(path))


def test_a_stage_takes_its_own_signals_band_and_a_stage_fed_by_a_stage_the_designs(tmp_path) -> None:
    _, curves = _curves(tmp_path, THREE)
    assert curves["U1"].band_hz == (100.0, 1e4)  # IN's own band, not IN2's lower 1 Hz
    assert curves["U3"].band_hz == (1.0, 20.0)  # IN2's own band
    assert curves["U2"].band_hz == (1.0, 1e4)  # no signal of its own: the design's lowest edge, to what U1 passes on


def test_a_stage_that_sees_only_dc_has_no_band_and_sweeps_the_loop_grid(tmp_path) -> None:
    # No AC amplitude and no band: nothing above 0 Hz reaches U1, so there is no band to judge the plot over and
    # the closed-loop sweep keeps the loop grid's span, fp1/30 = 3.33 Hz to 100 times the 30 MHz second pole (above
    # the 10 MHz GBW) = 3 GHz, on 20 points a decade (default_loop_grid and decade_grid, curves.py)
    analysis, curves = _curves(tmp_path, GAIN5.replace("ac_amplitude: 10 mV, band: [10 Hz, 10 kHz]", ""))
    (stage,) = analysis.stages
    assert stage.f_max == 0.0
    assert curves["U1"].band_hz is None
    (resp,) = curves["U1"].closed_loop
    grid = decade_grid(100.0 / 30.0, 3e9, 20)
    assert resp.freqs_hz[0] == pytest.approx(grid[0], rel=1e-12)
    assert resp.freqs_hz[-1] == pytest.approx(grid[-1], rel=1e-12)
    assert math.isclose(grid[0], 10 ** (10 / 20)) and math.isclose(grid[-1], 10 ** (190 / 20))


def test_the_closed_loop_sweep_reaches_a_decade_above_the_band_when_that_is_past_three_crossovers(tmp_path) -> None:
    # GAIN5's part slowed to a 1 MHz GBW and its stage set to a gain of 100 (R1 = 990k over R2 = 10k): the loop
    # crosses over near GBW/(1 + R1/R2) = 10 kHz (S. Franco, "Design with Operational Amplifiers and Analog
    # Integrated Circuits", 4th ed., ch. 6), so three crossovers, about 30 kHz, fall short of a decade above the
    # 10 kHz band top, 100 kHz, where the sweep must end (a point of the 20-a-decade grid: 10^(100/20))
    text = GAIN5.replace("gbw: 10 MHz", "gbw: 1 MHz").replace("value: 40k", "value: 990k")
    analysis, curves = _curves(tmp_path, text)
    (stage,) = analysis.stages
    assert stage.crossover_hz == pytest.approx(1e4, rel=0.05)
    assert 3.0 * stage.crossover_hz < 1e5
    (resp,) = curves["U1"].closed_loop
    assert resp.freqs_hz[0] == pytest.approx(1.0, rel=1e-12)  # a decade below the band's 10 Hz
    assert resp.freqs_hz[-1] == pytest.approx(1e5, rel=1e-12)
