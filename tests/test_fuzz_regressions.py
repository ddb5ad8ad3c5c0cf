"""Minimised reproducers of defects the long fuzz run found (tests/test_fuzz_long.py, tests/test_fuzz_inputs.py).

Each test names its cause; the expected behaviour is the project's own contract: findings (exit 0/1) or a clear
input error (exit 2), never an internal error (exit 3).
"""

from __future__ import annotations

import io
import json
from pathlib import Path

from afecheck.cli import main

SAMPLES = Path(__file__).resolve().parents[1] / "sample_designs"


def run_json(path: Path) -> tuple[int, dict, str]:
    out, err = io.StringIO(), io.StringIO()
    code = main(["check", "--no-config", "--format", "json", str(path)], out, err)
    return code, (json.loads(out.getvalue()) if code in (0, 1) else {}), err.getvalue()


def test_assumed_resistor_tolerance_is_not_taken_for_a_part_parameter(tmp_path: Path) -> None:
    # Found by the long fuzz on a mutated cold-store sample: with one resistor's tolerance left out, the offset
    # budget rests on the assumed 1 % ("R2.tolerance"); the confidence-by-sensitivity pass took every assumption
    # for an op-amp part parameter, looked up R2's part model and stopped with an internal error (exit 3).
    text = (SAMPLES / "cold_store_logger.yaml").read_text(encoding="utf-8")
    cut = text.replace("value: 3.01k, tolerance: 0.1%,", "value: 3.01k,")
    assert cut != text
    path = tmp_path / "logger.yaml"
    path.write_text(cut, encoding="utf-8")
    code, report, err = run_json(path)
    assert code in (0, 1) and "internal error" not in err, err
    [f] = [f for f in report["findings"] if f["rule"] == "budgets.offset"]
    # a resistor tolerance has no plausible range in the part model: the finding stays an estimate, capped at
    # warning, and says what it assumed
    assert f["assumed"] == ["R2.tolerance"] and f["confidence"] == "estimated" and f["severity"] == "warning"


def test_op_amp_reference_holding_a_dot_keeps_its_assumptions_checked(tmp_path: Path) -> None:
    # The same pass split "U1.a.output_resistance" at the first dot and looked for an op-amp "U1": a dotted
    # reference left every finding on it estimated. Here the phase margin is near zero whatever the undeclared
    # parameters are (10 µF on a 100 Ω open-loop output), so the error stands as computed.
    path = tmp_path / "dotted.yaml"
    path.write_text(
        "afecheck: 1\nname: follower with a dotted reference\n"
        "parts:\n  MY-AMP: {gbw: 1 MHz, open_loop_gain: 100 dB, second_pole: 3 MHz, output_resistance: 100,\n"
        "           input_cm_low: 0 V, input_cm_high: 1 V, output_drop_low: 0.1 V, output_drop_high: 0.1 V,\n"
        "           output_sat_resistance: 50, output_current_limit: 20 mA, slew_rate: 1 V/us}\n"
        "rails: {VCC: {voltage: 5 V}}\nsignals: {IN: {dc: [1 V, 2 V], band: [1 Hz, 10 Hz]}}\ncomponents:\n"
        "  U1.a: {kind: opamp, part: MY-AMP, pins: {in+: IN, in-: OUT, out: OUT, v+: VCC, v-: GND}}\n"
        "  C1: {kind: capacitor, value: 10u, dielectric: film, pins: {1: OUT, 2: GND}}\n"
        "loads: {OUT: {resistance: 100k}}\n", encoding="utf-8")
    code, report, err = run_json(path)
    assert code == 1, err
    [f] = [f for f in report["findings"] if f["rule"] == "stability.phase-margin"]
    assert f["severity"] == "error" and f["confidence"] == "computed", f
    assert "U1.a.input_capacitance_diff" in f["ctx"]["assumptions_checked"]


def test_a_rail_named_inf_is_a_name_not_an_infinite_value(tmp_path: Path) -> None:
    # Found by the 100 000-case fuzz: the kiln sample with its VEE rail renamed "inf". The supply-pin rule lists
    # the declared rails in its message ("declared rails: GND, VCC, inf"); the last guard against NaN/inf read the
    # rail's name as a printed infinity and turned the error into a "not evaluated" warning, so the gate passed.
    text = (SAMPLES / "kiln_thermocouple.yaml").read_text(encoding="utf-8")
    renamed = text.replace("\n  VEE:", "\n  inf:", 1)
    assert renamed != text
    path = tmp_path / "design.yaml"
    path.write_text(renamed, encoding="utf-8")
    code, report, _ = run_json(path)
    assert code == 1
    (finding,) = [f for f in report["findings"] if f["rule"] == "headroom.supply-pin-off-rail"]
    assert finding["severity"] == "error" and "declared rails: GND, VCC, inf" in finding["message"]
