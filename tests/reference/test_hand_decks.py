"""Independent reference: afecheck's stage numbers against ngspice on hand-written decks of the same circuits.

Each case in tests/reference/cases is a design written by hand in afecheck's format and, separately, a SPICE deck
written by hand from docs/FORMAT.md with the macromodel in opamp.lib (never produced by afecheck/analysis/spice.py
or its netlist code). A bug in the macromodel, in how a design becomes a netlist (a dropped source resistance, a
swapped offset-current sign, a misread unit) or in the stage solve shows up as a disagreement.

Tolerances, and where they come from: both sides solve the same linear equations, so DC node voltages agree to
1e-6 relative or 1 nV (ngspice prints 15 digits; 1e-6 covers its convergence tolerances, reltol 1e-3 being met
in one Newton step on a linear circuit: common practice); gains and loading errors to 1e-6 relative (tf is the
same linear solve). Crossover within 1e-4 relative and phase margin within 0.01° (ngspice sampled at 1000 points
a decade and interpolated, REFERENCE-TOOLS: 0.02° at 20 points a decade); gain margin within 0.01 dB.
DC ranges are the extremes ngspice finds over every combination of the deck's corners and of each op-amp's offset
voltage, bias and offset currents at both signs (issue 10: each is a ± quantity), so no correlation is assumed.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from harness import CASES, dc_answers, directives, loop_answer
from ngspice_harness import needs_ngspice

from afecheck.analysis import analyse
from afecheck.api import check_design
from afecheck.model.load import load_design

pytestmark = [pytest.mark.ngspice, pytest.mark.reference, needs_ngspice]

DECKS = sorted(CASES.glob("*.cir"))
# Disagreements with ngspice that afecheck still has; strict, so that the fix turns them into failures to remove.
KNOWN_GAPS = {
    ("integrator_reset_capacitor_only", "loop"):
        "afecheck reports no phase margin for an integrator without a DC feedback path (T(0) = 0 reads as "
        "'no feedback'), though its loop crosses over",
}


def _with_gaps(paths: list[Path], kind: str) -> list:
    """The cases, those with a known gap in this kind of comparison ("dc" or "loop") marked strict xfail."""
    return [pytest.param(p, marks=pytest.mark.xfail(strict=True, reason=KNOWN_GAPS[(p.stem, kind)]))
            if (p.stem, kind) in KNOWN_GAPS else p for p in paths]


def _case(deck_path: Path):
    loaded = load_design(deck_path.with_suffix(".yaml"))
    return loaded, analyse(loaded), deck_path.read_text(encoding="ascii")


def test_at_least_thirty_cases_cover_every_topology_and_source_kind() -> None:
    assert len(DECKS) >= 30
    topologies, kinds = set(), set()
    for deck in DECKS:
        _, result, _ = _case(deck)
        for s in result.stages:
            topologies.add(s.topology)
            kinds.update(i.source.kind for i in s.inputs)
    assert {"follower", "non-inverting", "inverting", "summing", "difference", "transimpedance",
            "integrator", "active-filter"} <= topologies
    assert {"signal", "signal-source", "divider", "ntc-divider", "rail", "vsource", "stage-output"} <= kinds


@pytest.mark.parametrize("deck_path", _with_gaps(DECKS, "dc"), ids=lambda p: p.stem)
def test_dc_ranges_gains_and_loading_match_hand_deck(deck_path: Path, tmp_path: Path) -> None:
    loaded, result, deck = _case(deck_path)
    d = directives(deck)
    stages = {s.opamp: s for s in result.stages}
    ans = dc_answers(deck, {s.opamp: s.out for s in result.stages}, tmp_path)
    for opamp, inst, out, ro in d.iout:
        # the peak output current over the corners (no AC here), Ohm's law across the output resistance
        peak = max(abs(c[f"{inst}.o"] - c[out]) / ro for c in ans.corners)
        assert stages[opamp].iout_peak == pytest.approx(peak, rel=1e-6, abs=1e-12), (opamp, "output current")
    for net, (lo, hi) in ans.ranges.items():
        if net not in d.nets:
            continue
        sig = result.nets[net]
        assert sig.dc_min == pytest.approx(lo, rel=1e-6, abs=d.dc_tol), (net, "min")
        assert sig.dc_max == pytest.approx(hi, rel=1e-6, abs=d.dc_tol), (net, "max")
    assert d.inputs or d.loops, "a case must name a stage input or a loop"
    for opamp, net, _src, scale in d.inputs:
        stage = stages[opamp]
        (inp,) = [i for i in stage.inputs if i.net == net]
        gain, r_seen = ans.tf[(net, stage.out)]
        at_net, _ = ans.tf[(net, net)]
        assert inp.gain == pytest.approx(gain / scale, rel=1e-6, abs=1e-9), (opamp, net, "gain")
        # the loading error over the corners; the Thevenin scale of a thermistor divider moves with them too, so
        # its corners give the error relative to the nominal scale, which brackets rather than equals afecheck's
        errors = [1.0 - t / scale for t in [at_net, *ans.at_net.get(net, [])]]
        if inp.source.kind == "ntc-divider":
            assert inp.loading_error_min <= 1.0 - at_net / scale <= inp.loading_error_max, (opamp, net)
        else:
            assert inp.loading_error_min == pytest.approx(min(errors), rel=1e-6, abs=1e-12), (opamp, net, "error")
            assert inp.loading_error_max == pytest.approx(max(errors), rel=1e-6, abs=1e-12), (opamp, net, "error")
        if net in d.rs:
            # Rin near 1 TΩ is a picoampere in an ampere-scale solve: both sides keep about 5 digits (measured
            # 4.5e-6 apart on adc_driver_rc), so 1e-4 relative
            assert inp.input_resistance == pytest.approx(r_seen - d.rs[net], rel=1e-4), (opamp, net, "Rin")


LOOP_DECKS = [p for p in DECKS if directives(p.read_text(encoding="ascii")).loops]


@pytest.mark.parametrize("deck_path", _with_gaps(LOOP_DECKS, "loop"), ids=lambda p: p.stem)
def test_crossover_and_margins_match_hand_deck(deck_path: Path, tmp_path: Path) -> None:
    _, result, deck = _case(deck_path)
    stages = {s.opamp: s for s in result.stages}
    for opamp, tol in directives(deck).loops:
        stage = stages[opamp]
        ans = loop_answer(deck, opamp, tmp_path / opamp)
        assert stage.phase_margin_deg is not None and ans.phase_margin_deg is not None, opamp
        assert stage.phase_margin_deg == pytest.approx(ans.phase_margin_deg, abs=tol), (opamp, "phase margin")
        assert stage.crossover_hz == pytest.approx(ans.crossover_hz, rel=max(1e-4, tol / 10)), (opamp, "crossover")
        if ans.gain_margin_db is not None and stage.gain_margin_db is not None:
            assert stage.gain_margin_db == pytest.approx(ans.gain_margin_db, abs=max(0.01, tol)), (opamp, "GM")
        else:
            assert ans.gain_margin_db is None and stage.gain_margin_db is None, (opamp, "gain margin present")


def test_bias_offset_finding_equals_the_offset_ngspice_finds(tmp_path: Path) -> None:
    # The follower on 1 MΩ with Ib = 1 nA, Ios = 0.5 nA and no offset voltage: the bias-offset rule's worst case
    # NG·(|Ib|·|R- - R+| + |Ios|/2·(R- + R+)) is reached here (both currents flow the same way), so it must equal
    # the output ngspice finds on the hand deck, -1.25 mV (FORMAT.md: Ios = Ib+ - Ib-)
    deck_path = CASES / "follower_bias_1meg.cir"
    loaded, result, deck = _case(deck_path)
    ans = dc_answers(deck, {s.opamp: s.out for s in result.stages}, tmp_path)
    # the rule judges the bias term against the part's own offset error NG·Vos and stays silent for a part with no
    # offset voltage; 1 nV gives it one to judge against without moving the bias figure it prints (nor ngspice's)
    import dataclasses

    judged = dataclasses.replace(loaded, parts={n: m.model_copy(update={"offset_voltage": 1e-9})
                                                for n, m in loaded.parts.items()})
    (finding,) = [f for f in check_design(judged).findings if f.rule == "dc-accuracy.bias-offset"]
    assert ans.ranges["OUT"][0] == pytest.approx(-1.25e-3, rel=1e-4)
    # afecheck scales by the noise gain A/T, whose loop gain T carries the output divider RL/(RL + Ro) =
    # 10k/10.02k; the closed-loop gain from in+ does not (feedback is taken at the pin), so the rule reads 0.2 %
    # high here: 0.3 % allowed, and the overestimate is exactly that divider
    assert finding.ctx["value"] == pytest.approx(-ans.ranges["OUT"][0], rel=3e-3)
    assert finding.ctx["value"] == pytest.approx(-ans.ranges["OUT"][0] * (10e3 + 20) / 10e3, rel=1e-5)
