"""The SPICE writer checked by ngspice against hand calculations: names that differ only in case, operating-point
nodes outside the AC list, and the loop-break deck's test source (AC only, no DC)."""

from __future__ import annotations

import re

import numpy as np
import pytest
from ngspice_harness import needs_ngspice, opamp_elements, parse_print, read_raw, run_ngspice

from afecheck.analysis.netlist import GROUND, Netlist, Resistor, VoltageSource
from afecheck.analysis.spice import AcSweep, ControlBlock, loop_break_netlist, spice_deck

# SPICE names: letters, digits and underscore are read the same by every SPICE (common practice); the module
# promises sanitised names (afecheck/analysis/spice.py docstring).
SAFE = re.compile(r"[A-Za-z0-9_]+")


def _ladder() -> Netlist:
    # 4 V into 1 k + 1 k + 1 k + 1 k to ground: 3, 2 and 1 V at the taps (Ohm; an unloaded divider)
    return Netlist((VoltageSource("V1", "top", GROUND, dc=4.0, ac=1.0), Resistor("R1", "top", "out", 1e3),
                    Resistor("R2", "out", "OUT", 1e3), Resistor("R3", "OUT", "Out", 1e3),
                    Resistor("R4", "Out", GROUND, 1e3)))


@pytest.mark.ngspice
@needs_ngspice
def test_three_nets_differing_only_in_case_are_three_nodes() -> None:
    deck = spice_deck(_ladder(), "case", ControlBlock())
    names = [deck.nodes[n] for n in ("top", "out", "OUT", "Out")]
    assert all(SAFE.fullmatch(n) for n in names), names
    assert len({n.lower() for n in names}) == 4  # SPICE ignores case, so the names must differ in more than case
    op = parse_print(run_ngspice(deck.text)[0])
    assert [op[deck.vector(n)] for n in ("out", "OUT", "Out")] == pytest.approx([3.0, 2.0, 1.0], rel=1e-12)


@pytest.mark.ngspice
@needs_ngspice
def test_operating_point_nodes_outside_the_ac_list_are_still_printed(tmp_path) -> None:
    # op at "OUT" only, AC at "out" only: ngspice keeps just what .save lists, so the op node must be saved too
    deck = spice_deck(_ladder(), "op and ac", ControlBlock(op_nodes=["OUT"], ac=AcSweep(2, 10.0, 100.0),
                                                           ac_nodes=["out"]))
    text, work = run_ngspice(deck.text, tmp_path)
    assert parse_print(text)[deck.vector("OUT")] == pytest.approx(2.0, rel=1e-12)
    raw = read_raw(work / "ac.raw")
    assert np.allclose(raw[deck.vector("out")], 0.75, rtol=1e-12)  # 1 V AC at the top, 3/4 of it at "out"


@pytest.mark.ngspice
@needs_ngspice
def test_the_loop_break_source_adds_no_dc(tmp_path) -> None:
    # A follower with its input grounded and no offsets: nothing drives the loop at DC, so every node of the broken
    # loop sits at 0 V (superposition); the test source is a small-signal injection only (R. D. Middlebrook,
    # "Measurement of loop gain in feedback systems", Int. J. Electronics 38(4), 1975). Its AC return is the
    # single-pole open-loop gain times β = 1: T(jf) = A0/(1 + jf·A0/GBW).
    a0, gbw = 1e5, 1e6
    els, inst = opamp_elements("U1", GROUND, "OUT", "OUT", a0=a0, gbw=gbw)
    broken, node = loop_break_netlist(Netlist(els, {"U1": inst}), "U1")
    deck = spice_deck(broken, "loop", ControlBlock(ac=AcSweep(5, 1.0, 1e6), ac_nodes=[node]))
    text, work = run_ngspice(deck.text, tmp_path)
    op = parse_print(text)
    assert op and all(v == 0.0 for v in op.values()), op
    raw = read_raw(work / "ac.raw")
    f = raw["frequency"].real
    assert np.allclose(-raw[deck.vector(node)], a0 / (1 + 1j * f * a0 / gbw), rtol=1e-9)


def test_a_clashing_name_takes_the_next_free_number_from_two() -> None:
    # The deck's node map (its "* node names" comments) reads naturally: the first of a name keeps it, the next
    # one spelt the same but for case is <name>_2, the third <name>_3.
    deck = spice_deck(_ladder(), "case")
    assert [deck.nodes[n] for n in ("out", "OUT", "Out")] == ["out", "OUT_2", "Out_3"]
    assert "*   OUT -> OUT_2" in deck.text.splitlines()


def test_two_part_names_differing_only_in_case_get_two_subcircuits(tmp_path) -> None:
    from afecheck.analysis.netlist import netlist_from_design
    from afecheck.model.load import load_design

    part = ("{gbw: 1 MHz, open_loop_gain: 1e5, output_resistance: 0, input_resistance_diff: 1e15, "
            "input_resistance_cm: 1e15, offset_voltage: 0, bias_current: 0, offset_current: 0}")
    path = tmp_path / "d.yaml"
    path.write_text(f"""afecheck: 1
name: two followers
parts:
  amp: {part}
  AMP: {part}
rails: {{VP: {{voltage: 5 V}}, VN: {{voltage: -5 V}}}}
signals:
  IN: {{dc: [0 V, 1 V]}}
components:
  U1: {{kind: opamp, part: amp, pins: {{in+: IN, in-: A, out: A, v+: VP, v-: VN}}}}
  U2: {{kind: opamp, part: AMP, pins: {{in+: A, in-: B, out: B, v+: VP, v-: VN}}}}
""", encoding="utf-8")
    text = spice_deck(netlist_from_design(load_design(path)), "two").text
    assert ".subckt amp in+ in- out v+ v-" in text and ".subckt AMP_2 in+ in- out v+ v-" in text
    assert any(line.startswith("XU2 ") and line.endswith(" AMP_2") for line in text.splitlines())
