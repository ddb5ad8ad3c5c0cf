"""The parts a stage input's signal passes on its way to the op-amp pin: the shortest path through the stage's own
parts that crosses no rail, no other signal's net and not the op-amp's output, even when such a crossing would be
shorter."""

from __future__ import annotations

from afecheck.analysis.stage_analysis import _series_path
from afecheck.graph.build import circuit_of
from afecheck.model.load import load_design

# IN reaches the inverting input M through a chain of three resistors; three two-part detours are shorter, one
# through the reference rail, one through another signal's net, one through the op-amp's output
DESIGN = """
afecheck: 1
name: input paths
parts:
  P: {gbw: 1 MHz, open_loop_gain: 1e5}
rails: {VP: {voltage: 5 V}, VN: {voltage: -5 V}, VREF: {voltage: 2.5 V}}
signals:
  IN: {dc: [0 V, 1 V]}
  AUX: {dc: [0 V, 1 V]}
components:
  R1: {kind: resistor, value: 1k, pins: {1: IN, 2: A}}
  R2: {kind: resistor, value: 1k, pins: {1: A, 2: B}}
  R3: {kind: resistor, value: 1k, pins: {1: B, 2: M}}
  RV1: {kind: resistor, value: 1k, pins: {1: IN, 2: VREF}}
  RV2: {kind: resistor, value: 1k, pins: {1: VREF, 2: M}}
  RS1: {kind: resistor, value: 1k, pins: {1: IN, 2: AUX}}
  RS2: {kind: resistor, value: 1k, pins: {1: AUX, 2: M}}
  RO1: {kind: resistor, value: 1k, pins: {1: IN, 2: OUT}}
  RO2: {kind: resistor, value: 1k, pins: {1: OUT, 2: M}}
  U1: {kind: opamp, part: P, pins: {in+: GND, in-: M, out: OUT, v+: VP, v-: VN}}
loads: {OUT: {resistance: 10k}}
"""


def test_the_series_path_goes_around_rails_signals_and_the_output(tmp_path):
    path = tmp_path / "d.yaml"
    path.write_text(DESIGN, encoding="utf-8")
    circuit = circuit_of(load_design(path))
    refs = frozenset({"R1", "R2", "R3", "RV1", "RV2", "RS1", "RS2", "RO1", "RO2"})
    assert _series_path(circuit, "IN", "M", refs, "OUT") == ("R1", "R2", "R3")
    # a path may start on a signal's net and end on it: only nets passed through are barred
    assert _series_path(circuit, "AUX", "M", refs, "OUT") == ("RS2",)
    assert _series_path(circuit, "M", "M", refs, "OUT") == ()
