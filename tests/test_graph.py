"""The circuit graph: pins on nets, fixed-voltage nets, DC paths with capacitors open, stage walks."""

from __future__ import annotations

from pathlib import Path

import networkx as nx
import pytest

from afecheck.graph.build import build_circuit
from afecheck.graph.queries import connected_to, dc_path_to_anchor, has_dc_path, net_of, passive_region, stage_stop
from afecheck.model.load import load_design

FIXTURES = Path(__file__).parent / "fixtures" / "stages"


@pytest.fixture(scope="module")
def zoo():
    return build_circuit(load_design(FIXTURES / "topologies.yaml"))


def _write(tmp_path: Path, body: str) -> Path:
    path = tmp_path / "design.yaml"
    path.write_text(body, encoding="utf-8")
    return path


def test_graph_is_bipartite_with_pin_names_on_edges(zoo):
    g = zoo.graph
    assert nx.is_bipartite(g)
    pins = {d["pin"] for _, _, d in g.edges(("comp", "UN"), data=True)}
    assert pins == {"in+", "in-", "out", "v+", "v-"}
    # RN1 joins ON and NFB: one edge per pin (common practice: a two-pin part has two edges)
    assert sorted(n for _, n in g.edges(("comp", "RN1"))) == [("net", "NFB"), ("net", "ON")]


def test_pin_queries(zoo):
    assert net_of(zoo, "UN", "in-") == "NFB"
    assert set(connected_to(zoo, "UN", "in-")) == {("RN1", "2"), ("RN2", "1")}
    assert net_of(zoo, "UN", "nope") is None


def test_fixed_nets_ground_rails_and_sources(tmp_path):
    # a 2.5 V source stacked on a 5 V rail holds its p net at 7.5 V (Kirchhoff's voltage law)
    path = _write(tmp_path, """
afecheck: 1
rails: {VCC: {voltage: 5 V}}
components:
  V1: {kind: vsource, value: 2.5 V, pins: {p: HI, n: VCC}}
  R1: {kind: resistor, value: 1k, pins: {1: HI, 2: GND}}
""")
    c = build_circuit(load_design(path))
    assert c.fixed["GND"] == 0.0
    assert c.fixed["VCC"] == 5.0
    assert c.fixed["HI"] == pytest.approx(7.5)


def test_dc_path_with_capacitors_open(tmp_path):
    # an op-amp input reached only through a capacitor has no DC path (RULES-REFERENCE R5a)
    path = _write(tmp_path, """
afecheck: 1
parts: {P: {gbw: 1 MHz}}
rails: {VCC: {voltage: 5 V}}
signals: {IN: {dc: [0, 1 V]}}
components:
  C1: {kind: capacitor, value: 1u, pins: {1: IN, 2: X}}
  R9: {kind: resistor, value: 1k, pins: {1: Y, 2: X}}
  U1: {kind: opamp, part: P, pins: {in+: Y, in-: OUT, out: OUT, v+: VCC, v-: GND}}
loads: {OUT: {resistance: 10k}}
""")
    c = build_circuit(load_design(path))
    assert not has_dc_path(c, "Y")
    assert has_dc_path(c, "OUT")
    # add a bias resistor to ground: the path now runs Y -> X -> GND
    path2 = _write(tmp_path, path.read_text().replace(
        "loads:", "  RB: {kind: resistor, value: 1M, pins: {1: X, 2: GND}}\nloads:"))
    c2 = build_circuit(load_design(path2))
    assert dc_path_to_anchor(c2, "Y") == ("Y", "X", "GND")


def test_passive_region_stops_at_rails_signals_and_other_outputs(zoo):
    region = passive_region(zoo, ("NFB",), stage_stop(zoo, "ON"))
    assert region.refs == {"RN1", "RN2"}
    assert region.boundary == {"ON", "GND"}
    # the Sallen-Key input walk stops at the signal net SC and at its own output OK
    sk = passive_region(zoo, ("K2",), stage_stop(zoo, "OK"))
    assert sk.refs == {"RK1", "RK2", "CK1", "CK2"}
    assert sk.boundary == {"SC", "OK", "GND"}
