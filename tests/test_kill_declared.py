"""coverage.declared-not-checked lists exactly the declared fields whose registered consumer is UNCHECKED.

The consumer registry is patched (as tests/test_declared_fields.py does) so each case holds whichever fields happen
to be unchecked today: the designer's own part models are listed, the shipped archetypes are not (the designer did
not declare them), every instance of a keyed section is listed once, and a long list is cut after twelve names.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from fixtures.rules import kit

from afecheck.checks import declared
from afecheck.engine import consumers
from afecheck.engine.context import Context
from afecheck.engine.finding import Severity
from afecheck.model.load import load_design
from afecheck.model.loaded import path_text

PART_FIELDS = ("gbw", "open_loop_gain", "second_pole", "min_stable_gain", "output_resistance",
               "input_resistance_diff", "input_resistance_cm", "input_capacitance_diff", "input_capacitance_cm",
               "bias_current", "offset_current", "offset_voltage", "offset_drift", "voltage_noise")


def _paths(loaded) -> list[tuple]:
    return declared.unchecked_paths(Context(loaded).for_rule(declared.META))


def _mark(monkeypatch: pytest.MonkeyPatch, *patterns: str) -> None:
    for p in patterns:
        monkeypatch.setitem(consumers.CONSUMERS, p, consumers.UNCHECKED)


def test_nothing_unchecked_gives_no_finding() -> None:
    assert kit.run(declared, kit.design(), ()) == []


def test_rails_and_components_are_listed_per_instance(monkeypatch: pytest.MonkeyPatch) -> None:
    _mark(monkeypatch, "rails.*.tolerance", "components.*.<resistor>.tolerance")
    comps = {"R1": {"kind": "resistor", "value": 1e3, "tolerance": 0.01, "pins": {"1": "INM", "2": "OUT"}},
             "R2": {"kind": "resistor", "value": 2e3, "tolerance": 0.01, "pins": {"1": "INM", "2": "GND"}},
             "C1": {"kind": "capacitor", "value": 1e-9, "tolerance": 0.1, "pins": {"1": "OUT", "2": "GND"}}}
    loaded = kit.design(comps, rails={"VCC": {"voltage": 5.0, "tolerance": 0.05},
                                      "VEE": {"voltage": -5.0, "tolerance": 0.05}})
    found = _paths(loaded)
    assert sorted(found) == [("components", "R1", "tolerance"), ("components", "R2", "tolerance"),
                             ("rails", "VCC", "tolerance"), ("rails", "VEE", "tolerance")]
    (f,) = kit.run(declared, loaded, ())
    assert f.severity is Severity.INFO and f.ctx["count"] == 4


def test_own_part_fields_are_listed_and_a_long_list_is_cut_after_twelve(monkeypatch: pytest.MonkeyPatch) -> None:
    _mark(monkeypatch, *(f"parts.*.{name}" for name in PART_FIELDS))
    loaded = kit.design()
    found = _paths(loaded)
    assert sorted(found) == sorted(("parts", "KIT-AMP", name) for name in PART_FIELDS)
    (f,) = kit.run(declared, loaded, ())
    assert f.ctx["count"] == 14 and len(f.ctx["fields"]) == 14
    shown = f.message.split("declared, not checked: ")[1].split(": no analysis")[0]
    assert shown.count(", ") == 11 and shown.endswith(" and 2 more")
    # the finding points at the first field listed
    assert f.location.path == path_text(found[0]) != path_text(found[1])
    # thirteen: twelve shown and one more
    monkeypatch.setitem(consumers.CONSUMERS, "parts.*.voltage_noise", "budgets.noise")
    (f,) = kit.run(declared, loaded, ())
    assert f.ctx["count"] == 13 and f.message.split(": no analysis")[0].endswith(" and 1 more")
    # exactly twelve: every name shown, no "more"
    monkeypatch.setitem(consumers.CONSUMERS, "parts.*.offset_drift", "budgets.drift")
    (f,) = kit.run(declared, loaded, ())
    assert f.ctx["count"] == 12 and "more" not in f.message


def test_shipped_archetypes_are_not_the_designers_declarations(tmp_path, monkeypatch: pytest.MonkeyPatch) -> None:
    _mark(monkeypatch, "parts.*.gbw")
    path = tmp_path / "d.yaml"
    path.write_text("afecheck: 1\nname: shipped part\nrails: {VCC: {voltage: 5 V}}\n"
                    "components:\n  U1: {kind: opamp, part: AFE-GP1, pins: {in+: IN, in-: OUT, out: OUT, v+: VCC, "
                    "v-: GND}}\nsignals: {IN: {dc: [1 V, 2 V]}}\n", encoding="utf-8")
    assert _paths(load_design(path)) == []
    assert _paths(kit.design()) == [("parts", "KIT-AMP", "gbw")]


def test_sensors_are_listed_as_declared(monkeypatch: pytest.MonkeyPatch) -> None:
    # a thermocouple is declared as one component and expanded into circuit parts; its own fields are listed
    _mark(monkeypatch, "components.*.<thermocouple>.lead_resistance")
    loaded = load_design(Path(__file__).resolve().parents[1] / "sample_designs" / "kiln_thermocouple.yaml")
    assert ("components", "TC1", "lead_resistance") in _paths(loaded)
