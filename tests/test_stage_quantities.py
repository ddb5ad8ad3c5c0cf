"""Per-stage quantities through the whole path (design file -> graph -> stage -> local MNA -> StageResult).

Every expected number comes from outside the project: the worked NTC case (common practice), RULES-REFERENCE
check values with their source tags, or ngspice (marked ``ngspice``).
"""

from __future__ import annotations

import math
import re
from pathlib import Path

import pytest

from afecheck.analysis import analyse
from afecheck.model.load import load_design

FIXTURES = Path(__file__).parent / "fixtures" / "stages"

# an op-amp with nothing but A0, two poles and Ro: the RULES-REFERENCE R2 model
IDEALISH = ("input_resistance_diff: 1e18, input_resistance_cm: 1e18, input_capacitance_diff: 0, "
            "input_capacitance_cm: 0, bias_current: 0, offset_current: 0, offset_voltage: 0")


def _analyse(tmp_path: Path, gbw: str, f2: str, ro: float, body: str, a0: str = "100 dB", rails: str = "5 V"):
    text = f"""afecheck: 1
name: generated stage
parts:
  TWO-POLE: {{gbw: {gbw}, open_loop_gain: {a0}, second_pole: {f2}, output_resistance: {ro}, {IDEALISH}}}
rails:
  VP: {{voltage: {rails}}}
  VN: {{voltage: -{rails}}}
{body}"""
    path = tmp_path / "stage.yaml"
    path.write_text(text, encoding="utf-8")
    return analyse(load_design(path))


def _one(analysis, ref: str = "U1"):
    return next(s for s in analysis.stages if s.opamp == ref)


def _noninverting(rf: str | None, rg: str | None, extra: str = "", loads: str = "", signal: str = "dc: [0, 1 V]"):
    if rf is None:
        amp = "  U1: {kind: opamp, part: TWO-POLE, pins: {in+: IN, in-: OUT, out: OUT, v+: VP, v-: VN}}\n"
    else:
        amp = ("  U1: {kind: opamp, part: TWO-POLE, pins: {in+: IN, in-: FB, out: OUT, v+: VP, v-: VN}}\n"
               f"  RF: {{kind: resistor, value: {rf}, pins: {{1: OUT, 2: FB}}}}\n"
               f"  RG: {{kind: resistor, value: {rg}, pins: {{1: FB, 2: GND}}}}\n")
    return (f"components:\n{amp}{extra}signals:\n  IN: {{{signal}}}\n"
            + (f"loads:\n{loads}" if loads else "loads:\n  OUT: {resistance: 1e15}\n"))


# ---------------------------------------------------------------- worked NTC case (common practice, no source)

def test_ntc_divider_into_noninverting_stage():
    s = _one(analyse(load_design(FIXTURES / "ntc_noninverting.yaml")))
    (inp,) = s.inputs
    assert inp.source.kind == "ntc-divider"
    assert inp.source.v_min == pytest.approx(0.5, abs=1e-9)  # common practice: 1 V · 10k/(10k + 10k)
    assert inp.source.r_min == pytest.approx(5000.0, rel=1e-9)  # common practice: 10k || 10k
    assert s.topology == "non-inverting"
    assert s.vout_min == pytest.approx(1.000, abs=5e-4)  # common practice: 0.5 V · gain 2
    assert inp.loading_error_max < 1e-4  # common practice: below 0.01 % with 1 GΩ input resistance
    # Rcm = 1 GΩ in parallel with Rdiff bootstrapped by the loop, Rdiff·(1 + A0/NG) [FR][DER]
    assert inp.input_resistance == pytest.approx(1 / (1 / 1e9 + 1 / (1e9 * (1 + 1e5 / 2))), rel=1e-4)


def test_ntc_divider_into_inverting_stage_is_loaded():
    a = analyse(load_design(FIXTURES / "ntc_inverting.yaml"))
    s = _one(a)
    (inp,) = s.inputs
    # at 25 °C (the middle of the 0..50 °C grid): common practice, no source
    assert inp.gain * 0.5 == pytest.approx(-0.667, abs=5e-4)  # output -0.667 V instead of -1 V
    assert inp.ideal_gain * 0.5 == pytest.approx(-1.0, abs=5e-4)
    # the loading error follows Rs(T) = 10k || R_NTC(T): e = Rs/(Rs + Ri) [FR][DER] RULES-REFERENCE R1,
    # with R_NTC(0 °C) = 33 620.6 Ω and R_NTC(50 °C) = 3 588.18 Ω [IEC60539][DER] RULES-REFERENCE R5o
    rs0 = 1 / (1 / 10e3 + 1 / 33620.6)
    rs50 = 1 / (1 / 10e3 + 1 / 3588.18)
    assert inp.loading_error_max == pytest.approx(rs0 / (rs0 + 10e3), rel=1e-3)
    assert inp.loading_error_min == pytest.approx(rs50 / (rs50 + 10e3), rel=1e-3)
    assert inp.source.r_min == pytest.approx(rs50, rel=1e-4)
    assert inp.source.r_max == pytest.approx(rs0, rel=1e-4)
    # output range over temperature: -Rf/(Rs + Ri) · Vth at both ends [FR] RULES-REFERENCE R1
    v0, v50 = 33620.6 / 43620.6, 3588.18 / 13588.18
    assert s.vout_min == pytest.approx(-20e3 / (rs0 + 10e3) * v0, rel=1e-3)
    assert s.vout_max == pytest.approx(-20e3 / (rs50 + 10e3) * v50, rel=1e-3)


def test_ntc_inverting_input_node_at_25c(tmp_path):
    text = (FIXTURES / "ntc_inverting.yaml").read_text().replace("[0 °C, 50 °C]", "[25 °C, 25 °C]")
    path = tmp_path / "at25.yaml"
    path.write_text(text, encoding="utf-8")
    a = analyse(load_design(path))
    # common practice, no source: the divider node drops from 0.5 V to 0.333 V, the output is -0.667 V
    assert a.nets["TH"].dc_min == pytest.approx(0.3333, abs=5e-4)
    assert a.nets["OUT"].dc_min == pytest.approx(-0.6667, abs=5e-4)


def test_difference_amplifier_common_mode_at_the_op_amp():
    s = _one(analyse(load_design(FIXTURES / "difference.yaml")))
    assert s.topology == "difference"
    assert s.vcm_min == pytest.approx(9.091, abs=5e-4)  # [DER] RULES-REFERENCE R3 difference amp check value
    assert s.vcm_max == pytest.approx(9.091, abs=5e-4)
    assert abs(s.vout_max) < 1e-6  # equal inputs, matched resistors: no differential output [SS]


# ---------------------------------------------------------------- gain with finite A0, Ro and load (R1)

@pytest.mark.parametrize(("ro", "load", "expected"), [
    (0.0, "", -9.99890),          # [DER][NUM] RULES-REFERENCE R1
    (100.0, "", -9.998899),       # [DER][NUM] RULES-REFERENCE R1
    (100.0, "1k", -9.998789),     # [DER][NUM] RULES-REFERENCE R1, RL = 1 kΩ to ground
])
def test_inverting_gain_with_finite_open_loop_gain(tmp_path, ro, load, expected):
    body = """components:
  U1: {kind: opamp, part: TWO-POLE, pins: {in+: GND, in-: SUM, out: OUT, v+: VP, v-: VN}}
  RG: {kind: resistor, value: 10k, pins: {1: IN, 2: SUM}}
  RF: {kind: resistor, value: 100k, pins: {1: SUM, 2: OUT}}
signals:
  IN: {dc: [0, 0.1 V]}
""" + (f"loads:\n  OUT: {{resistance: {load}}}\n" if load else "loads:\n  OUT: {resistance: 1e15}\n")
    s = _one(_analyse(tmp_path, "10 MHz", "30 MHz", ro, body))
    assert s.topology == "inverting"
    assert s.inputs[0].gain == pytest.approx(expected, abs=2e-6)
    # NG = A/T (RULES-REFERENCE 0.4) = (1 + Rf/Rg) [FR] times the Ro divider into RL || (Rf + Rg) [DER]
    r_load = 1 / (1 / 110e3 + (1 / 1e3 if load else 0.0))
    assert s.noise_gain_dc == pytest.approx(11.0 * (1 + ro / r_load), rel=1e-3)


# ---------------------------------------------------------------- two-pole phase margin (R2 a)

@pytest.mark.parametrize(("gbw", "f2", "ng", "fc", "pm"), [
    ("10 MHz", "10 MHz", 1, 7.862e6, 51.83),   # [GHLM] two-pole table R2(a)
    ("10 MHz", "10 MHz", 2, 4.551e6, 65.53),   # [GHLM] two-pole table R2(a)
    ("10 MHz", "10 MHz", 10, 0.9951e6, 84.32),  # [GHLM] two-pole table R2(a)
    ("50 MHz", "10 MHz", 2, 14.32e6, 34.94),   # [GHLM] two-pole table R2(a), A0 = 1e5
    ("50 MHz", "10 MHz", 5, 7.862e6, 51.83),   # [GHLM] two-pole table R2(a)
    ("50 MHz", "10 MHz", 7.5, 5.774e6, 60.00),  # [GHLM] two-pole table R2(a)
])
def test_two_pole_phase_margin_through_the_stage_path(tmp_path, gbw, f2, ng, fc, pm):
    if ng == 1:
        body = _noninverting(None, None)
    else:
        body = _noninverting(f"{(ng - 1) * 10}k", "10k")
    s = _one(_analyse(tmp_path, gbw, f2, 0, body))
    assert s.feedback == "negative"
    assert s.noise_gain_dc == pytest.approx(ng, rel=1e-3)
    assert s.crossover_hz == pytest.approx(fc, rel=1e-3)
    assert s.phase_margin_deg == pytest.approx(pm, abs=0.01)
    assert not s.estimated


def test_resistor_between_inputs_raises_noise_gain_not_signal_gain(tmp_path):
    # gain -1 (1k/1k) with 333.3 Ω between the inputs: NG = 5.000, PM = 51.83° [FR] RULES-REFERENCE R2(a)
    body = """components:
  U1: {kind: opamp, part: TWO-POLE, pins: {in+: GND, in-: SUM, out: OUT, v+: VP, v-: VN}}
  RG: {kind: resistor, value: 1k, pins: {1: IN, 2: SUM}}
  RF: {kind: resistor, value: 1k, pins: {1: SUM, 2: OUT}}
  RX: {kind: resistor, value: 333.333333, pins: {1: SUM, 2: GND}}
signals:
  IN: {dc: [0, 1 V]}
loads:
  OUT: {resistance: 1e15}
"""
    s = _one(_analyse(tmp_path, "50 MHz", "10 MHz", 0, body))
    assert s.inputs[0].gain == pytest.approx(-1.0, rel=1e-3)
    assert s.noise_gain_dc == pytest.approx(5.000, rel=1e-3)
    assert s.phase_margin_deg == pytest.approx(51.83, abs=0.01)


# ---------------------------------------------------------------- input / feedback capacitance (R2 b)

@pytest.mark.parametrize(("rf", "cg", "cf", "fc", "pm", "ng_hf"), [
    ("10k", "10p", None, 3.397e6, 36.68, None),       # [NUM] RULES-REFERENCE R2(b)
    ("100k", "10p", "10p", 4.934e6, 80.66, 2.0),      # [NUM] R2(b), neutralised: NG(∞) = 2 [FR]
    ("100k", "10p", "2p", 1.800e6, 71.10, 6.0),       # [NUM] R2(b), NG(∞) = 1 + Cg/Cf [FR]
])
def test_input_and_feedback_capacitance(tmp_path, rf, cg, cf, fc, pm, ng_hf):
    extra = f"  CG: {{kind: capacitor, value: {cg}, pins: {{1: FB, 2: GND}}}}\n"
    if cf:
        extra += f"  CF: {{kind: capacitor, value: {cf}, pins: {{1: OUT, 2: FB}}}}\n"
    s = _one(_analyse(tmp_path, "10 MHz", "30 MHz", 0, _noninverting(rf, rf, extra)))
    assert s.crossover_hz == pytest.approx(fc, rel=1e-3)
    assert s.phase_margin_deg == pytest.approx(pm, abs=0.01)
    if ng_hf is not None:
        assert s.noise_gain_hf == pytest.approx(ng_hf, rel=2e-3)
    else:
        assert s.noise_gain_hf > 50  # no Cf: NG grows without bound above fz [FR]


# ---------------------------------------------------------------- transimpedance (R2 d)

@pytest.mark.parametrize(("cf", "fc", "pm"), [
    ("1.262p", 159.0e3, 52.18),  # [GR] formula, [NUM] PM, RULES-REFERENCE R2(d)
    ("2.523p", 253.6e3, 76.41),  # [NUM] RULES-REFERENCE R2(d)
])
def test_transimpedance_phase_margin(tmp_path, cf, fc, pm):
    body = f"""components:
  U1: {{kind: opamp, part: TWO-POLE, pins: {{in+: GND, in-: PD, out: OUT, v+: VP, v-: VN}}}}
  RF: {{kind: resistor, value: 1M, pins: {{1: PD, 2: OUT}}}}
  CF: {{kind: capacitor, value: {cf}, pins: {{1: PD, 2: OUT}}}}
  CIN: {{kind: capacitor, value: 100p, pins: {{1: PD, 2: GND}}}}
signals:
  PD: {{dc: [0, 0], source_resistance: 1e15}}
loads:
  OUT: {{resistance: 1e15}}
"""
    s = _one(_analyse(tmp_path, "10 MHz", "1e12 Hz", 0, body))
    assert s.topology == "transimpedance"
    assert s.crossover_hz == pytest.approx(fc, rel=2e-3)
    assert s.phase_margin_deg == pytest.approx(pm, abs=0.02)


# ---------------------------------------------------------------- capacitive load and output resistance (R2 e)

@pytest.mark.parametrize(("cl", "fc", "pm"), [
    (None, 9.531e6, 72.38),   # [FR] model, [NUM] RULES-REFERENCE R2(e)
    ("1n", 3.817e6, 15.38),   # [FR] model, [NUM] RULES-REFERENCE R2(e)
])
def test_follower_with_capacitive_load(tmp_path, cl, fc, pm):
    loads = "  OUT: {resistance: 1e15" + (f", capacitance: {cl}}}\n" if cl else "}\n")
    s = _one(_analyse(tmp_path, "10 MHz", "30 MHz", 100, _noninverting(None, None, loads=loads)))
    assert s.topology == "follower"
    assert s.crossover_hz == pytest.approx(fc, rel=1e-3)
    assert s.phase_margin_deg == pytest.approx(pm, abs=0.01)
    assert s.load_capacitance == pytest.approx(1e-9 if cl else 0.0)
    assert s.output_resistance == pytest.approx(1.000e-3, rel=1e-3)  # Ro/(1 + T), T = 1e5 [FR] R2(e)


# ---------------------------------------------------------------- loop gain at f_max and slew rate (R4c, R4d)

def test_loop_gain_at_highest_signal_frequency(tmp_path):
    # GBW 1 MHz, NG 10, 20 kHz: T = 5.000 [DER] RULES-REFERENCE R4c (single pole)
    body = _noninverting("90k", "10k", signal="dc: [0, 0.1 V], ac_amplitude: 10 mV, band: [20 Hz, 20 kHz]")
    s = _one(_analyse(tmp_path, "1 MHz", "1e12 Hz", 0, body))
    assert s.loop_gain_at_fmax == pytest.approx(5.000, rel=1e-3)
    assert s.f_max == pytest.approx(20e3)


def test_required_slew_rate(tmp_path):
    # 10 V peak at 20 kHz needs 1.257 V/µs [DER] RULES-REFERENCE R4d
    body = _noninverting("90k", "10k", signal="dc: [0, 0], ac_amplitude: 1 V, band: [20 Hz, 20 kHz]")
    s = _one(_analyse(tmp_path, "100 MHz", "1e12 Hz", 0, body, rails="15 V"))
    assert s.vout_ac_peak == pytest.approx(10.0, rel=1e-3)
    assert s.required_slew_rate == pytest.approx(1.257e6, rel=1e-3)


def test_slew_rate_from_dc_swing_when_no_ac_amplitude(tmp_path):
    # no AC amplitude: half the DC output swing at f_max, 2π·f·Vpk [FR] RULES-REFERENCE R4d
    body = _noninverting("10k", "10k", signal="dc: [0, 2 V], band: [1 Hz, 1 kHz]")
    s = _one(_analyse(tmp_path, "10 MHz", "30 MHz", 0, body))
    assert s.vout_max - s.vout_min == pytest.approx(4.0, rel=1e-3)
    assert s.required_slew_rate == pytest.approx(2 * math.pi * 1e3 * 2.0, rel=1e-3)


# ---------------------------------------------------------------- feedback sign (R5m)

def test_positive_feedback_sign_and_loop_gain(tmp_path):
    # Schmitt trigger: R1 = 10k in+ to 0 V, R2 = 100k out to in+: T(0) = -9091 for A0 = 1e5 [DER] R5m
    body = """components:
  U1: {kind: opamp, part: TWO-POLE, pins: {in+: P, in-: IN, out: OUT, v+: VP, v-: VN}}
  R1: {kind: resistor, value: 10k, pins: {1: P, 2: GND}}
  R2: {kind: resistor, value: 100k, pins: {1: OUT, 2: P}}
signals:
  IN: {dc: [0, 1 V]}
loads:
  OUT: {resistance: 1e15}
"""
    s = _one(_analyse(tmp_path, "10 MHz", "30 MHz", 0, body))
    assert s.feedback == "positive"
    assert s.loop_gain_dc == pytest.approx(-9091, rel=1e-3)
    assert s.vout_min is None and s.phase_margin_deg is None


def test_load_resistance_includes_feedback_network(tmp_path):
    # non-inverting: RL_eff = RL || (Rf + Rg) [FR] RULES-REFERENCE R3
    body = _noninverting("30k", "10k", loads="  OUT: {resistance: 10k}\n")
    s = _one(_analyse(tmp_path, "10 MHz", "30 MHz", 0, body))
    assert s.load_resistance == pytest.approx(1 / (1 / 10e3 + 1 / 40e3), rel=1e-4)
    # peak current at the 4 V output corner: 4 V / 8 kΩ (Ohm's law)
    assert s.iout_peak == pytest.approx(4.0 / 8e3, rel=1e-3)


def test_assumed_parameters_and_estimated_second_pole(tmp_path):
    path = tmp_path / "bare.yaml"
    path.write_text("""afecheck: 1
parts:
  BARE: {gbw: 10 MHz, min_stable_gain: 1}
rails: {VP: {voltage: 5 V}}
components:
  U1: {kind: opamp, part: BARE, pins: {in+: IN, in-: OUT, out: OUT, v+: VP, v-: GND}}
signals: {IN: {dc: [1 V, 2 V]}}
loads: {OUT: {resistance: 10k}}
""", encoding="utf-8")
    s = _one(analyse(load_design(path)))
    assert "second_pole" in s.assumed and "open_loop_gain" in s.assumed
    assert s.estimated
    assert (s.rail_plus, s.rail_minus) == (5.0, 0.0)


# ---------------------------------------------------------------- ngspice cross-check

@pytest.mark.ngspice
def test_ntc_inverting_operating_point_matches_ngspice(tmp_path):
    from tests.ngspice_harness import parse_print, run_ngspice

    text = (FIXTURES / "ntc_inverting.yaml").read_text().replace("[0 °C, 50 °C]", "[25 °C, 25 °C]")
    path = tmp_path / "at25.yaml"
    path.write_text(text, encoding="utf-8")
    a = analyse(load_design(path))
    # same circuit by hand: A0 = 1e5 VCVS, 1 GΩ differential and common-mode input resistances, Ro = 0
    deck = """ntc inverting stage
VREF vref 0 DC 1
R1 vref th 10k
RT1 th 0 10k
RI th sum 10k
RF sum out 20k
RDIFF sum 0 1G
RCMM sum 0 1G
E1 out 0 0 sum 1e5
.control
set numdgt=15
op
print v(th) v(out)
quit
.endc
.end
"""
    out, _ = run_ngspice(deck, tmp_path)
    values = parse_print(out)
    assert a.nets["TH"].dc_min == pytest.approx(values["v(th)"], rel=1e-9)
    assert a.nets["OUT"].dc_min == pytest.approx(values["v(out)"], rel=1e-9)


def test_reference_follower_and_gain_five_margins(tmp_path):
    # ngspice figures recorded in REFERENCE-TOOLS: A0 1e5, poles 100 Hz and 30 MHz, Ro 50 Ω
    s1 = _one(_analyse(tmp_path, "10 MHz", "30 MHz", 50, _noninverting(None, None)))
    assert s1.phase_margin_deg == pytest.approx(72.376, abs=2e-3)
    assert s1.crossover_hz == pytest.approx(9.5306e6, rel=2e-4)
    s5 = _one(_analyse(tmp_path, "10 MHz", "30 MHz", 50, _noninverting("40k", "10k")))
    assert s5.phase_margin_deg == pytest.approx(86.201, abs=2e-3)
    assert s5.crossover_hz == pytest.approx(1.9936e6, rel=2e-4)


def test_fixture_files_name_no_real_parts():
    for f in FIXTURES.glob("*.yaml"):
        assert not re.search(r"\b(LM|OPA|AD|TL|MCP|LT)\d", f.read_text()), f
