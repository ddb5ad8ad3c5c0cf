"""Which nets the worksheet judges: stage outputs, then loaded nets, then budgeted nets, each once, and never a rail
(its voltage is declared, not computed, so a noise or DC-error figure there would judge the declaration)."""

from __future__ import annotations

from afecheck.analysis import analyse
from afecheck.analysis.worksheet import build_worksheet, worksheet_nets
from afecheck.model.load import load_design

DESIGN = """
afecheck: 1
name: reference with an external load
parts:
  HIZ: {gbw: 1 MHz, open_loop_gain: 1e5}
rails: {VP: {voltage: 5 V}, VN: {voltage: -5 V}, VREF: {voltage: 2.5 V}}
signals:
  IN: {dc: [0 V, 1 V]}
components:
  R1: {kind: resistor, value: 10k, pins: {1: IN, 2: INM}}
  R2: {kind: resistor, value: 10k, pins: {1: INM, 2: OUT}}
  U1: {kind: opamp, part: HIZ, pins: {in+: VREF, in-: INM, out: OUT, v+: VP, v-: VN}}
loads: {OUT: {resistance: 10k}, VREF: {resistance: 1k}, INM: {capacitance: 1p}}
budgets: {VREF: {offset: 1 mV}, OUT: {offset: 1 mV}}
"""


def test_a_loaded_and_budgeted_rail_is_left_out_of_the_worksheet(tmp_path):
    path = tmp_path / "d.yaml"
    path.write_text(DESIGN, encoding="utf-8")
    loaded = load_design(path)
    analysis = analyse(loaded)
    # OUT (the stage output, also loaded and budgeted: once), then INM (loaded); VREF is a rail
    assert worksheet_nets(loaded, analysis) == ("OUT", "INM")
    sheet = build_worksheet(loaded, analysis)
    assert "VREF" not in sheet.noise.nets and "VREF" not in sheet.dc_error.nets
