"""``afecheck convert``: a netlist with its map and intent becomes a YAML design with the same findings."""

from __future__ import annotations

import io
from pathlib import Path

import pytest
from spice_roundtrip import findings_of, round_trip
from test_spice_roundtrip import SAMPLES

from afecheck.analysis import analyse
from afecheck.cli import main
from afecheck.model.load import load_design


def run_cli(*argv: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    code = main(list(argv), out, err)
    return code, out.getvalue(), err.getvalue()


@pytest.mark.parametrize("path", SAMPLES, ids=lambda p: p.name)
def test_converted_netlist_has_the_same_stages_and_findings(path: Path, tmp_path: Path) -> None:
    trip = round_trip(load_design(path), tmp_path)
    inputs = ["convert", str(tmp_path / "board.cir"), "--intent", str(tmp_path / "intent.json"),
              "--map", str(tmp_path / "map.json")]
    if trip.original.design.parts:
        inputs += ["--parts", str(tmp_path / "parts.json")]
    code, _, err = run_cli(*inputs, "-o", str(tmp_path / "board.yaml"))
    assert code == 0, err
    converted = load_design(tmp_path / "board.yaml")
    assert findings_of(converted) == findings_of(trip.back)
    assert analyse(converted).stages == analyse(trip.back).stages
    text = (tmp_path / "board.yaml").read_text(encoding="utf-8")
    first = next(line for line in text.splitlines() if line.startswith("  ") and "kind:" in line)
    assert first.rstrip().endswith(".cir:3") or "# board.cir:" in first
    code, again, _ = run_cli(*inputs)
    assert again == text  # byte-identical, stable order


def test_convert_refuses_to_write_over_an_input(tmp_path: Path) -> None:
    deck = tmp_path / "a.cir"
    deck.write_text("t\nV1 a 0 1\nR1 a 0 1k\n", encoding="utf-8")
    netmap = tmp_path / "m.yaml"
    netmap.write_text("afecheck-map: 1\n", encoding="utf-8")
    for target in (deck, netmap):
        before = target.read_text(encoding="utf-8")
        code, _, err = run_cli("convert", str(deck), "--map", str(netmap), "-o", str(target))
        assert code == 2 and "never writes to its inputs" in err
        assert target.read_text(encoding="utf-8") == before


def test_converted_file_names_each_origin(tmp_path: Path) -> None:
    deck = tmp_path / "a.cir"
    deck.write_text("title here\n* c\nVCC vcc 0 5\nR1 vcc b 1k\nR2 b 0 {2*1k}\n.tran 1u 1m\n.end\n", encoding="utf-8")
    code, out, err = run_cli("convert", str(deck))
    assert code == 0 and "note: " in err and ".tran" in err
    assert "  vcc: {voltage: 5.0}  # a.cir:3\n" in out
    assert '  R2: {kind: resistor, value: 2000.0, pins: {"1": b, "2": "0"}}  # a.cir:5\n' in out
