"""ADC drive at two edges by hand: a band whose top is exactly 1 Hz is read at its own top, and the driver's
closed-loop output resistance adds to the series resistor in the settling RC."""

from __future__ import annotations

import math

from test_kill_adc_drive import DRIVER

from afecheck.analysis import analyse
from afecheck.analysis.adc_drive import analyse_adc
from afecheck.model.load import load_design


def _run(tmp_path, text: str):
    path = tmp_path / "d.yaml"
    path.write_text(text, encoding="utf-8")
    loaded = load_design(path)
    analysis = analyse(loaded)
    return analyse_adc(loaded, analysis).nets["ADC"], analysis.stages[0]


def test_a_band_topping_out_at_one_hertz_is_read_at_one_hertz(tmp_path):
    # A slow sensor's band [0, 1 Hz]: the pass frequency is the band's top, 1 Hz, whatever its size; only a
    # signal with no band at all is read at fs/1000 (the module's documented choice; 100 Hz here).
    a, _ = _run(tmp_path, DRIVER.format(band=", band: [0 Hz, 1 Hz]", reference="", fs="100 kHz", extra=""))
    assert a.passband_hz == 1.0
    assert a.alias_hz == 1e5 - 1.0


def test_the_drivers_output_resistance_adds_to_the_series_resistor(tmp_path):
    # Open-loop gain 10 and Ro = 1 kΩ: a follower's closed-loop output resistance at DC is Ro/(1 + A0) = 90.9 Ω
    # (feedback divides it by 1 + T; S. Franco, "Design with Operational Amplifiers and Analog Integrated
    # Circuits", 4th ed., ch. 1). In series with the 100 Ω into 1 nF: τ_RC = (100 + 90.9) Ω × 1 nF = 190.9 ns,
    # combined with the driver's own lag 1/(2π·fc) as √(τ_RC² + τ_drv²) (common practice, as in test_kill_adc_drive).
    text = DRIVER.format(band="", reference="", fs="100 kHz", extra="")
    text = text.replace("output_resistance: 0", "output_resistance: 1k").replace("open_loop_gain: 1e6",
                                                                              "open_loop_gain: 10")
    a, stage = _run(tmp_path, text)
    assert math.isclose(stage.output_resistance, 1e3 / 11, rel_tol=1e-9)
    tau_rc = (100.0 + 1e3 / 11) * 1e-9
    tau_drv = 1 / (2 * math.pi * stage.crossover_hz)
    assert math.isclose(a.tau, math.hypot(tau_rc, tau_drv), rel_tol=1e-9)
    assert math.isclose(a.settling_time, 13 * math.log(2) * a.tau, rel_tol=1e-12)


def test_a_sampling_capacitor_behind_only_the_loads_capacitance_shortens_the_step(tmp_path):
    # No RC capacitor: the 1 nF the converter's input presents (the load's own capacitance) holds the charge alone.
    # Cs = 100 pF meets a step of Cs/(C + Cs) = 1/11 of full scale, so ln 11 fewer time constants than the
    # 13·ln 2 that 12 bits need from a full-scale step (charge sharing, hand calculation; W. Kester (ed.), "Data
    # Conversion Handbook", Newnes 2005, ch. 6, from memory, for the half-LSB count).
    text = DRIVER.format(band="", reference="capacitance: 1 nF, ", fs="100 kHz",
                         extra=", input_capacitance: 100 pF")
    text = "\n".join(line for line in text.splitlines() if not line.lstrip().startswith("C1:"))
    a, _ = _run(tmp_path, text)
    assert a.rc_capacitance == 0.0 and a.load_capacitance == 1e-9
    assert math.isclose(a.time_constants_needed, 13 * math.log(2) - math.log(11), rel_tol=1e-12)
