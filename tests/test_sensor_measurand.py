"""Errors stated in the measurand's units: the slope at a net against hand calculation from the published equations.

Pt100: dR/dt at 0 °C = R0·A with A from IEC 60751:2022 (Callendar-Van Dusen), through a divider by Ohm's law.
Type K: the Seebeck coefficient as the derivative of the NIST Monograph 175 (ITS-90) reference function, written
out here term by term (polynomial plus the exponential term) from the published coefficients. Bridge: a full
Wheatstone bridge gives V·x (K. Hoffmann, "An Introduction to Measurements using Strain Gages", HBM, 1989).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest

from afecheck.api import check_file
from afecheck.model.load import load_design
from afecheck.sensors.measurand import net_scale

SAMPLES = Path(__file__).resolve().parent.parent / "sample_designs"
IDEAL = ("  IDEAL: {gbw: 1 MHz, open_loop_gain: 1e9, output_resistance: 0, input_resistance_diff: 1T, "
         "input_resistance_cm: 1T, bias_current: 0, offset_current: 0, offset_voltage: 0}\n")

# NIST Monograph 175, type K, 0 °C to 1372 °C: E = Σ c_i·t^i + a0·exp(a1·(t − a2)²), E in mV (published table of
# coefficients, retyped here apart from afecheck/sensors/thermocouple.py)
K_C = (-0.176004136860E-01, 0.389212049750E-01, 0.185587700320E-04, -0.994575928740E-07, 0.318409457190E-09,
       -0.560728448890E-12, 0.560750590590E-15, -0.320207200030E-18, 0.971511471520E-22, -0.121047212750E-25)
K_A = (0.118597600000E+00, -0.118343200000E-03, 0.126968600000E+03)


def seebeck_k_uv(t: float) -> float:
    """dE/dt of the type K reference function in µV/°C, differentiated by hand."""
    a0, a1, a2 = K_A
    poly = sum(i * c * t ** (i - 1) for i, c in enumerate(K_C) if i)
    gauss = a0 * math.exp(a1 * (t - a2) ** 2) * 2.0 * a1 * (t - a2)
    return 1000.0 * (poly + gauss)


def _design(tmp_path: Path, components: str, extra: str = "") -> Path:
    path = tmp_path / "d.yaml"
    path.write_text("afecheck: 1\nname: t\nparts:\n" + IDEAL + "rails:\n  VREF: {voltage: 2.5 V}\n"
                    "  VCC: {voltage: 5 V}\n  VEE: {voltage: -5 V}\ncomponents:\n" + components + extra,
                    encoding="utf-8")
    return path


PT100 = """  R1: {kind: resistor, value: 1k, tolerance: 0.1%, pins: {1: VREF, 2: RTD}}
  RT1: {kind: rtd, r0: 100, temperature: [0 °C, 0 °C], pins: {1: RTD, 2: GND}}
  U1: {kind: opamp, part: IDEAL, pins: {in+: RTD, in-: OUT, out: OUT, v+: VCC, v-: VEE}}
"""


def test_pt100_slope_at_0_c_is_r0_times_a_through_the_divider(tmp_path: Path) -> None:
    scale = net_scale(load_design(_design(tmp_path, PT100)), "OUT")
    assert scale is not None and scale.measurand.sensor == "RT1" and scale.measurand.unit == "°C"
    dr_dt = 100.0 * 3.9083e-3  # IEC 60751: dR/dt at 0 °C = R0·A = 0.39083 Ω/°C
    dv_dr = 2.5 * 1000.0 / (1000.0 + 100.0) ** 2  # Ohm's law on the divider, follower gain 1
    assert scale.slope_v_per_unit == pytest.approx(dv_dr * dr_dt, rel=1e-5)
    assert scale.at == 0.0
    assert scale.equivalent(0.8e-3, "V") == pytest.approx(0.8e-3 / (dv_dr * dr_dt), rel=1e-5)


def test_type_k_slope_is_gain_times_the_seebeck_coefficient_at_the_hot_end() -> None:
    # kiln sample: gain 1 + 49.9k/1k behind a 130 dB part; the type K Seebeck coefficient falls above about 1000 °C,
    # so over 20..1200 °C the smallest slope is at 1200 °C (about 36.5 µV/°C, from the function's derivative)
    scale = net_scale(load_design(SAMPLES / "kiln_thermocouple.yaml"), "OUT")
    assert scale is not None and scale.measurand.sensor == "TC1"
    grid = [20.0 + 1180.0 * k / 8 for k in range(9)]
    assert scale.at == min(grid, key=seebeck_k_uv) == 1200.0
    gain = 1.0 + 49.9e3 / 1.0e3
    assert scale.slope_v_per_unit == pytest.approx(gain * seebeck_k_uv(1200.0) * 1e-6, rel=2e-4)


def test_type_k_slope_at_500_c_with_a_unity_follower(tmp_path: Path) -> None:
    parts = """  TC1: {kind: thermocouple, type: K, hot: [500 °C, 500 °C], cold: [25 °C, 25 °C], pins: {p: TCP, n: GND}}
  U1: {kind: opamp, part: IDEAL, pins: {in+: TCP, in-: OUT, out: OUT, v+: VCC, v-: VEE}}
"""
    scale = net_scale(load_design(_design(tmp_path, parts)), "OUT")
    assert scale is not None
    assert scale.slope_v_per_unit * 1e6 == pytest.approx(seebeck_k_uv(500.0), rel=1e-6)
    assert 42.0 < seebeck_k_uv(500.0) < 43.0  # about 42.6 µV/°C at 500 °C (from memory of the ITS-90 tables)


def test_load_cell_slope_is_gain_times_excitation_times_sensitivity_per_kilogram() -> None:
    scale = net_scale(load_design(SAMPLES / "load_cell_scale.yaml"), "OUT")
    assert scale is not None and scale.measurand.unit == "kg"
    gain = 1.0 + 2.0 * 24.9e3 / 453.0  # three-op-amp in-amp, unity difference stage
    gain /= 1.0 + gain / 10 ** (130 / 20)  # the part's 130 dB open-loop gain (each follower's closed-loop error)
    # full bridge, arms R(1−x), R(1+x0+x), R(1+x), R(1−x) by Kirchhoff: d(out)/dx = 1/(2 + x0) + 1/2, with x0 the
    # bottom-left arm's share that makes the 0.1 mV/V zero offset (x0 = (0.5 + z)/(0.5 − z) − 1)
    z = 0.1e-3
    x0 = (0.5 + z) / (0.5 - z) - 1.0
    per_kg = 3.3 * (1.0 / (2.0 + x0) + 0.5) * 2e-3 / 50.0  # x = 2 mV/V at the 50 kg span (Hoffmann: V·x)
    assert scale.slope_v_per_unit == pytest.approx(gain * per_kg, rel=1e-5)


def test_bridge_without_a_unit_is_stated_in_percent_of_full_scale(tmp_path: Path) -> None:
    parts = ("  B1: {kind: bridge, resistance: 350, sensitivity: 2 mV/V,\n"
             "       pins: {exc+: VREF, exc-: GND, out+: SP, out-: SN}}\n")
    scale = net_scale(load_design(_design(tmp_path, parts, "loads:\n  SP: {}\n  SN: {}\n")), "SP")
    assert scale is not None and scale.measurand.unit == "% of full scale"
    assert (scale.measurand.low, scale.measurand.high) == (0.0, 100.0)
    # out+ of a full bridge, unloaded: V·R(1+x)/(R(1−x) + R(1+x)) = V·(1 + x)/2 (Kirchhoff), x = 2 mV/V at 100 %
    assert scale.slope_v_per_unit == pytest.approx(2.5 / 2.0 * 2e-3 / 100.0, rel=1e-9)


def test_quarter_bridge_strain_slope_is_smallest_at_full_scale_in_microstrain(tmp_path: Path) -> None:
    parts = ("  SG1: {kind: bridge, arrangement: quarter, resistance: 350, sensitivity: 0.5 mV/V,\n"
             "        measurand: [0, 1000], unit: µε, span: 1000, pins: {exc+: VREF, exc-: GND, out+: SP, out-: SN}}\n")
    scale = net_scale(load_design(_design(tmp_path, parts, "loads:\n  SP: {}\n  SN: {}\n")), "SP")
    assert scale is not None and scale.measurand.unit == "µε"
    # quarter bridge: out+ = V·R(1+x)/(R + R(1+x)) (Kirchhoff), d/dx = V/(2+x)², falling with x: smallest at full
    # scale, where 0.5 mV/V of V·x/(4+2x) needs x = 4s/(1−2s)
    s = 0.5e-3
    x_fs = 4 * s / (1 - 2 * s)
    assert scale.at == 1000.0
    assert scale.slope_v_per_unit == pytest.approx(2.5 / (2 + x_fs) ** 2 * x_fs / 1000.0, rel=1e-6)


def test_two_sensors_in_one_channel_give_no_single_measurand(tmp_path: Path) -> None:
    parts = PT100 + "  RT2: {kind: ntc, r25: 10k, beta: 3950 K, temperature: [0 °C, 50 °C], pins: {1: RTD, 2: GND}}\n"
    assert net_scale(load_design(_design(tmp_path, parts)), "OUT") is None


def test_a_channel_without_a_sensor_gives_no_measurand(tmp_path: Path) -> None:
    parts = """  R1: {kind: resistor, value: 1k, pins: {1: VREF, 2: A}}
  R2: {kind: resistor, value: 1k, pins: {1: A, 2: GND}}
  U1: {kind: opamp, part: IDEAL, pins: {in+: A, in-: OUT, out: OUT, v+: VCC, v-: VEE}}
"""
    assert net_scale(load_design(_design(tmp_path, parts)), "OUT") is None


KILN_BUDGETS = """operating_temperature: [0 °C, 50 °C]
components:
  TC1: {kind: thermocouple, type: K, hot: [20 °C, 1200 °C], cold: [10 °C, 45 °C], lead_resistance: 40,
        pins: {p: TCP, n: GND}}
  U1: {kind: opamp, part: AFE-PREC1, pins: {in+: TCP, in-: FB, out: OUT, v+: VCC, v-: VEE}}
  R1: {kind: resistor, value: 49.9k, tolerance: 0.1%, tempco: 50 ppm/K, pins: {1: OUT, 2: FB}}
  R2: {kind: resistor, value: 1.00k, tolerance: 0.1%, pins: {1: FB, 2: GND}}
budgets:
  OUT: {offset: 0.1 mV, drift: 10 uV, gain_accuracy: 0.01%}
"""


def test_budget_findings_state_the_error_at_the_sensor_in_message_and_numbers(tmp_path: Path) -> None:
    path = tmp_path / "kiln.yaml"
    path.write_text("afecheck: 1\nname: kiln\nrails:\n  VCC: {voltage: 5 V}\n  VEE: {voltage: -5 V}\n" + KILN_BUDGETS,
                    encoding="utf-8")
    report = check_file(path)
    by_rule = {f.rule: f for f in report.findings}
    slope = 50.9 * seebeck_k_uv(1200.0) * 1e-6
    for rule in ("budgets.offset", "budgets.drift"):
        f = by_rule[rule]
        assert f.ctx["measurand_unit"] == "°C" and f.ctx["measurand_sensor"] == "TC1"
        assert f.ctx["measurand_value"] == pytest.approx(f.ctx["value"] / slope, rel=2e-4)
        assert f.ctx["measurand_limit"] == pytest.approx(f.ctx["limit"] / slope, rel=2e-4)
        assert f"equals {f.ctx['measurand_value']:.3g} °C at TC1" in f.message
    gain = by_rule["budgets.gain-error"]
    # a gain error is a fraction of span: over the declared 20..1200 °C it misreads the top by that fraction of 1180 °C
    assert gain.ctx["measurand_value"] == pytest.approx(gain.ctx["value"] * 1180.0, rel=1e-12)
    json.dumps(gain.ctx)  # plain data, serialisable as the JSON report needs


def test_bias_offset_finding_states_its_offset_at_the_sensor(tmp_path: Path) -> None:
    # dc-accuracy.bias-offset judges against the part's own offset (not the budget): a general-purpose bipolar part
    # behind 100 kΩ in the thermocouple lead (a protection resistor counted into it) offsets the output by more than
    # the part's own NG·Vos (45 nA × 99 kΩ ≈ 4.5 mV against 2 mV at the input), and says what that is in °C
    path = tmp_path / "kiln.yaml"
    text = KILN_BUDGETS.replace("lead_resistance: 40", "lead_resistance: 100k").replace("AFE-PREC1", "AFE-GP1")
    path.write_text("afecheck: 1\nname: kiln\nrails:\n  VCC: {voltage: 5 V}\n  VEE: {voltage: -5 V}\n" + text,
                    encoding="utf-8")
    (f,) = [f for f in check_file(path).findings if f.rule == "dc-accuracy.bias-offset"]
    slope = 50.9 * seebeck_k_uv(1200.0) * 1e-6
    assert f.ctx["measurand_unit"] == "°C" and f.ctx["measurand_sensor"] == "TC1"
    # 1e-3: with 100 kΩ of lead the chain's solved slope sits 0.06 % off the hand slope (the part is no longer ideal)
    assert f.ctx["measurand_value"] == pytest.approx(f.ctx["value"] / slope, rel=1e-3)
    assert f"equals {f.ctx['measurand_value']:.3g} °C at TC1" in f.message


def test_budget_findings_on_a_plain_voltage_channel_carry_no_measurand(tmp_path: Path) -> None:
    path = tmp_path / "plain.yaml"
    text = KILN_BUDGETS.replace(
        "  TC1: {kind: thermocouple, type: K, hot: [20 °C, 1200 °C], cold: [10 °C, 45 °C], lead_resistance: 40,\n"
        "        pins: {p: TCP, n: GND}}\n", "  S1: {kind: signal_source, dc: [0, 50 mV], pins: {p: TCP, n: GND}}\n")
    path.write_text("afecheck: 1\nname: plain\nrails:\n  VCC: {voltage: 5 V}\n  VEE: {voltage: -5 V}\n" + text,
                    encoding="utf-8")
    found = [f for f in check_file(path).findings if f.rule.startswith("budgets.")]
    assert found and all("measurand_value" not in f.ctx and " equals " not in f.message for f in found)


def test_adc_clipping_states_the_part_of_the_range_lost_at_the_end_that_clips(tmp_path: Path) -> None:
    # the kiln channel into a 2.048 V converter: the top of the 1200 °C range clips; the voltage beyond full scale
    # over the slope at that end (gain × type K Seebeck coefficient at 1200 °C) is the part of the range lost
    text = (SAMPLES / "kiln_thermocouple.yaml").read_text(encoding="utf-8").replace(
        "  OUT: {resistance: 10k, capacitance: 100 pF}",
        "  OUT: {resistance: 10k, capacitance: 100 pF, adc: {full_scale: 2.048 V, bits: 16, sample_rate: 10 Hz}}")
    path = tmp_path / "kiln_adc.yaml"
    path.write_text(text, encoding="utf-8")
    (f,) = [f for f in check_file(path).findings if f.rule == "adc.range"]
    assert f.ctx["measurand_slope_at"] == 1200.0
    slope = 50.9 * seebeck_k_uv(1200.0) * 1e-6
    assert f.ctx["measurand_value"] == pytest.approx(-f.ctx["value"] / slope, rel=2e-4)
    assert f"equals about {f.ctx['measurand_value']:.3g} °C of TC1's range at its 1200 °C end" in f.message


def test_output_clipping_states_the_part_of_the_range_lost(tmp_path: Path) -> None:
    # the kiln stage on a 2.2 V rail cannot reach the top of its output range; the shortfall over the slope at the
    # 1200 °C end (gain × type K Seebeck coefficient there) is the part of the range that clips
    text = (SAMPLES / "kiln_thermocouple.yaml").read_text(encoding="utf-8").replace(
        "  VCC: {voltage: 5 V, tolerance: 2%}", "  VCC: {voltage: 2.2 V, tolerance: 2%}")
    path = tmp_path / "kiln_low.yaml"
    path.write_text(text, encoding="utf-8")
    (f,) = [f for f in check_file(path).findings if f.rule == "headroom.output-swing"]
    slope = 50.9 * seebeck_k_uv(1200.0) * 1e-6
    assert f.ctx["measurand_value"] == pytest.approx(-f.ctx["margin"] / slope, rel=2e-4)
    assert f"the part that clips equals about {f.ctx['measurand_value']:.3g} °C" in f.message


def test_noise_at_a_pt1000_channel_is_stated_in_degrees_at_the_smallest_slope(tmp_path: Path) -> None:
    # the Pt1000 sample with a tight noise budget; the noise band is DC..fs/2 of its converter
    text = (SAMPLES / "pt1000_process_probe.yaml").read_text(encoding="utf-8") + "budgets:\n  OUT: {noise: 10 nV}\n"
    path = tmp_path / "pt1000_noise.yaml"
    path.write_text(text, encoding="utf-8")
    (f,) = [f for f in check_file(path).findings if f.rule == "budgets.noise"]
    # slope at 300 °C, where it is smallest: gain 4.32 × divider dV/dR × IEC 60751 dR/dt = R0·(A + 2·B·t); the
    # sensor's arm holds the element and one 2 Ω lead (3-wire)
    r = 1000.0 * (1 + 3.9083e-3 * 300 - 5.775e-7 * 300 ** 2) + 2.0
    slope = 4.32 * 2.5 * 4990.0 / (4990.0 + r) ** 2 * 1000.0 * (3.9083e-3 + 2 * -5.775e-7 * 300)
    assert f.ctx["measurand_slope_at"] == 300.0
    assert f.ctx["measurand_slope_v_per_unit"] == pytest.approx(slope, rel=1e-4)
    assert f.ctx["measurand_value"] == pytest.approx(f.ctx["value"] / slope, rel=1e-4)


def test_json_report_carries_the_measurand_numbers(tmp_path: Path) -> None:
    import io

    from afecheck.cli import main

    path = tmp_path / "kiln.yaml"
    path.write_text("afecheck: 1\nname: kiln\nrails:\n  VCC: {voltage: 5 V}\n  VEE: {voltage: -5 V}\n" + KILN_BUDGETS,
                    encoding="utf-8")
    out = io.StringIO()
    assert main(["check", "--format", "json", "--fail-on", "never", str(path)], stdout=out,
                stderr=io.StringIO()) == 0
    findings = [f for f in json.loads(out.getvalue())["findings"] if f["rule"] == "budgets.offset"]
    assert len(findings) == 1
    ctx = findings[0]["ctx"]
    assert ctx["measurand_unit"] == "°C" and ctx["measurand_sensor"] == "TC1"
    assert ctx["measurand_value"] == pytest.approx(ctx["value"] / (50.9 * seebeck_k_uv(1200.0) * 1e-6), rel=2e-4)
