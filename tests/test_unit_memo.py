"""Whole solve units shared between channels that differ only in names (afecheck/analysis/unit_memo.py).

A generated design repeats two channel circuits; some channels are then altered in one respect each, chosen so
that a key which forgot it would hand a twin's result to the altered channel: an upstream gain (the filter after
it is fed a different form), a downstream capacitor (the gain stage's coupled loop and DC pass change), an ADC
load, a thermistor's range, the order a resistor's pins are listed in, and a name that sorts elsewhere. The
reports with the unit memo on and off must be the same text, byte for byte.
"""

from __future__ import annotations

import io
import json
from typing import Any

import pytest
from tools.generate import generate_design

from afecheck.analysis import unit_memo
from afecheck.cli import main


def _altered_design() -> dict[str, Any]:
    d = generate_design(12, name="unit-memo-check")
    comps = d["components"]
    comps["R302"]["value"] = "2.49k"  # channel 3 (NTC): its filter is fed a different output form
    comps["C502"]["value"] = "150n"  # channel 5 (NTC): the gain stage's neighbour differs
    d["loads"]["CH8_ADC"]["capacitance"] = "47 pF"  # channel 8 (sensor): a heavier ADC input
    comps["RT901"]["temperature"] = ["-20 °C", "30 °C"]  # channel 9 (NTC): a wider thermistor range
    comps["R1102"]["pins"] = {2: "CH11_FB", 1: "CH11_AMP"}  # channel 11 (NTC): pins listed the other way round
    comps["A603"] = comps.pop("R603")  # channel 6 (sensor): a name that sorts before the channel's others
    return d


def _text(argv: list[str]) -> str:
    out, err = io.StringIO(), io.StringIO()
    status = main(argv, stdout=out, stderr=err)
    assert status in (0, 1), err.getvalue()
    return out.getvalue()


@pytest.fixture()
def design(tmp_path):
    path = tmp_path / "units.json"
    path.write_text(json.dumps(_altered_design()), encoding="utf-8")
    return str(path)


@pytest.mark.parametrize("command", [["stages", "--json"], ["check", "--format", "json", "--fail-on", "never"],
                                     ["check", "--fail-on", "never"]])
def test_shared_units_give_the_same_report_byte_for_byte(design, monkeypatch, command):
    served: list[str] = []
    real = unit_memo.Renamer.unit
    monkeypatch.setattr(unit_memo.Renamer, "unit",
                        lambda self, r: (lambda out: served.extend(s.opamp for s in out.stages) or out)(real(self, r)))
    shared = _text([*command, design])
    monkeypatch.setattr(unit_memo, "remembered", lambda cache, kind, key: None)
    alone = _text([*command, design])
    assert shared == alone
    # the twins were served from kept results; no altered channel's unit was
    assert {"U401", "U402", "U701", "U1201", "U1202"} <= set(served)
    assert not {"U302", "U501", "U502", "U802", "U901", "U902", "U1101", "U601"} & set(served)


def test_the_alterations_reach_the_numbers(design):
    """Each altered unit's numbers differ from its twin's (else the comparison above would not test the key)."""
    stages = {s["opamp"]: s for s in json.loads(_text(["stages", "--json", design]))["stages"]}
    assert stages["U302"]["vout_max"] != stages["U102"]["vout_max"]
    assert stages["U501"]["phase_margin_deg"] != stages["U101"]["phase_margin_deg"]
    assert stages["U802"]["phase_margin_deg"] != stages["U202"]["phase_margin_deg"]
    assert stages["U901"]["vout_min"] != stages["U101"]["vout_min"]


def _key_of_first_stage(tmp_path, d: dict[str, Any], cache: dict | None = None) -> unit_memo.UnitKey | None:
    from afecheck.analysis.corners import Corners
    from afecheck.graph.build import circuit_of
    from afecheck.graph.stages import find_stages
    from afecheck.model.load import load_design

    path = tmp_path / "one.json"
    path.write_text(json.dumps(d), encoding="utf-8")
    circuit = circuit_of(load_design(str(path)))
    stages = [find_stages(circuit).stages["U101"]]
    return unit_memo.unit_key(circuit, stages, {}, {}, Corners(circuit), {}, None, {} if cache is None else cache)


def test_awkward_names_are_not_keyed(tmp_path):
    """A name holding a character that sorts at or below '#' (derived names append '#...') gives no key, so its
    unit is always solved; an ordinary channel is keyed."""
    d = generate_design(1)
    assert _key_of_first_stage(tmp_path, d) is not None
    d["components"]["R!102"] = d["components"].pop("R102")
    assert _key_of_first_stage(tmp_path, d) is None


def test_a_full_memo_stops_keying(tmp_path):
    """Once MAX_KEPT results are kept (a design of all-different units), no unit is keyed any more: keys would
    only cost."""
    d = generate_design(1)
    assert _key_of_first_stage(tmp_path, d, {unit_memo._KEPT: unit_memo.MAX_KEPT - 1}) is not None
    assert _key_of_first_stage(tmp_path, d, {unit_memo._KEPT: unit_memo.MAX_KEPT}) is None
