"""Frequency responses behind the report plots (analysis/curves.py) and ``afecheck stages --curves``.

Checked against the closed forms of a non-inverting stage, against the stage numbers they are drawn with, and
against ngspice on every sample design's own local circuits.
"""

from __future__ import annotations

import io
import json
import math
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
from ngspice_harness import needs_ngspice, read_raw, run_ngspice

from afecheck.analysis.curves import Response, decade_grid, design_curves
from afecheck.analysis.design import analyse_design
from afecheck.analysis.netlist import CurrentSource, VoltageSource
from afecheck.analysis.spice import AcSweep, ControlBlock, loop_break_netlist, spice_deck
from afecheck.cli import main
from afecheck.model.load import load_design

ROOT = Path(__file__).resolve().parents[1]
SAMPLES = sorted(p for p in (ROOT / "sample_designs").glob("*.yaml") if not p.name.endswith(".intent.yaml"))

# A0 = 1e5, poles at 100 Hz and 30 MHz, Ro = 50 Ω, no input capacitance: the macromodel REFERENCE-TOOLS measured
GAIN5 = """\
afecheck: 1
name: gain of five
parts:
  REF-AMP: {gbw: 10 MHz, open_loop_gain: 100000, second_pole: 30 MHz, output_resistance: 50,
            input_capacitance_cm: 0, input_capacitance_diff: 0, input_resistance_cm: 1e15, input_resistance_diff: 1e15,
            bias_current: 0, offset_current: 0, offset_voltage: 0}
rails:
  VCC: {voltage: 5 V}
  VEE: {voltage: -5 V}
components:
  U1: {kind: opamp, part: REF-AMP, pins: {in+: IN, in-: FB, out: OUT, v+: VCC, v-: VEE}}
  R1: {kind: resistor, value: 40k, pins: {1: OUT, 2: FB}}
  R2: {kind: resistor, value: 10k, pins: {1: FB, 2: GND}}
signals:
  IN: {dc: [0, 0.1 V], ac_amplitude: 10 mV, band: [10 Hz, 10 kHz]}
"""


def _at(resp: Response, f: float) -> tuple[float, float]:
    """(dB, degrees) interpolated linearly in log f."""
    x = np.log10(resp.freqs_hz)
    return (float(np.interp(math.log10(f), x, resp.magnitude_db)), float(np.interp(math.log10(f), x, resp.phase_deg)))


@pytest.fixture(scope="module")
def gain5(tmp_path_factory):
    path = tmp_path_factory.mktemp("curves") / "gain5.yaml"
    path.write_text(GAIN5, encoding="utf-8")
    return design_curves(load_design(path))


def test_decade_grid_puts_round_decades_on_the_grid():
    f = decade_grid(3.0, 2e3, 20)
    assert f[0] <= 3.0 and f[-1] >= 2e3
    assert np.allclose(np.diff(np.log10(f)), 1 / 20)
    assert np.isclose(f, 10.0).any() and np.isclose(f, 1000.0).any()


def test_loop_gain_of_a_non_inverting_stage_follows_the_closed_form(gain5):
    analysis, curves = gain5
    c = curves["U1"]
    f = np.asarray(c.loop_gain.freqs_hz)
    # T = A(f)·β with β = R2/(R1+R2) = 1/5, A = A0/((1+jf/fp1)(1+jf/fp2)); Ro = 50 Ω against 50 kΩ moves |T| by
    # 0.1 % (Franco, Design with Operational Amplifiers, 4th ed., ch. 6: loop gain = a·β)
    a = 1e5 / ((1 + 1j * f / 100.0) * (1 + 1j * f / 30e6))
    t = a * 10e3 / (50e3 + 50.0)
    assert np.allclose(c.loop_gain.magnitude_db, 20 * np.log10(np.abs(t)), atol=0.01)
    assert np.allclose(c.loop_gain.phase_deg, np.degrees(np.unwrap(np.angle(t))), atol=0.05)
    # noise gain A/T = 1/β = 5 (+Ro/R) everywhere; the open-loop curve is A itself
    assert np.allclose(c.noise_gain.magnitude_db, 20 * math.log10(5.005), atol=0.01)
    assert np.allclose(c.open_loop.magnitude_db, 20 * np.log10(np.abs(a)), atol=1e-9)


def test_curve_agrees_with_the_crossover_and_phase_margin_it_is_drawn_with(gain5):
    analysis, curves = gain5
    stage = analysis.stages[0]
    # REFERENCE-TOOLS, measured with ngspice: gain-5 (40k/10k) stage, 86.201° at 1.9936 MHz
    assert stage.crossover_hz == pytest.approx(1.9936e6, rel=1e-3)
    assert stage.phase_margin_deg == pytest.approx(86.201, abs=0.01)
    mag, phase = _at(curves["U1"].loop_gain, stage.crossover_hz)
    assert mag == pytest.approx(0.0, abs=0.02)
    assert 180.0 + phase == pytest.approx(stage.phase_margin_deg, abs=0.05)


def test_closed_loop_response_is_the_feedback_formula_over_the_band(gain5):
    analysis, curves = gain5
    c = curves["U1"]
    assert c.band_hz == (10.0, 10e3)
    (resp,) = c.closed_loop
    assert resp.label == "IN"
    f = np.asarray(resp.freqs_hz)
    assert f[0] <= 1.0 and f[-1] >= 3 * analysis.stages[0].crossover_hz
    # A/(1 + Aβ) (Black's feedback formula), Ro negligible against the 50 kΩ feedback path
    a = 1e5 / ((1 + 1j * f / 100.0) * (1 + 1j * f / 30e6))
    h = a / (1 + a * 10e3 / 50e3)
    assert np.allclose(resp.magnitude_db, 20 * np.log10(np.abs(h)), atol=0.02)
    assert _at(resp, 1e3)[0] == pytest.approx(20 * math.log10(5.0), abs=0.01)


def test_stages_curves_json_carries_the_arrays():
    out, err = io.StringIO(), io.StringIO()
    code = main(["stages", "--curves", str(ROOT / "sample_designs" / "vibration_follower.yaml")], out, err)
    assert code == 0, err.getvalue()
    data = json.loads(out.getvalue())
    for stage in data["stages"]:
        curves = stage["curves"]
        loop = curves["loop_gain"]
        assert len(loop["freqs_hz"]) == len(loop["magnitude_db"]) == len(loop["phase_deg"]) > 100
        assert curves["closed_loop"][0]["label"] == "VIB"
        assert curves["band_hz"] == [10.0, 5000.0]
    plain = io.StringIO()
    assert main(["stages", "--json", str(ROOT / "sample_designs" / "vibration_follower.yaml")], plain, err) == 0
    assert "curves" not in json.loads(plain.getvalue())["stages"][0]


@pytest.mark.ngspice
@pytest.mark.solver_consistency
@needs_ngspice
@pytest.mark.parametrize("sample", SAMPLES, ids=lambda p: p.name)
def test_sample_curves_match_ngspice_on_the_same_local_circuits(sample: Path) -> None:
    # tolerance: 0.05 dB and 0.2° on every grid point. Solver consistency: the decks come from afecheck's own
    # exporter, so this checks the sweep and the solve, not the macromodel (the closed forms above check that)
    loaded = load_design(sample)
    circuits: dict = {}
    outputs = {s.opamp: s.out for s in analyse_design(loaded, circuits).stages}
    _, curves = design_curves(loaded)
    for ref, c in curves.items():
        netlist, branches = circuits[ref]
        f = np.asarray(c.loop_gain.freqs_hz)
        broken, node = loop_break_netlist(netlist, ref)
        deck = spice_deck(broken, f"loop {ref}", ControlBlock(op=False, ac=AcSweep(20, f[0], f[-1]), ac_nodes=[node]))
        _, work = run_ngspice(deck.text)
        raw = read_raw(work / "ac.raw")
        _compare(f, c.loop_gain, raw["frequency"].real, -raw[deck.vector(node)], f"{sample.name} {ref} loop")
        for resp in c.closed_loop:
            src = netlist.element(branches[resp.label])
            assert isinstance(src, (VoltageSource, CurrentSource))  # a photodiode input is a current (V/A)
            driven = netlist.replaced(replace(src, ac=1.0))
            f = np.asarray(resp.freqs_hz)
            deck = spice_deck(driven, f"cl {ref}", ControlBlock(op=False, ac=AcSweep(20, f[0], f[-1]),
                                                                 ac_nodes=[outputs[ref]]))
            _, work = run_ngspice(deck.text)
            raw = read_raw(work / "ac.raw")
            h = raw[deck.vector(outputs[ref])]
            _compare(f, resp, raw["frequency"].real, h, f"{sample.name} {ref} {resp.label}")


def _compare(f: np.ndarray, resp: Response, f_spice: np.ndarray, h_spice: np.ndarray, what: str) -> None:
    assert len(f_spice) >= len(f) - 1, what
    n = min(len(f), len(f_spice))
    assert np.allclose(f_spice[:n], f[:n], rtol=1e-6), what
    ref_db = 20 * np.log10(np.abs(h_spice[:n]))
    keep = ref_db > -200
    assert np.max(np.abs(np.asarray(resp.magnitude_db[:n])[keep] - ref_db[keep])) < 0.05, what
    dphase = np.asarray(resp.phase_deg[:n]) - np.degrees(np.angle(h_spice[:n]))
    assert np.max(np.abs((dphase[keep] + 180.0) % 360.0 - 180.0)) < 0.2, what


def test_report_data_carries_the_same_arrays_as_stages_curves() -> None:
    from afecheck.api import review_files

    sample = ROOT / "sample_designs" / "soil_probe_reader.yaml"
    out = io.StringIO()
    assert main(["stages", "--curves", str(sample)], out, io.StringIO()) == 0
    stages = {s["opamp"]: s["curves"] for s in json.loads(out.getvalue())["stages"]}
    (design,) = review_files([str(sample)], detail="curves", discover=False).designs
    assert [v.opamp for v in design.stage_views] == list(stages)
    for v in design.stage_views:
        assert list(v.loop_gain.magnitude_db) == stages[v.opamp]["loop_gain"]["magnitude_db"]
        assert list(v.loop_gain.phase_deg) == stages[v.opamp]["loop_gain"]["phase_deg"]
        assert [list(t.magnitude_db) for t in v.closed_loop] == [c["magnitude_db"]
                                                                 for c in stages[v.opamp]["closed_loop"]]
        assert list(v.band_hz) == stages[v.opamp]["band_hz"]
