"""Hand-written netlists in the forms real exports take, read by afecheck and run by ngspice, same file.

Each netlist carries its own ``.control`` block (afecheck reads and ignores it) and an op-amp subcircuit
whose body is the standard-element macromodel of the part it is mapped to (Vos in series with in+, input
resistances, bias currents, a VCVS, an output resistance), so ngspice and afecheck simulate the same circuit.
The DC operating point afecheck computes must equal the voltages ngspice prints, and each stage's output range
the extremes ngspice prints over the part's Vos, Ib and Ios at both signs (ngspice 39, batch mode, 15 digits).
"""

from __future__ import annotations

import itertools
import re
import textwrap
from pathlib import Path

import pytest
from ngspice_harness import needs_ngspice, parse_print, run_ngspice

from afecheck.analysis import analyse
from afecheck.analysis.mna import solve_dc
from afecheck.analysis.netlist import netlist_from_design
from afecheck.model.load import load_design

PARTS = textwrap.dedent("""
    afecheck-parts: 1
    parts:
      TEST-OPA:
        gbw: 1 MHz
        open_loop_gain: 100000
        second_pole: 10 MHz
        output_resistance: 50
        input_resistance_diff: 1 G
        input_resistance_cm: 10 G
        input_capacitance_diff: 0
        input_capacitance_cm: 0
        bias_current: 20 nA
        offset_current: 4 nA
        offset_voltage: 1.5 mV
""")

OPAMP_BODY = """\
Rd inp inn 1e9
Rc1 inp 0 1e10
Rc2 inn 0 1e10
Ib1 inp 0 DC 22n
Ib2 inn 0 DC 18n
Vos p inp DC 1.5m
E1 n1 0 p inn 1e5
Ro n1 out 50
"""

MAP = "afecheck-map: 1\nsubcircuits:\n  {name}: {{part: TEST-OPA}}\n"

FLAT_UPPER = f"""\
* BRIDGE SENSOR FRONT END - FLAT EXPORT, UPPER CASE
.PARAM RG=2K GAIN=11
VSUP VCC 0 DC 5
VSENS SENSE 0 DC 1.2 AC 1
R1 VCC BIAS 100K
R2 BIAS 0 {{100K*1}}
RIN SENSE BIAS 10K
RF OUT FB {{(GAIN-1)*RG}}
RG FB
+ BIAS {{RG}}
XU1 BIAS FB VCC 0 OUT OPGEN
RLOAD OUT 0 10K
.SUBCKT OPGEN INP INN VCC VEE OUT
{OPAMP_BODY.upper()}.ENDS OPGEN
.CONTROL
SET NUMDGT=15
OP
PRINT V(VCC) V(SENSE) V(BIAS) V(FB) V(OUT)
QUIT
.ENDC
.END
"""

HIER_LOWER = f"""\
two-channel amplifier, hierarchical export
.param rbase=4.7k
vcc vdd 0 dc 12
vee vss 0 dc -12
vin1 in1 0 dc 0.25
vin2 in2 0 dc -0.1 ac 0.05
.subckt chan in out vp vn params: gain=2
r1 in mid {{rbase}}
r2 mid out {{rbase*(gain-1)}}
rb out fb 1k ; feedback stopper
xamp in mid vp vn fb opamp5
.ends chan
x1 in1 o1 vdd vss chan gain=3
x2 in2 o2 vdd vss chan params: gain={{1+sqrt(16)}}
rl1 o1 0 2k
rl2 o2 0 2k
.subckt opamp5 in+ in- v+ v- out
{OPAMP_BODY.replace("inp", "in+").replace("inn", "in-")}.ends
.control
set numdgt=15
op
print v(in1) v(o1) v(x1.mid) v(x1.fb) v(o2) v(x2.mid) v(x2.fb)
quit
.endc
.end
"""

INCLUDED = """\
Mixed-case export with the op-amp model in an included library
.include models/opamp.lib
.lib models/extra.lib resistors
Vref Ref 0 2.5
Vsig Sig 0 dc 0.8
* inverting stage around the reference, with an input offset source
Vofs Sig Sig2 DC 0.05
Ri Sig2 Inv 20k $ input resistor
Rf Inv Out 50K
XU7 Ref inv VSupply 0 OUT VendorAmp
Vs VSupply 0 3.3
Rext out 0 {RLOAD}
.control
set numdgt=15
op
print v(ref) v(sig2) v(inv) v(out)
quit
.endc
.end
"""

LIB = f".subckt VendorAmp +IN -IN VCC VEE VOUT\n{OPAMP_BODY}.ends VendorAmp\n".replace(
    "inp", "+IN").replace("inn", "-IN").replace(" out", " VOUT")
EXTRA_LIB = """\
* a library with sections
.lib capacitors
.param CLOAD=1n
.endl capacitors
.lib resistors
.param RLOAD=5k
.endl resistors
"""

CASES = {
    "flat-upper": (FLAT_UPPER, "OPGEN", {"vcc": "VCC", "sense": "SENSE", "bias": "BIAS", "fb": "FB", "out": "OUT"}),
    "hierarchical-lower": (HIER_LOWER, "opamp5", {"in1": "in1", "o1": "o1", "x1.mid": "x1.mid", "x1.fb": "x1.fb",
                                                  "o2": "o2", "x2.mid": "x2.mid", "x2.fb": "x2.fb"}),
    "included-mixed": (INCLUDED, "vendor*", {"ref": "Ref", "sig2": "Sig2", "inv": "Inv", "out": "Out"}),
}


def _write(tmp_path: Path, deck: str, sub: str) -> Path:
    (tmp_path / "models").mkdir()
    (tmp_path / "models" / "opamp.lib").write_text(LIB, encoding="ascii")
    (tmp_path / "models" / "extra.lib").write_text(EXTRA_LIB, encoding="ascii")
    (tmp_path / "parts.yaml").write_text(PARTS, encoding="utf-8")
    (tmp_path / "map.yaml").write_text(MAP.format(name=sub), encoding="utf-8")
    path = tmp_path / "deck.cir"
    path.write_text(deck, encoding="ascii")
    return path


@needs_ngspice
@pytest.mark.parametrize("case", sorted(CASES))
def test_dc_operating_point_equals_ngspice(case: str, tmp_path: Path) -> None:
    deck, sub, nets = CASES[case]
    path = _write(tmp_path, deck, sub)
    loaded = load_design(path, netlist_map=tmp_path / "map.yaml", libraries=(tmp_path / "parts.yaml",))
    text, _ = run_ngspice(deck, tmp_path)
    theirs = parse_print(text)
    mine = solve_dc(netlist_from_design(loaded))
    canonical = {n.lower(): n for n in (*loaded.design.rails, *loaded.design.signals,
                                         *(net for c in loaded.design.components.values() for net in c.pins.values()))}
    assert set(nets) <= set(canonical), sorted(canonical)
    for low, _spelling in nets.items():
        assert mine.voltage(canonical[low]) == pytest.approx(theirs[f"v({low})"], rel=1e-9, abs=1e-12), low
    # each stage's output range from its (point) signal ranges spans the operating points ngspice prints with the
    # part's Vos, Ib and Ios at both signs (issue 10: each is a ± quantity), all eight combinations
    runs = []
    for signs in itertools.product((1, -1), repeat=3):
        (tmp_path / "models" / "opamp.lib").write_text(_signed(LIB, *signs), encoding="ascii")
        runs.append(parse_print(run_ngspice(_signed(deck, *signs), tmp_path)[0]))
    for stage in analyse(loaded).stages:
        out = f"v({stage.out.lower()})"
        if out in theirs and stage.vout_min is not None:
            assert stage.vout_min == pytest.approx(min(r[out] for r in runs), rel=1e-6, abs=1e-9), stage.opamp
            assert stage.vout_max == pytest.approx(max(r[out] for r in runs), rel=1e-6, abs=1e-9), stage.opamp


def _signed(text: str, sv: int, sb: int, so: int) -> str:
    """``text`` with OPAMP_BODY's sources at the given signs of Vos (1.5 mV), Ib (20 nA) and Ios (4 nA):
    Ib+ = Ib + Ios/2 and Ib- = Ib - Ios/2."""
    for value, signed in (("22n", (20 * sb + 2 * so) * 1e-9), ("18n", (20 * sb - 2 * so) * 1e-9),
                          ("1.5m", 1.5e-3 * sv)):
        text = re.sub(rf"\bDC {re.escape(value)}\b", f"DC {signed!r}", text, flags=re.IGNORECASE)
    return text


def test_the_decks_read_as_intended(tmp_path: Path) -> None:
    """Parameters, continuations, subcircuit parameters, includes and sections land where they should."""
    path = _write(tmp_path, HIER_LOWER, "opamp5")
    d = load_design(path, netlist_map=tmp_path / "map.yaml", libraries=(tmp_path / "parts.yaml",)).design
    assert d.components["x1.r2"].value == pytest.approx(9.4e3, rel=1e-12)  # 4.7k * (3 - 1)
    assert d.components["x2.r2"].value == pytest.approx(18.8e3, rel=1e-12)  # 4.7k * (1 + 4 - 1)
    assert d.components["x1.amp"].pins == {"in+": "in1", "in-": "x1.mid", "v+": "vdd", "v-": "vss", "out": "x1.fb"}
    assert d.rails["vdd"].voltage == 12.0 and d.rails["vss"].voltage == -12.0
    assert d.signals["in2"].dc == (-0.1, -0.1) and d.signals["in2"].ac_amplitude == 0.05
    assert "in1" in d.rails  # a DC-only source to ground is a rail unless the intent declares a signal there
    path = _write(tmp_path / "b", INCLUDED, "vendor*") if (tmp_path / "b").mkdir() is None else None
    loaded = load_design(path, netlist_map=tmp_path / "b" / "map.yaml", libraries=(tmp_path / "b" / "parts.yaml",))
    assert loaded.design.components["Rext"].value == 5e3
    assert loaded.design.components["Vofs"].kind == "vsource"
    assert loaded.design.components["U7"].pins["out"] == "Out"  # the first spelling of a case-blind name
    assert loaded.position("components", "U7") == (str(path), 10, 1)
