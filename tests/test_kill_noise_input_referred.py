"""Input-referred noise of a channel whose gain is below one: a 10 kΩ / 10 kΩ attenuator, by Johnson-Nyquist."""

from __future__ import annotations

import math

import pytest

from afecheck.analysis.noise import BOLTZMANN, analyse_noise
from afecheck.model.load import load_design

ATTENUATOR = """
afecheck: 1
name: attenuator noise
operating_temperature: [-40 °C, 85 °C]
signals:
  IN: {dc: [0 V, 1 V], band: [10 Hz, 10 kHz], source_resistance: 0}
components:
  R1: {kind: resistor, value: 10k, pins: {1: IN, 2: X}}
  R2: {kind: resistor, value: 10k, pins: {1: X, 2: GND}}
"""


def test_a_gain_of_one_half_refers_the_noise_to_the_input_doubled(tmp_path) -> None:
    # At X the two resistors are 5 kΩ in parallel to ground (the source is 0 Ω): √(4kT·5 kΩ) at 85 °C, the top of
    # the operating range where noise.py takes fixed resistors (Johnson 1928; Nyquist 1928). The signal reaches X
    # at 1/2 (divider, Ohm), so referred to IN the density is twice that, flat over the 10 Hz..10 kHz band, and the
    # RMS is the density × √(10 kHz − 10 Hz). A gain below one still refers the noise to the input.
    path = tmp_path / "d.yaml"
    path.write_text(ATTENUATOR, encoding="utf-8")
    res = analyse_noise(load_design(path), ["X"]).nets["X"]
    at_x = math.sqrt(4 * BOLTZMANN * (85.0 + 273.15) * 5e3)
    assert res.output_density[-1] == pytest.approx(at_x, rel=1e-9)
    assert res.signal == "IN"
    assert res.input_density is not None
    assert res.input_density == pytest.approx([2 * at_x] * len(res.freqs), rel=1e-9)
    assert res.input_rms == pytest.approx(2 * at_x * math.sqrt(10e3 - 10.0), rel=1e-6)
