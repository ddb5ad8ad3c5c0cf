"""A SPICE ``I`` source to ground into a node that also carries a resistor, read by a follower: the imported current
signal is a Norton source the stage analysis solves with the resistor (the node is I·R, not the current into the
op-amp's input resistance alone), checked against ngspice's operating point of the same file."""

from __future__ import annotations

from pathlib import Path

import pytest
from ngspice_harness import needs_ngspice, parse_print, run_ngspice
from test_spice_import_vs_ngspice import PARTS

from afecheck.analysis.design import analyse_design
from afecheck.model.load import load_design

# TEST-OPA's DC model without its offsets (afecheck holds Vos, Ib and Ios at both signs, so the middle of its
# range is the offset-free operating point): Rdiff 1 GΩ, Rcm 10 GΩ, A0 = 1e5, Ro = 50 Ω
DECK = """\
* current excitation into a sensor resistor, read by a follower
Vp vp 0 dc 5
Vn vn 0 dc -5
Iexc 0 sens dc 1m
Rsens sens 0 1.5k
XU1 sens o vp vn o opgen
Rl o 0 10k
.subckt opgen inp inn vcc vee out
Rd inp inn 1e9
Rc1 inp 0 1e10
Rc2 inn 0 1e10
E1 n1 0 inp inn 1e5
Ro n1 out 50
.ends opgen
.control
set numdgt=15
op
print v(sens) v(o)
quit
.endc
.end
"""


@needs_ngspice
def test_imported_current_source_into_a_resistor_node_is_solved_with_it(tmp_path: Path) -> None:
    (tmp_path / "parts.yaml").write_text(PARTS, encoding="utf-8")
    (tmp_path / "map.yaml").write_text("afecheck-map: 1\nsubcircuits:\n  opgen: {part: TEST-OPA}\n", encoding="utf-8")
    path = tmp_path / "deck.cir"
    path.write_text(DECK, encoding="ascii")
    loaded = load_design(path, netlist_map=tmp_path / "map.yaml", libraries=(tmp_path / "parts.yaml",))
    assert loaded.design.signals["sens"].kind == "current"
    (stage,) = analyse_design(loaded).stages
    text, _ = run_ngspice(DECK, tmp_path)
    theirs = parse_print(text)
    assert theirs["v(o)"] == pytest.approx(1.5, rel=1e-4)  # Ohm: 1 mA × 1.5 kΩ
    assert stage.vout_min is not None and stage.vout_max is not None, stage.not_evaluated
    assert 0.5 * (stage.vout_min + stage.vout_max) == pytest.approx(theirs["v(o)"], rel=1e-6)
    net = analyse_design(loaded).nets["sens"]
    assert 0.5 * (net.dc_min + net.dc_max) == pytest.approx(theirs["v(sens)"], rel=1e-6)
