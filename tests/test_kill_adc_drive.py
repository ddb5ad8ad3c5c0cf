"""ADC drive figures by hand: the converter's range (unipolar, bipolar about a reference), margins, settling, the
alias boundary, on a near-ideal follower driving an RC into the converter."""

from __future__ import annotations

import math

import pytest

from afecheck.analysis import analyse
from afecheck.analysis.adc_drive import analyse_adc
from afecheck.model.load import load_design

# Follower of 1 MHz gain-bandwidth (so its closed-loop bandwidth is 1 MHz: S. Franco, "Design with Operational
# Amplifiers and Analog Integrated Circuits", 4th ed., ch. 6, from memory), then 100 Ω and 1 nF into the ADC.
DRIVER = """
afecheck: 1
name: adc drive by hand
parts:
  P:
    gbw: 1 MHz
    open_loop_gain: 1e6
    second_pole: 1e12
    output_resistance: 0
    input_resistance_diff: 1e15
    input_resistance_cm: 1e15
    input_capacitance_diff: 0
    input_capacitance_cm: 0
    offset_voltage: 0
    bias_current: 0
    offset_current: 0
rails: {{VP: {{voltage: 5 V}}, VN: {{voltage: -5 V}}, VREF: {{voltage: 2.5 V}}}}
signals:
  IN: {{dc: [0.5 V, 2.5 V]{band}}}
components:
  U1: {{kind: opamp, part: P, pins: {{in+: IN, in-: AMP, out: AMP, v+: VP, v-: VN}}}}
  R1: {{kind: resistor, value: 100, pins: {{1: AMP, 2: ADC}}}}
  C1: {{kind: capacitor, value: 1n, pins: {{1: ADC, 2: GND}}}}
loads:
  ADC: {{{reference}adc: {{full_scale: 4.096 V, bits: 12, sample_rate: {fs}{extra}}}}}
"""


def _adc(tmp_path, *, band: str = "", reference: str = "", fs: str = "100 kHz", extra: str = ""):
    path = tmp_path / "d.yaml"
    path.write_text(DRIVER.format(band=band, reference=reference, fs=fs, extra=extra), encoding="utf-8")
    loaded = load_design(path)
    return analyse_adc(loaded, analyse(loaded)).nets["ADC"]


def test_unipolar_range_margins_and_codes(tmp_path):
    # Unipolar 0..4.096 V above ground; the follower passes 0.5..2.5 V (A0 = 1e6: 1e-6 relative, within rel 1e-5).
    # Margins 0.5 V below and 4.096 − 2.5 = 1.596 V above; codes used 2/4.096 = 48.8 % (hand calculation).
    a = _adc(tmp_path)
    assert (a.input_low, a.input_high) == (pytest.approx(0.0), pytest.approx(4.096))
    assert a.margin_low == pytest.approx(0.5, rel=1e-5)
    assert a.margin_high == pytest.approx(1.596, rel=1e-5)
    assert a.codes_used == pytest.approx(2.0 / 4.096, rel=1e-5)


def test_bipolar_range_is_centred_on_the_reference(tmp_path):
    # Bipolar about the 2.5 V reference rail: 2.5 ± 2.048 = 0.452..4.548 V (hand calculation), so margins
    # 0.5 − 0.452 = 0.048 V and 4.548 − 2.5 = 2.048 V.
    a = _adc(tmp_path, reference="reference: VREF, ", extra=", bipolar: true")
    assert (a.input_low, a.input_high) == (pytest.approx(0.452), pytest.approx(4.548))
    assert a.margin_low == pytest.approx(0.048, rel=1e-4)
    assert a.margin_high == pytest.approx(2.048, rel=1e-5)
    # unipolar above the same reference: 2.5..6.596 V, so the signal sits 2 V below the converter's range
    u = _adc(tmp_path, reference="reference: VREF, ")
    assert (u.input_low, u.input_high) == (pytest.approx(2.5), pytest.approx(6.596))
    assert u.margin_low == pytest.approx(-2.0, rel=1e-5)


def test_settling_of_the_driver_and_the_rc(tmp_path):
    # τ_driver = 1/(2π·1 MHz) = 159.2 ns, τ_RC = 100 Ω × 1 nF = 100 ns, combined √(τ1² + τ2²) = 188.0 ns (two first-
    # order lags: common practice); 12 bits need 13·ln 2 = 9.011 τ (half an LSB, W. Kester (ed.), "Data Conversion
    # Handbook", Newnes 2005, ch. 6, from memory). No acquisition time declared: half the 100 kHz period, 5 µs,
    # marked assumed (common practice for successive-approximation converters).
    a = _adc(tmp_path)
    tau = math.hypot(1 / (2 * math.pi * 1e6), 100e-9)
    assert a.tau == pytest.approx(tau, rel=1e-3)
    assert a.time_constants_needed == pytest.approx(13 * math.log(2))
    assert a.settling_time == pytest.approx(13 * math.log(2) * tau, rel=1e-3)
    assert a.acquisition_time == pytest.approx(5e-6) and a.acquisition_assumed
    assert a.driver == "U1" and a.series_resistance == 100.0 and a.rc_capacitance == pytest.approx(1e-9)


def test_a_sampling_capacitor_shortens_the_step_and_loads_the_rc(tmp_path):
    # Cs = 100 pF against 1 nF: the step the input meets is Cs/(C + Cs) = 1/11 of full scale, so ln 11 = 2.398 τ
    # fewer (13·ln 2 − ln 11 = 6.613 τ); the RC's capacitance is C + Cs = 1.1 nF (τ_RC = 110 ns); capacitor ratio
    # C/Cs = 10 (charge sharing, hand calculation). A declared acquisition time is used as given, not assumed.
    a = _adc(tmp_path, extra=", input_capacitance: 100 pF, acquisition_time: 2 us")
    assert a.time_constants_needed == pytest.approx(13 * math.log(2) - math.log(11))
    assert a.tau == pytest.approx(math.hypot(1 / (2 * math.pi * 1e6), 110e-9), rel=1e-3)
    assert a.capacitor_ratio == pytest.approx(10.0)
    assert a.acquisition_time == pytest.approx(2e-6) and not a.acquisition_assumed


def test_the_alias_frequency_at_its_exact_boundary(tmp_path):
    # A band up to 1 kHz sampled at exactly 2 kHz: fs − fmax = 1 kHz is the band's own top, so the signal itself
    # aliases (Nyquist: fs must exceed 2·fmax) and no attenuation is given; at 2.5 kHz the first folding frequency,
    # 1.5 kHz, lies above the band and the attenuation is evaluated.
    at = _adc(tmp_path, band=", band: [0 Hz, 1 kHz]", fs="2 kHz")
    assert at.alias_hz == pytest.approx(1e3) and at.passband_hz == pytest.approx(1e3)
    assert at.attenuation_db is None
    assert any("aliases" in n for n in at.notes)
    above = _adc(tmp_path, band=", band: [0 Hz, 1 kHz]", fs="2.5 kHz")
    assert above.alias_hz == pytest.approx(1.5e3)
    assert above.attenuation_db is not None and not any("aliases" in n for n in above.notes)


def test_a_dc_signal_is_read_just_above_dc(tmp_path):
    # A signal with no band is read at fs/1000 (essentially DC: the module's documented choice), against fs itself:
    # 100 Hz and 100 kHz here. The single RC pole (1.59 MHz) and the follower's 1 MHz pole give at 100 kHz
    # 10·log10((1 + (0.1/1.5915)²)·(1 + 0.1²)) = 0.0602 dB (hand calculation, first-order poles).
    a = _adc(tmp_path)
    assert a.passband_hz == pytest.approx(100.0)
    assert a.alias_hz == pytest.approx(1e5)
    f_rc = 1 / (2 * math.pi * 100 * 1e-9)
    expected = 10 * math.log10((1 + (1e5 / f_rc) ** 2) * (1 + (1e5 / 1e6) ** 2))
    assert a.attenuation_db == pytest.approx(expected, abs=2e-3)


def test_the_ac_peak_widens_the_range_at_both_ends(tmp_path):
    # A 0.2 V peak on top of the 0.5..2.5 V DC range (follower, no band limit in the way): the converter sees
    # 0.3..2.7 V, margins 0.3 V and 4.096 − 2.7 = 1.396 V, codes used 2.4/4.096 (hand calculation)
    path = tmp_path / "d.yaml"
    path.write_text(DRIVER.format(band=", ac_amplitude: 0.2 V, band: [10 Hz, 100 Hz]", reference="", fs="100 kHz",
                                  extra=""), encoding="utf-8")
    loaded = load_design(path)
    a = analyse_adc(loaded, analyse(loaded)).nets["ADC"]
    assert (a.signal_low, a.signal_high) == (pytest.approx(0.3, rel=1e-4), pytest.approx(2.7, rel=1e-4))
    assert a.margin_low == pytest.approx(0.3, rel=1e-4) and a.margin_high == pytest.approx(1.396, rel=1e-4)
    assert a.codes_used == pytest.approx(2.4 / 4.096, rel=1e-4)
