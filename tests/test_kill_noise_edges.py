"""Noise analysis at its edges: band limits, the grid, a winding resistance, and the band integral's fallbacks."""

from __future__ import annotations

import math

import numpy as np
import pytest

from afecheck.analysis.noise import BOLTZMANN, analyse_noise, band_rms, log_band_grid
from afecheck.model.load import load_design

# A noiseless, near-ideal follower: every noise figure at OUT is the thermal noise of the parts in front of it.
FOLLOWER = """
afecheck: 1
name: noise edges
operating_temperature: [0 °C, {t_top}]
parts:
  QUIET:
    gbw: 1 THz
    open_loop_gain: 1e9
    second_pole: 1e15
    output_resistance: 0
    input_resistance_diff: 1e15
    input_resistance_cm: 1e15
    input_capacitance_diff: 0
    input_capacitance_cm: 0
    voltage_noise: {en}
    voltage_noise_corner: {fc}
    current_noise: 0
    current_noise_corner: 0
rails: {{VP: {{voltage: 5 V}}, VN: {{voltage: -5 V}}}}
signals:
  IN: {{dc: [0, 0], band: [{lo}, {hi}]}}
components:
  {front}
  U1: {{kind: opamp, part: QUIET, pins: {{in+: X, in-: OUT, out: OUT, v+: VP, v-: VN}}}}
"""
RESISTOR = "R1: {kind: resistor, value: 10k, pins: {1: IN, 2: X}}"
WINDING = "L1: {kind: inductor, value: 1 mH, series_resistance: 1, pins: {1: IN, 2: X}}"


def _noise(tmp_path, *, front: str = RESISTOR, lo: str = "10 Hz", hi: str = "10 kHz", en: str = "0",
           fc: str = "0", t_top: str = "26.85 °C"):
    path = tmp_path / "d.yaml"
    path.write_text(FOLLOWER.format(front=front, lo=lo, hi=hi, en=en, fc=fc, t_top=t_top), encoding="utf-8")
    return analyse_noise(load_design(path), ["OUT"])


def test_a_one_ohm_winding_resistance_is_a_johnson_source(tmp_path):
    # The inductor's 1 Ω winding is a resistor in series with the follower's input, carrying no current: its open-
    # circuit thermal noise √(4kT·1 Ω) (Johnson 1928; Nyquist 1928) reaches OUT at unity gain. At 300 K (the top of
    # the operating range, 26.85 °C) that is 0.1287 nV/√Hz (hand calculation: 4 × 1.380649e-23 × 300 × 1 = 1.657e-20).
    res = _noise(tmp_path, front=WINDING).nets["OUT"]
    by = {c.name: c for c in res.contributors}
    assert by["L1 winding thermal"].output_density_top == pytest.approx(math.sqrt(4 * BOLTZMANN * 300.0), rel=1e-6)
    assert res.output_rms == pytest.approx(math.sqrt(4 * BOLTZMANN * 300.0 * (1e4 - 10)), rel=1e-6)


def test_a_band_from_dc_starts_at_a_tenth_of_a_hertz(tmp_path):
    # A band declared from DC is integrated from 0.1 Hz (the 0.1 Hz lower edge of low-frequency noise figures:
    # common practice, documented in afecheck.analysis.noise). With a 1/f corner the 1/f part depends on that edge:
    # en²·fc·ln(fH/fL) (Motchenbacher & Connelly, "Low-Noise Electronic System Design", Wiley 1993, ch. 1, from
    # memory); en = 10 nV/√Hz, fc = 100 Hz, fL = 0.1 Hz, fH = 1 kHz: total² = en²·[(fH − fL) + fc·ln(1e4)].
    res = _noise(tmp_path, front=RESISTOR.replace("10k", "1 mΩ"), lo="0 Hz", hi="1 kHz", en="10 nV/rtHz",
                 fc="100 Hz").nets["OUT"]
    assert res.band == (pytest.approx(0.1), pytest.approx(1e3))
    assert res.freqs[0] == pytest.approx(0.1)
    en, fc = 10e-9, 100.0
    resistor = 4 * BOLTZMANN * 300.0 * 1e-3 * (1e3 - 0.1)  # the 1 mΩ resistor's own share, negligible but exact
    expected = math.sqrt(en**2 * ((1e3 - 0.1) + fc * math.log(1e3 / 0.1)) + resistor)
    assert res.output_rms == pytest.approx(expected, rel=1e-6)


def test_a_band_that_ends_at_its_lower_edge_has_no_noise_figure(tmp_path):
    # A band of zero width cannot be integrated: 0..0.1 Hz becomes 0.1..0.1 Hz after the 0.1 Hz lower edge (as
    # above), so the net is reported not evaluated, while 0..0.2 Hz (just wider) is evaluated (exact boundary).
    empty = _noise(tmp_path, lo="0 Hz", hi="0.1 Hz")
    assert "OUT" not in empty.nets and "OUT" in empty.not_evaluated
    wider = _noise(tmp_path, lo="0 Hz", hi="0.2 Hz")
    assert wider.nets["OUT"].band == (pytest.approx(0.1), pytest.approx(0.2))


def test_resistors_are_at_25_c_when_no_operating_range_is_declared(tmp_path):
    # With no operating range, resistor noise is taken at 25 °C = 298.15 K, the temperature part data are stated at
    # (the module's documented default, common practice): √(4k·298.15·10 kΩ) = 12.83 nV/√Hz (hand calculation).
    path = tmp_path / "d.yaml"
    text = FOLLOWER.format(front=RESISTOR, lo="10 Hz", hi="10 kHz", en="0", fc="0", t_top="26.85 °C")
    path.write_text(text.replace("operating_temperature: [0 °C, 26.85 °C]\n", ""), encoding="utf-8")
    res = analyse_noise(load_design(path), ["OUT"]).nets["OUT"]
    assert res.temperature_k == pytest.approx(298.15)
    assert res.output_density[0] == pytest.approx(math.sqrt(4 * BOLTZMANN * 298.15 * 1e4), rel=1e-9)
    assert res.output_density[0] == pytest.approx(12.83e-9, rel=1e-3)


def test_the_band_grid_has_forty_points_a_decade_and_at_least_eight():
    # The grid's documented definition (afecheck.analysis.noise: logarithmic, both ends included, at least 8
    # points, 40 a decade): 10 Hz..10 kHz is 3 decades, 3·40 + 1 = 121 points, each step 10^(1/40) (hand
    # calculation); a band narrower than 8 points' worth (1..1.1 Hz: log10(1.1)·40 = 1.66) still gets 8.
    f = log_band_grid(10.0, 1e4)
    assert f.size == 121
    assert f[0] == pytest.approx(10.0) and f[-1] == pytest.approx(1e4)
    assert np.allclose(f[1:] / f[:-1], 10 ** (1 / 40), rtol=1e-12)
    narrow = log_band_grid(1.0, 1.1)
    assert narrow.size == 8 and narrow[-1] == pytest.approx(1.1)


def test_a_segment_with_a_zero_end_is_integrated_as_a_trapezoid():
    # A power law cannot pass through zero, so a segment with a zero density at one end falls back to the
    # trapezoid rule: ∫ over 1..3 Hz of a density rising 0 → 4 V²/Hz = ½·(0 + 4)·2 = 4 V² (hand calculation), RMS 2 V.
    assert band_rms(np.array([1.0, 3.0]), np.array([0.0, 4.0])) == pytest.approx(2.0)
    assert band_rms(np.array([1.0, 3.0]), np.array([4.0, 0.0])) == pytest.approx(2.0)  # falling to zero: the same
    # and the power-law segments themselves: a white 1e-18 V²/Hz from 1 to 100 Hz is 99e-18 V² (hand calculation)
    assert band_rms(np.array([1.0, 10.0, 100.0]), np.full(3, 1e-18)) == pytest.approx(math.sqrt(99e-18), rel=1e-12)
    # a density rising as f (a power law of exponent 1): ∫ from 1 to 3 Hz of f df = (9 − 1)/2 = 4 V² (hand
    # calculation), RMS 2 V, exact for a power-law segment
    assert band_rms(np.array([1.0, 3.0]), np.array([1.0, 3.0])) == pytest.approx(2.0, rel=1e-12)
    # a tiny total (1e-30 V²) stays tiny: nothing in the integral floors it
    assert band_rms(np.array([1.0, 2.0]), np.full(2, 1e-30)) == pytest.approx(1e-15, rel=1e-12)


def test_noise_at_every_net_of_the_channel(tmp_path):
    # A 1 kΩ source resistance, 10 kΩ in series to the follower's input (no current flows in it), at 300 K
    # (Johnson 1928; Nyquist 1928; hand calculation): at IN only the source resistance is seen, √(4kT·1 kΩ) =
    # 4.07 nV/√Hz; at X and OUT both resistors in series, √(4kT·11 kΩ) = 13.50 nV/√Hz. Every net is a target in
    # one solve, whichever its place among the unknowns.
    path = tmp_path / "d.yaml"
    text = FOLLOWER.format(front=RESISTOR, lo="10 Hz", hi="10 kHz", en="0", fc="0", t_top="26.85 °C")
    path.write_text(text.replace("band: [10 Hz, 10 kHz]", "band: [10 Hz, 10 kHz], source_resistance: 1k"),
                    encoding="utf-8")
    res = analyse_noise(load_design(path), ["IN", "X", "OUT"])
    four_kt = 4 * BOLTZMANN * 300.0
    assert res.nets["IN"].output_density[0] == pytest.approx(math.sqrt(four_kt * 1e3), rel=1e-6)
    assert res.nets["X"].output_density[0] == pytest.approx(math.sqrt(four_kt * 11e3), rel=1e-6)
    assert res.nets["OUT"].output_density[-1] == pytest.approx(math.sqrt(four_kt * 11e3), rel=1e-6)


def test_a_node_joined_only_through_capacitors_still_has_ac_noise(tmp_path):
    # IN → 1 µF → M → 1 µF → X, 10 kΩ from X to ground: M has no DC path, which does not matter to noise (an AC
    # analysis). The resistor's Johnson noise √(4kTR) reaches X divided by the two capacitors in series (0.5 µF,
    # the ideal source at IN holds their far end): |Zc/(R + Zc)| (Ohm and Kirchhoff, hand calculation).
    path = tmp_path / "d.yaml"
    front = ("C1: {kind: capacitor, value: 1u, pins: {1: IN, 2: M}}\n"
             "  C2: {kind: capacitor, value: 1u, pins: {1: M, 2: X}}\n"
             "  R1: {kind: resistor, value: 10k, pins: {1: X, 2: GND}}")
    path.write_text(FOLLOWER.format(front=front, lo="1 kHz", hi="10 kHz", en="0", fc="0", t_top="26.85 °C"),
                    encoding="utf-8")
    res = analyse_noise(load_design(path), ["OUT"])
    assert res.not_evaluated == {}
    zc = 1 / (2j * math.pi * 1e4 * 0.5e-6)
    expected = math.sqrt(4 * BOLTZMANN * 300.0 * 1e4) * abs(zc / (1e4 + zc))
    assert res.nets["OUT"].output_density[-1] == pytest.approx(expected, rel=1e-6)
