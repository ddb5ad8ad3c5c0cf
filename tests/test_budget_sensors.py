"""Every sensor kind in the budget analyses (DC error, noise, ADC drive, channel keys), against the sensors'
published equations and hand-written ngspice decks."""

from __future__ import annotations

import math

import numpy as np
import pytest

from afecheck.analysis import analyse
from afecheck.analysis.adc_drive import analyse_adc
from afecheck.analysis.channel import channel_key, find_channels
from afecheck.analysis.dc_error import analyse_dc_error
from afecheck.analysis.noise import BOLTZMANN, analyse_noise, channel_noise
from afecheck.model.load import load_design
from tests.ngspice_harness import needs_ngspice, run_ngspice
from tests.tools.noise_deck import parse_noise

HEAD = """afecheck: 1
name: sensor budget check
operating_temperature: [0 °C, 26.85 °C]
parts:
  P:
    gbw: 1 THz
    second_pole: 1e15
    open_loop_gain: 1e9
    output_resistance: 0
    input_resistance_diff: 1e15
    input_resistance_cm: 1e15
    input_capacitance_diff: 0
    input_capacitance_cm: 0
    offset_voltage: 0
    bias_current: 0
    offset_current: 0
    voltage_noise: 0
    current_noise: 0
rails: {VP: {voltage: 10 V}, VN: {voltage: -10 V}, VREF: {voltage: 2.5 V}}
"""
FOLLOWER = "  U1: {kind: opamp, part: P, pins: {in+: S, in-: OUT, out: OUT, v+: VP, v-: VN}}\n"


def _loaded(tmp_path, body: str, name: str = "d.yaml"):
    path = tmp_path / name
    path.write_text(HEAD + body, encoding="utf-8")
    return load_design(path)


def _cvd(r0: float, t: float) -> float:
    """R(t) above 0 °C, IEC 60751:2022 coefficients A = 3.9083e-3, B = -5.775e-7 (written here apart from afecheck)."""
    return r0 * (1 + 3.9083e-3 * t - 5.775e-7 * t * t)


RTD = """components:
  R1: {kind: resistor, value: 1k, tolerance: 0, pins: {1: VREF, 2: S}}
  PT: {kind: rtd, r0: 1000, temperature: [0 °C, 200 °C], class: B, pins: {1: S, 2: GND}}
""" + FOLLOWER


def test_rtd_channel_ends_and_class_tolerance_follow_iec_60751(tmp_path):
    e = analyse_dc_error(_loaded(tmp_path, RTD), ["OUT"]).nets["OUT"]
    for t, v in ((0.0, e.ideal_low), (200.0, e.ideal_high)):
        r = _cvd(1000.0, t)
        assert v == pytest.approx(2.5 * r / (1000.0 + r), rel=1e-8)
    (sensor,) = [t for t in e.terms if t.kind == "sensor"]
    # class B: ±(0.30 + 0.005·|t|) °C (IEC 60751); as a fraction of R it is largest at one end of the range
    frac = [(0.30 + 0.005 * t) * 1000 * (3.9083e-3 - 2 * 5.775e-7 * t) / _cvd(1000.0, t) for t in (0.0, 200.0)]
    assert sensor.limit == pytest.approx(max(frac), rel=1e-6)
    assert sensor.refs == ("PT",)
    # the sensor's accuracy is listed, not counted: the electronics here are ideal, so every total is ~0
    assert e.offset_worst == pytest.approx(0.0, abs=1e-8) and e.gain_error_worst is not None


def test_bridge_tolerance_is_a_sensor_term_per_arm_and_the_ends_follow_the_bridge(tmp_path):
    body = """components:
  B1: {kind: bridge, arrangement: full, resistance: 350, sensitivity: 2 mV/V, tolerance: 0.5%,
       pins: {exc+: VREF, exc-: GND, out+: S, out-: M}}
  RB: {kind: resistor, value: 1e12, pins: {1: M, 2: GND}}
""" + FOLLOWER
    e = analyse_dc_error(_loaded(tmp_path, body), ["OUT"]).nets["OUT"]
    sensors = sorted(t.name for t in e.terms if t.kind == "sensor")
    # OUT follows out+ alone, so the channel holds the left half of the bridge (out− reaches it only through rails)
    assert sensors == ["B1.bl tolerance", "B1.tl tolerance"]
    # full bridge: out+ is the left mid-point, V·(1 + x)/2 with x = s at full scale (K. Hoffmann, HBM, 1989)
    assert (e.ideal_low, e.ideal_high) == pytest.approx((1.25, 2.5 * (1 + 0.002) / 2), rel=1e-8)
    # the sensor's arm tolerance moves out+ by V·(Δ/4) at most (one arm of a divider, first order)
    worst = max(max(abs(t.error_low), abs(t.error_high)) for t in e.terms if t.kind == "sensor")
    assert worst == pytest.approx(2.5 * 0.005 / 4, rel=0.01)


def test_channel_keys_tell_sensor_values_apart(tmp_path):
    a = _loaded(tmp_path, RTD, "a.yaml")
    b = _loaded(tmp_path, RTD.replace("r0: 1000", "r0: 100"), "b.yaml")
    c = _loaded(tmp_path, RTD, "c.yaml")
    key = [channel_key(x, find_channels(x)["OUT"], "OUT") for x in (a, b, c)]
    assert key[0] != key[1] and key[0] == key[2]


NOISE_DECK = """hand-written: Pt1000 at its own temperature below a 1 k resistor at the design's
VREF vref 0 DC 0 AC 1
R1 vref s 1k
RPT s 0 {rpt!r} temp={t_rtd!r}
EA out 0 s out 1e9
.options temp=26.85 tnom=26.85
.control
set numdgt=15
noise v(out) VREF dec 10 10 10k
setplot noise1
print frequency onoise_spectrum
setplot noise2
print onoise_total
quit
.endc
.end
"""


@needs_ngspice
@pytest.mark.ngspice
def test_rtd_thermal_noise_is_taken_at_the_sensor_temperature(tmp_path):
    body = RTD.replace("class: B, ", "").replace("[0 °C, 200 °C]", "[100 °C, 200 °C]")
    loaded = _loaded(tmp_path, body)
    ch = find_channels(loaded)["OUT"]
    rpt = _cvd(1000.0, 150.0)  # the middle of its range
    text, _ = run_ngspice(NOISE_DECK.format(rpt=rpt, t_rtd=150.0))
    f, dens, _ = parse_noise(text)
    ours = channel_noise(loaded, ch, ["OUT"], f)["OUT"]
    assert np.allclose(ours.output_density, dens, rtol=1e-6)
    # and by hand: each resistor's 4kTR through its divider share (Johnson 1928; Nyquist 1928)
    k = BOLTZMANN
    hand = math.sqrt(4 * k * 300.0 * 1e3 * (rpt / (1e3 + rpt)) ** 2 + 4 * k * 423.15 * rpt * (1e3 / (1e3 + rpt)) ** 2)
    assert ours.output_density[0] == pytest.approx(hand, rel=1e-6)
    top = {c.name: c for c in ours.contributors}
    # the two shares stand as (T_PT·R1)/(T_R1·R_PT): each 4kTR seen through the other resistor's divider share
    assert top["PT thermal"].share / top["R1 thermal"].share == pytest.approx(423.15 * 1e3 / (300.0 * rpt), rel=1e-6)


@pytest.mark.parametrize("sensor", ["rtd", "bridge"])
def test_alias_attenuation_of_a_sensor_channel_is_the_rc_closed_form(tmp_path, sensor):
    # a sensor seen through R into C at the converter: one pole at 1/(2π·(Rth + R)·C); attenuation from the passband
    # to fs − fmax is √((1 + (f_a/f_c)²)/(1 + (f_p/f_c)²)) (single-pole low-pass, common practice)
    if sensor == "rtd":
        head = RTD.replace(FOLLOWER, "")
        rth = 1e3 * _cvd(1000.0, 100.0) / (1e3 + _cvd(1000.0, 100.0))  # RTD at mid-range, as the netlist takes it
    else:
        head = """components:
  B1: {kind: bridge, arrangement: quarter, resistance: 350, sensitivity: 2 mV/V,
       pins: {exc+: VREF, exc-: GND, out+: S, out-: M}}
  RB: {kind: resistor, value: 1e12, pins: {1: M, 2: GND}}
"""
        x = 4 * 0.002 / (1 - 2 * 0.002) * 0.5  # the active arm at mid-range
        rth = 350 * 350 * (1 + x) / (350 * (2 + x))
    body = head + """  RF: {kind: resistor, value: 10k, pins: {1: S, 2: ADC}}
  CF: {kind: capacitor, value: 1u, pins: {1: ADC, 2: GND}}
loads:
  ADC: {adc: {full_scale: 2.5 V, bits: 12, sample_rate: 1 kHz}}
"""
    loaded = _loaded(tmp_path, body)
    a = analyse_adc(loaded, analyse(loaded)).nets["ADC"]
    assert a.attenuation_db is not None, a.notes
    fc = 1 / (2 * math.pi * (rth + 10e3) * 1e-6)
    expected = 10 * math.log10((1 + (a.alias_hz / fc) ** 2) / (1 + (a.passband_hz / fc) ** 2))
    assert a.attenuation_db == pytest.approx(expected, abs=1e-6)


def test_an_rtd_channel_without_a_signal_takes_its_noise_band_from_the_converter(tmp_path):
    loaded = _loaded(tmp_path, RTD + "loads: {OUT: {adc: {full_scale: 2.5 V, bits: 12, sample_rate: 1 kHz}}}\n")
    res = analyse_noise(loaded, ["OUT"]).nets["OUT"]
    assert res.band == (0.1, 500.0)
    shares = {c.name: c.share for c in res.contributors}
    rpt = _cvd(1000.0, 100.0)  # the sensor at the middle of its range, noise at 373.15 K; R1 at 300 K
    assert shares["PT thermal"] / shares["R1 thermal"] == pytest.approx(373.15 * 1e3 / (300.0 * rpt), rel=1e-6)
