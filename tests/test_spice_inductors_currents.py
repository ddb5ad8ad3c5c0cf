"""Inductors and independent current sources read from hand-written netlists, checked against ngspice running the
same file: the DC operating point (an inductor a short, a current source's DC value) and the AC response at several
frequencies (jωL, the AC current), to 1e-9 relative (ngspice batch mode, 15 digits, binary raw file).

The op-amp subcircuit's body is the standard-element macromodel of the part it is mapped to (as in
test_spice_import_vs_ngspice.py), so both simulate the same circuit.
"""

from __future__ import annotations

import math
import textwrap
from pathlib import Path

import numpy as np
import pytest
from ngspice_harness import needs_ngspice, parse_print, read_raw, run_ngspice
from test_spice_import_vs_ngspice import OPAMP_BODY, PARTS

from afecheck.analysis.mna import solve_ac, solve_dc
from afecheck.analysis.netlist import netlist_from_design
from afecheck.analysis.spice import spice_deck
from afecheck.cli import main
from afecheck.model.load import load_design

# TEST-OPA's gain with its poles, as afecheck's macromodel has it (docs/ANALYSIS.md): A0 = 1e5, fp1 = GBW/A0 =
# 10 Hz, fp2 = 10 MHz, each an RC low-pass buffered by a unity VCVS, before the 50 Ω output resistance
AC_BODY = OPAMP_BODY.replace("Ro n1 out 50\n", (
    f"Rp1 n1 n2 1k\nCp1 n2 0 {1 / (2 * math.pi * 1e3 * 10.0)!r}\nE2 n3 0 n2 0 1\n"
    f"Rp2 n3 n4 1k\nCp2 n4 0 {1 / (2 * math.pi * 1e3 * 10e6)!r}\nE3 n5 0 n4 0 1\nRo n5 out 50\n"))
CONTROL = """\
.control
set numdgt=15
op
print {op}
ac dec 5 10 1e6
set filetype=binary
write ac.raw {ac}
quit
.endc
.end
"""

# a photodiode-style transimpedance stage fed by a current source, an LC supply filter (inductor with its winding
# resistance written as a separate resistor, as an export does), an inductive load, lower and upper case mixed
TIA = """\
* transimpedance receiver with an LC supply filter
VRAW vraw 0 DC 5
L1 vraw lmid 10u
RW1 lmid vcc 0.2
C1 vcc 0 {CBULK}
.param CBULK=10u
Iph 0 sum DC 2u AC 1u
Rf sum out 100k
Cf sum out 10p
R1 vcc mid 10k
R2 mid 0 10k
XU1 mid sum vcc 0 out opgen
Lload out load 1m m=2
+ ; two 1 mH in parallel
Rload load 0 1k
.subckt opgen inp inn vcc vee out
{body}.ends opgen
"""

# a current sinking out of a net (n- on ground): the signal is negative; an inductor in the feedback of a follower
SINK = """\
* current sink into a resistor ladder, follower with an inductive feedback path
Vs vp 0 dc 3.3
Ibias ladder 0 dc 50u ac 20u sin(0 20u 1k)
Rtop vp ladder 20k
Rbot ladder 0 20k
XU2 ladder fb vp 0 o2 opgen
Lfb o2 fb 4.7m
Rl o2 0 5k
.subckt opgen inp inn vcc vee out
{body}.ends opgen
"""

CASES = {"tia": (TIA, ("vcc", "lmid", "mid", "sum", "out", "load")), "sink": (SINK, ("ladder", "fb", "o2"))}


def _deck(case: str) -> str:
    text, nodes = CASES[case]
    vecs = " ".join(f"v({n})" for n in nodes)
    return text.format(body=AC_BODY, CBULK="{CBULK}") + CONTROL.format(op=vecs, ac=vecs)


def _load(tmp_path: Path, deck: str):  # noqa: ANN202 - LoadedDesign
    (tmp_path / "parts.yaml").write_text(PARTS, encoding="utf-8")
    (tmp_path / "map.yaml").write_text("afecheck-map: 1\nsubcircuits:\n  opgen: {part: TEST-OPA}\n", encoding="utf-8")
    path = tmp_path / "deck.cir"
    path.write_text(deck, encoding="ascii")
    return load_design(path, netlist_map=tmp_path / "map.yaml", libraries=(tmp_path / "parts.yaml",))


def test_inductors_and_current_sources_read_as_intended(tmp_path: Path) -> None:
    d = _load(tmp_path, _deck("tia")).design
    assert d.components["L1"].kind == "inductor" and d.components["L1"].value == pytest.approx(10e-6, rel=1e-12)
    assert d.components["Lload"].value == pytest.approx(0.5e-3, rel=1e-12)  # m=2: two in parallel
    sig = d.signals["sum"]
    assert sig.kind == "current" and sig.current == (2e-6, 2e-6) and sig.ac_current == 1e-6
    d = _load(tmp_path / "b" if (tmp_path / "b").mkdir() is None else tmp_path, _deck("sink")).design
    sig = d.signals["ladder"]  # 50 µA from the net through the source to ground: -50 µA into the net
    assert sig.current == pytest.approx((-50e-6, -50e-6), rel=1e-12) and sig.band == (1e3, 1e3)
    assert sig.ac_current == pytest.approx(20e-6, rel=1e-12)


@needs_ngspice
@pytest.mark.parametrize("case", sorted(CASES))
def test_dc_and_ac_equal_ngspice_on_the_same_file(case: str, tmp_path: Path) -> None:
    deck = _deck(case)
    loaded = _load(tmp_path, deck)
    text, work = run_ngspice(deck, tmp_path)
    theirs = parse_print(text)
    raw = read_raw(work / "ac.raw")
    netlist = netlist_from_design(loaded)
    dc = solve_dc(netlist)
    freqs = np.real(raw["frequency"])
    ac = solve_ac(netlist, freqs)
    nodes = CASES[case][1]
    # a signal's AC value is an amplitude: a current sink's AC is in anti-phase in SPICE, so the sink case
    # compares magnitudes
    same = (lambda z: z) if case == "tia" else np.abs
    for node in nodes:
        assert dc.voltage(node) == pytest.approx(theirs[f"v({node})"], rel=1e-9, abs=1e-12), node
        mine, ref = same(ac.voltage(node)), same(raw[f"v({node})"])
        assert np.allclose(mine, ref, rtol=1e-9, atol=1e-12 * float(np.max(np.abs(ref)))), node
    # the inductor matters: at 1 MHz the 0.5 mH load inductor's 3.1 kΩ reactance drops v(load) well below v(out)
    if case == "tia":
        top = -1
        assert abs(raw["v(load)"][top]) < 0.5 * abs(raw["v(out)"][top])
    assert len(freqs) == 26 and freqs[0] == pytest.approx(10.0) and freqs[-1] == pytest.approx(1e6)


@needs_ngspice
def test_series_resistance_written_by_afecheck_spice_runs_the_same_in_ngspice(tmp_path: Path) -> None:
    # a design with an inductor's winding resistance as a field: `afecheck spice` writes it as L and R in series;
    # ngspice's operating point and AC response of that deck equal afecheck's own solve of the design
    design = tmp_path / "lr.yaml"
    design.write_text(textwrap.dedent("""\
        afecheck: 1
        name: inductor with winding resistance
        ground: GND
        rails:
          VCC: {voltage: 5 V}
        components:
          L1: {kind: inductor, value: 2.2 mH, series_resistance: 12 ohm, pins: {1: VCC, 2: A}}
          R1: {kind: resistor, value: 100, pins: {1: A, 2: GND}}
          C1: {kind: capacitor, value: 1 uF, pins: {1: A, 2: GND}}
          S1: {kind: signal_source, dc: [0 V, 0 V], ac_amplitude: 1 V, pins: {p: B, n: GND}}
          L2: {kind: inductor, value: 100 uH, series_resistance: 0.5, pins: {1: B, 2: A}}
        """), encoding="utf-8")
    loaded = load_design(design)
    netlist = netlist_from_design(loaded)
    from afecheck.analysis.spice import AcSweep, ControlBlock

    deck = spice_deck(netlist, "lr", ControlBlock(op_nodes=["A"], ac=AcSweep(5, 10.0, 1e6), ac_nodes=["A"]))
    text, work = run_ngspice(deck.text, tmp_path)
    assert "L1" in deck.text and " 12.0" in deck.text
    # DC: 5 V through 12 Ω into 100 Ω, with L2 (0.5 Ω) to the 0 V source in parallel (Ohm and Kirchhoff)
    v_a = 5.0 * (1 / 12) / (1 / 12 + 1 / 100 + 1 / 0.5)
    assert solve_dc(netlist).voltage("A") == pytest.approx(v_a, rel=1e-12)
    assert parse_print(text)[deck.vector("A")] == pytest.approx(v_a, rel=1e-9)
    raw = read_raw(work / "lr.raw" if (work / "lr.raw").exists() else work / "ac.raw")
    freqs = np.real(raw["frequency"])
    assert np.allclose(solve_ac(netlist, freqs).voltage("A"), raw[deck.vector("A")], rtol=1e-9, atol=1e-15)


def test_a_floating_current_source_is_refused_with_its_line(tmp_path: Path) -> None:
    path = tmp_path / "f.cir"
    path.write_text("floating\nV1 a 0 1\nR1 a b 1k\nR2 b 0 1k\nI1 a b 1m\n.end\n", encoding="ascii")
    err = __import__("io").StringIO()
    assert main(["check", str(path)], __import__("io").StringIO(), err) == 2
    assert f"{path}:5:1:" in err.getvalue() and "current source between" in err.getvalue()


def test_the_map_gives_an_inductor_its_winding_resistance_and_the_intent_a_sensor_its_capacitance(
        tmp_path: Path) -> None:
    path = tmp_path / "pd.cir"
    path.write_text("photodiode bias\nV1 vcc 0 5\nL1 vcc a 10u\nR1 a 0 100\nI1 0 pd DC 1u AC 0.1u\n"
                    "R2 pd 0 1meg\n.end\n", encoding="ascii")
    (tmp_path / "map.yaml").write_text("afecheck-map: 1\ncomponents:\n  L1: {series_resistance: 25 ohm}\n",
                                       encoding="utf-8")
    (tmp_path / "intent.yaml").write_text("afecheck-intent: 1\nsignals:\n"
                                          "  pd: {kind: current, capacitance: 10 pF, band: [1 Hz, 1 kHz]}\n",
                                          encoding="utf-8")
    loaded = load_design(path, netlist_map=tmp_path / "map.yaml", intent=tmp_path / "intent.yaml")
    d = loaded.design
    assert d.components["L1"].series_resistance == 25.0
    assert d.signals["pd"].kind == "current" and d.signals["pd"].capacitance == 10e-12
    assert d.signals["pd"].current == (1e-6, 1e-6) and d.signals["pd"].band == (1.0, 1e3)
    dc = solve_dc(netlist_from_design(loaded))
    # Ohm: 5 V across 25 Ω + 100 Ω; 1 µA into 1 MΩ
    assert dc.voltage("a") == pytest.approx(5.0 * 100 / 125, rel=1e-12)
    assert dc.voltage("pd") == pytest.approx(1.0, rel=1e-12)
    assert loaded.position("signals", "pd")[1] == 5  # the I card's line
