"""Solver consistency: every sample design against ngspice (DC node voltages, AC responses, phase margins).

The decks come from afecheck's own exporter, so a bug in the macromodel or in how a design becomes a netlist
is invisible here; tests/reference/ holds the independent, hand-written decks.

The whole design goes through the SPICE deck export (macromodel as E/R/C elements); the phase margin that
findings print (StageResult.phase_margin_deg, solved stage by stage) is compared with the return ratio
ngspice computes on the whole design broken at the op-amp's last VCVS (REFERENCE-TOOLS).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from ngspice_harness import needs_ngspice, parse_print, read_raw, run_ngspice

from afecheck.analysis import analyse
from afecheck.analysis.mna import solve_ac, solve_dc
from afecheck.analysis.netlist import netlist_from_design
from afecheck.analysis.spice import AcSweep, ControlBlock, loop_break_netlist, spice_deck
from afecheck.model.load import load_design

ROOT = Path(__file__).resolve().parents[1]
SAMPLES = sorted(p for p in (ROOT / "sample_designs").glob("*.yaml") if not p.name.endswith(".intent.yaml"))

pytestmark = [pytest.mark.ngspice, pytest.mark.solver_consistency, needs_ngspice]


def _worst_phase_margin(f: np.ndarray, t: np.ndarray) -> float | None:
    """Smallest phase margin over every fall of |T| through 1, interpolated in log f (fine grid)."""
    mag = np.abs(t)
    phase = np.unwrap(np.angle(t))
    margins = []
    for i in np.nonzero((mag[:-1] >= 1.0) & (mag[1:] < 1.0))[0]:
        x = np.log(mag[i]) / (np.log(mag[i]) - np.log(mag[i + 1]))
        ph = phase[i] + x * (phase[i + 1] - phase[i])
        margins.append(180.0 + float(np.degrees(ph)))
    return min(margins) if margins else None


@pytest.mark.parametrize("sample", SAMPLES, ids=lambda p: p.name)
def test_sample_dc_and_ac_match_ngspice(sample: Path) -> None:
    # project acceptance limits (common practice for hand checks; same deck both sides, so the real agreement is
    # far tighter): DC within 0.1 % or 1 µV; AC magnitude within 0.5 % and phase within 0.5° over the grid
    nl = netlist_from_design(load_design(sample))
    deck = spice_deck(nl, sample.stem, ControlBlock(ac=AcSweep(20, 1.0, 1e8)))
    text, work = run_ngspice(deck.text)
    op = parse_print(text)
    dc = solve_dc(nl).voltages()
    for node, v in dc.items():
        assert op[deck.vector(node)] == pytest.approx(v, rel=1e-3, abs=1e-6), node
    raw = read_raw(work / "ac.raw")
    f = raw["frequency"].real
    mine = solve_ac(nl, f)
    for node in dc:
        if node == "0" or deck.vector(node) not in raw:
            continue
        theirs = raw[deck.vector(node)]
        ours = mine.voltage(node)
        big = np.abs(theirs) > 1e-9
        if not big.any():
            continue
        assert np.max(np.abs(np.abs(ours[big]) / np.abs(theirs[big]) - 1.0)) < 5e-3, node
        assert np.max(np.abs(np.degrees(np.angle(ours[big] / theirs[big])))) < 0.5, node


@pytest.mark.parametrize("sample", SAMPLES, ids=lambda p: p.name)
def test_printed_phase_margins_match_ngspice(sample: Path) -> None:
    # phase margin within 1° (project acceptance limit): ngspice samples the whole design at 200 points a decade
    # (crossover interpolation error under 0.02°, REFERENCE-TOOLS) versus afecheck's stage-local solve, whose
    # upstream stages are Thevenin equivalents
    loaded = load_design(sample)
    nl = netlist_from_design(loaded)
    for stage in analyse(loaded).stages:
        if stage.phase_margin_deg is None:
            continue
        broken, node = loop_break_netlist(nl, stage.opamp)
        deck = spice_deck(broken, f"loop {stage.opamp}", ControlBlock(op=False, ac=AcSweep(200, 1.0, 1e9),
                                                                      ac_nodes=[node]))
        _, work = run_ngspice(deck.text)
        raw = read_raw(work / "ac.raw")
        pm = _worst_phase_margin(raw["frequency"].real, -raw[deck.vector(node)])
        assert pm is not None, stage.opamp
        # phase margins are compared modulo 360° (an unstable loop: -35° and 325° are the same phase)
        assert abs((stage.phase_margin_deg - pm + 180.0) % 360.0 - 180.0) < 1.0, (sample.name, stage.opamp, pm)
