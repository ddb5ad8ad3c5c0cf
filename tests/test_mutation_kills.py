"""Tests written to kill surviving mutants of the mutation run (docs/MUTATION.md): each pins a documented behaviour
the rest of the suite did not look at."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from afecheck.analysis import analyse
from afecheck.analysis.mna import solve_ac, solve_dc
from afecheck.analysis.netlist import Capacitor, Netlist, Resistor, VoltageSource, netlist_from_design
from afecheck.api import check_design
from afecheck.model.load import load_design

CASES = Path(__file__).parent / "reference" / "cases"


def test_band_gain_is_absent_when_the_source_declares_no_band() -> None:
    # StageInput.band_gain: "None when the source declares no band" (analysis/results.py); a source with neither
    # an AC amplitude nor a band must not be swept at all
    (stage,) = analyse(load_design(CASES / "inverting_signal_rs.yaml")).stages
    assert [i.band_gain for i in stage.inputs] == [None]
    assert stage.vout_ac_peak == 0.0 and stage.f_max == 0.0


def test_two_ac_inputs_without_bands_add_their_amplitudes(tmp_path: Path) -> None:
    # two inputs with an AC amplitude but no band are both evaluated at DC in one batched solve; the output
    # amplitude is the sum of amplitude × |gain| (superposition, worst-case phase): the difference amplifier's
    # gains are R2/R1 = 2 on each input, so 2·10 mV + 2·20 mV = 60 mV (A0 = 1e5 at noise gain 3: 3e-5 relative)
    text = (CASES / "difference_4r.yaml").read_text(encoding="utf-8")
    text = text.replace("INP: {dc: [0, 1 V]}", "INP: {dc: [0, 1 V], ac_amplitude: 10 mV}")
    text = text.replace("INN: {dc: [0.2 V, 0.4 V]}", "INN: {dc: [0.2 V, 0.4 V], ac_amplitude: 20 mV}")
    (tmp_path / "ref_parts.yaml").write_text((CASES / "ref_parts.yaml").read_text(encoding="utf-8"), encoding="utf-8")
    path = tmp_path / "difference.yaml"
    path.write_text(text, encoding="utf-8")
    (stage,) = analyse(load_design(path)).stages
    assert stage.vout_ac_peak == pytest.approx(0.06, rel=1e-4)


def test_a_sweep_of_zero_frequencies_is_the_dc_solution_at_each_point() -> None:
    # a batched solve at several 0 Hz points (capacitors open) must give the same answer at every point: the
    # ladder 1 V across 1k + 1k + 2k leaves 0.75 V and 0.5 V (Ohm), with the capacitors open; several unknown
    # nodes, so that each point's matrix is a real system
    nl = Netlist((VoltageSource("V1", "a", "0", dc=1.0, ac=1.0), Resistor("R1", "a", "b", 1e3),
                  Resistor("R2", "b", "c", 1e3), Resistor("R3", "c", "0", 2e3), Capacitor("C1", "b", "0", 1e-6),
                  Capacitor("C2", "c", "0", 1e-6)))
    sol = solve_ac(nl, [0.0, 0.0, 0.0])
    assert np.allclose(sol.voltage("b"), [0.75] * 3, rtol=1e-12)
    assert np.allclose(sol.voltage("c"), [0.5] * 3, rtol=1e-12)


def test_ground_reads_zero_volts_in_a_dc_solution() -> None:
    # the reference node is 0 V by definition (Kirchhoff/MNA), whatever the circuit
    nl = Netlist((VoltageSource("V1", "a", "0", dc=2.0), Resistor("R1", "a", "0", 1e3)))
    assert solve_dc(nl).voltage("0") == 0.0 and solve_dc(nl).voltage("a") == 2.0


def test_whole_design_netlist_puts_each_signal_at_the_middle_of_its_range(tmp_path: Path) -> None:
    # NetlistOptions.signal_point = 0.5 by default: a declared range [lo, hi] is written as lo + 0.5·(hi - lo)
    text = (CASES / "difference_4r.yaml").read_text(encoding="utf-8")
    (tmp_path / "ref_parts.yaml").write_text((CASES / "ref_parts.yaml").read_text(encoding="utf-8"), encoding="utf-8")
    path = tmp_path / "difference.yaml"
    path.write_text(text, encoding="utf-8")
    nl = netlist_from_design(load_design(path))
    assert nl.element("INP#signal").dc == 0.5 and nl.element("INN#signal").dc == pytest.approx(0.3, rel=1e-15)


def test_decompensated_part_below_its_minimum_gain_is_named_as_the_cause(tmp_path: Path) -> None:
    # REF-D is stable from a noise gain of 5 (its part model); at a non-inverting gain of 2 the phase-margin
    # finding must name that as the cause, not a load or the second pole
    text = (CASES / "decompensated_gain10.yaml").read_text(encoding="utf-8").replace("value: 9k", "value: 1k")
    (tmp_path / "ref_parts.yaml").write_text((CASES / "ref_parts.yaml").read_text(encoding="utf-8"), encoding="utf-8")
    path = tmp_path / "decomp.yaml"
    path.write_text(text, encoding="utf-8")
    (pm,) = [f for f in check_design(load_design(path)).findings if f.rule == "stability.phase-margin"]
    assert pm.ctx["cause"] == "below-minimum-gain"


def test_divider_error_at_dc_says_at_dc() -> None:
    # a source without a band is judged at DC, and the message says so rather than "at 0 Hz"
    from fixtures.rules import kit

    from afecheck.checks.loading import input_divider_error

    st = kit.stage(topology="follower", inputs=(kit.stage_input("in+", kit.source("SIG", 1e12, 1e12)),))
    (f,) = kit.run(input_divider_error, kit.design(), [st])
    assert f.ctx["frequency"] == 0.0 and "of the amplitude at DC (limit" in f.message and "0 Hz" not in f.message
