"""SPICE deck export and the ``afecheck spice`` command; decks run through ngspice where it is installed.

The ngspice runs here are solver-consistency checks (the deck is afecheck's own export); the independent
reference is tests/reference/. Tolerance 1e-6 relative: the same deck on both sides agrees to about
1e-15 (REFERENCE-TOOLS); 1e-6 is a loose allowance above that (common practice)."""

from __future__ import annotations

import io
import math
import textwrap
from pathlib import Path

import pytest
from ngspice_harness import needs_ngspice, opamp_elements, parse_print, read_raw, run_ngspice

from afecheck.analysis.mna import solve_ac, solve_dc
from afecheck.analysis.netlist import (
    Capacitor,
    CurrentSource,
    Netlist,
    Resistor,
    Vccs,
    Vcvs,
    VoltageSource,
    netlist_from_design,
)
from afecheck.analysis.spice import AcSweep, ControlBlock, loop_break_netlist, spice_deck
from afecheck.cli import main
from afecheck.model.load import load_design

SAMPLE = Path(__file__).resolve().parent.parent / "sample_designs" / "soil_probe_reader.yaml"

HYDRO = textwrap.dedent("""
    afecheck: 1
    name: hydrophone preamp (test copy)
    parts:
      TEST-AMP: {gbw: 8 MHz, open_loop_gain: 110 dB, second_pole: 20 MHz, output_resistance: 80,
                 bias_current: 2 pA, offset_voltage: 0.5 mV}
    rails:
      VCC: {voltage: 5 V}
      VMID: {voltage: 2.5 V}
    components:
      CIN: {kind: capacitor, value: 1u, pins: {1: HYD, 2: INP}}
      RB: {kind: resistor, value: 1M, pins: {1: INP, 2: VMID}}
      U1: {kind: opamp, part: TEST-AMP, pins: {in+: INP, in-: FB, out: out, v+: VCC, v-: GND}}
      RF: {kind: resistor, value: 49.9k, pins: {1: out, 2: FB}}
      RG: {kind: resistor, value: 1k, pins: {1: FB, 2: G1}}
      CG: {kind: capacitor, value: 10u, pins: {1: G1, 2: VMID}}
      R9: {kind: resistor, value: 10k, pins: {1: out, 2: OUT}}
      C9: {kind: capacitor, value: 1n, pins: {1: OUT, 2: GND}}
    signals:
      HYD: {dc: [0, 0], ac_amplitude: 10 mV, source_resistance: 2k}
    loads:
      OUT: {resistance: 20k, capacitance: 50 pF}
""")


def run_cli(*argv: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    code = main(list(argv), out, err)
    return code, out.getvalue(), err.getvalue()


def small_netlist() -> Netlist:
    els, inst = opamp_elements("U1", "in+", "in-", "OUT", a0=1e5, gbw=1e6, f2=3e6, ro=100.0, vos=1e-3, ib=1e-9,
                               ccm=2e-12, cdiff=1e-12, rcm=1e12, rdiff=1e12)
    return Netlist((VoltageSource("V1", "in+", "0", dc=0.5, ac=1j), Resistor("RF", "OUT", "in-", 9e3),
                    Resistor("RG", "in-", "0", 1e3), Resistor("RL", "out", "0", 1e3),
                    Resistor("x", "out", "OUT", 1e3), CurrentSource("I1", "0", "out", dc=1e-4),
                    Vcvs("E9", "e", "0", "OUT", "0", 2.0), Vccs("G9", "0", "e", "OUT", "0", 1e-3),
                    Capacitor("C9", "e", "0", 1e-9)) + els, {"U1": inst})


def test_deck_names_are_spice_safe_and_unique() -> None:
    deck = spice_deck(small_netlist(), "test deck")
    lines = deck.text.splitlines()
    assert lines[0] == "test deck" and lines[-1] == ".end"
    cards = [ln for ln in lines[1:] if ln and ln[0] not in "*."]
    names = [c.split()[0] for c in cards]
    assert len({n.lower() for n in names}) == len(names)  # SPICE names ignore case
    assert deck.nodes["out"].lower() != deck.nodes["OUT"].lower()
    for node in deck.nodes.values():
        assert node.replace("_", "").isalnum()
    assert deck.elements["x"].startswith("R") and deck.elements["U1#rdiff"].startswith("R")
    kinds = {c.split()[0][0].upper() for c in cards}
    assert kinds == {"R", "C", "V", "I", "E", "G"}
    # the V1 phasor 1j is written as magnitude 1 and phase 90 degrees
    v1 = next(c for c in cards if c.split()[0] == "V1")
    assert v1.endswith("AC 1.0 90.0")


def test_control_block() -> None:
    deck = spice_deck(small_netlist(), "t", ControlBlock(ac=AcSweep(10, 1.0, 1e6), raw_file="x.raw",
                                                        op_nodes=["OUT"], ac_nodes=["OUT", "in-"]))
    text = deck.text
    assert ".control" in text and ".endc" in text and "set numdgt=15" in text
    assert "ac dec 10 1.0 1000000.0" in text and "write x.raw" in text
    assert f"print v({deck.nodes['OUT']})" in text
    assert text.index(".save") < text.index(".control")


@pytest.mark.ngspice
@pytest.mark.solver_consistency
@needs_ngspice
def test_small_deck_in_ngspice() -> None:
    nl = small_netlist()
    deck = spice_deck(nl, "small", ControlBlock(ac=AcSweep(10, 1.0, 1e8)))
    text, work = run_ngspice(deck.text)
    op = parse_print(text)
    for node, v in solve_dc(nl).voltages().items():
        assert op[deck.vector(node)] == pytest.approx(v, rel=1e-6, abs=1e-9), node
    raw = read_raw(work / "ac.raw")
    mine = solve_ac(nl, raw["frequency"].real).voltage("e")
    assert max(abs(mine - raw[deck.vector("e")]) / abs(mine)) < 1e-6


@pytest.mark.ngspice
@pytest.mark.solver_consistency
@needs_ngspice
def test_design_deck_in_ngspice(tmp_path) -> None:
    path = tmp_path / "hydro.yaml"
    path.write_text(HYDRO, encoding="utf-8")
    nl = netlist_from_design(load_design(path))
    deck = spice_deck(nl, "hydrophone", ControlBlock(ac=AcSweep(20, 0.1, 1e8)))
    text, work = run_ngspice(deck.text)
    op = parse_print(text)
    for node, v in solve_dc(nl).voltages().items():
        assert op[deck.vector(node)] == pytest.approx(v, rel=1e-6, abs=1e-9), node
    raw = read_raw(work / "ac.raw")
    mine = solve_ac(nl, raw["frequency"].real).voltage("OUT")
    assert max(abs(mine - raw[deck.vector("OUT")]) / abs(mine)) < 1e-6


@pytest.mark.ngspice
@pytest.mark.solver_consistency
@needs_ngspice
def test_loop_break_deck_gives_return_ratio() -> None:
    # REFERENCE-TOOLS: breaking at the last VCVS output gives the return ratio exactly
    from afecheck.analysis.loop import loop_gain

    nl = small_netlist()
    broken, node = loop_break_netlist(nl, "U1")
    deck = spice_deck(broken, "loop", ControlBlock(op=False, ac=AcSweep(20, 1.0, 1e9), ac_nodes=[node]))
    _, work = run_ngspice(deck.text)
    raw = read_raw(work / "ac.raw")
    f = raw["frequency"].real
    t = -raw[deck.vector(node)]
    assert max(abs(loop_gain(nl, "U1", f).t - t) / abs(t)) < 1e-9


def test_cli_whole_design_to_stdout(tmp_path) -> None:
    path = tmp_path / "hydro.yaml"
    path.write_text(HYDRO, encoding="utf-8")
    code, out, _ = run_cli("spice", str(path))
    assert code == 0
    assert out.splitlines()[0] == "hydrophone preamp (test copy)"
    assert ".control" not in out and out.rstrip().endswith(".end")
    assert "EU1_gain_a0" in out


def test_cli_stage_to_file(tmp_path) -> None:
    target = tmp_path / "u2.cir"
    target.write_text("old", encoding="utf-8")
    code, out, err = run_cli("spice", str(SAMPLE), "--stage", "U2", "--output", str(target), "--ac")
    assert code == 0 and out == "" and "wrote" in err
    text = target.read_text(encoding="utf-8")
    assert "stage U2" in text.splitlines()[0]
    assert ".control" in text and "write u2.raw" in text
    assert "R1 " not in text  # U1's parts are not in U2's stage
    assert [p.name for p in tmp_path.iterdir()] == ["u2.cir"]  # no temporary file left behind


@pytest.mark.ngspice
@pytest.mark.solver_consistency
@needs_ngspice
def test_cli_stage_deck_matches_whole_design(tmp_path) -> None:
    loaded = load_design(SAMPLE)
    whole = solve_dc(netlist_from_design(loaded))
    for ref in ("U1", "U2"):
        target = tmp_path / f"{ref}.cir"
        assert run_cli("spice", str(SAMPLE), "--stage", ref, "-o", str(target), "--ac")[0] == 0
        work = tmp_path / ref
        work.mkdir()
        text, _ = run_ngspice(target.read_text(encoding="utf-8"), work)
        op = parse_print(text)
        out_net = loaded.design.components[ref].pins["out"]
        assert op[f"v({out_net.lower()})"] == pytest.approx(whole.voltage(out_net), rel=1e-6, abs=1e-9)


def test_cli_bad_stage_and_unwritable_output(tmp_path) -> None:
    code, _, err = run_cli("spice", str(SAMPLE), "--stage", "R1")
    assert code == 2 and "not an op-amp" in err
    code, _, err = run_cli("spice", str(SAMPLE), "-o", str(tmp_path / "missing-dir" / "x.cir"))
    assert code == 2 and "cannot write" in err
    code, _, err = run_cli("spice", str(tmp_path / "absent.yaml"))
    assert code == 2


def test_sweep_covers_the_op_amp() -> None:
    from afecheck.commands.spice import _sweep_range

    lo, hi = _sweep_range(small_netlist())
    assert lo == pytest.approx(1e6 / 1e5 / 10) and hi == pytest.approx(3e6 * 100)
    assert _sweep_range(Netlist((Resistor("R", "a", "0", 1.0),))) == (1.0, 1e9)
    assert math.isfinite(hi)


@pytest.mark.ngspice
@pytest.mark.solver_consistency
@needs_ngspice
def test_single_pole_part_in_ngspice() -> None:
    # a part without a second pole is written with one RC pole only, and still agrees with the solver
    els, inst = opamp_elements("U1", "in", "m", "o", a0=1e5, gbw=1e6, ro=10.0)
    nl = Netlist((VoltageSource("V1", "in", "0", dc=0.1, ac=1.0), Resistor("Rf", "o", "m", 9e3),
                  Resistor("Rg", "m", "0", 1e3)) + els, {"U1": inst})
    deck = spice_deck(nl, "single pole", ControlBlock(ac=AcSweep(10, 1.0, 1e8)))
    assert sum(1 for ln in deck.text.splitlines() if ln.startswith("CU1_gain_c")) == 1
    _, work = run_ngspice(deck.text)
    raw = read_raw(work / "ac.raw")
    mine = solve_ac(nl, raw["frequency"].real).voltage("o")
    assert max(abs(mine - raw[deck.vector("o")]) / abs(mine)) < 1e-6
