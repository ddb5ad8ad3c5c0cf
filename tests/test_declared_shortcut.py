"""coverage.declared-not-checked judges components by shape (kind and declared field names) and walks only the fields
that can hold a model: its list must equal the plain walk's, field for field and in order, whatever is unchecked."""

from __future__ import annotations

from typing import Any

import pytest
from fixtures.rules import kit

from afecheck.checks import declared
from afecheck.engine import consumers
from afecheck.engine.context import Context


def _plain_walk(data: Any, path: tuple = ()) -> list[tuple]:
    """Every declared key path, every value visited (the walk before the shortcut)."""
    out: list[tuple] = []
    fields = getattr(data, "model_fields_set", None)
    if fields is not None:
        for name in sorted(fields):
            out.append((*path, name))
            out += _plain_walk(getattr(data, name), (*path, name))
    elif isinstance(data, dict):
        for key, value in data.items():
            out += _plain_walk(value, (*path, str(key)))
    elif isinstance(data, (tuple, list)):
        for i, value in enumerate(data):
            out += _plain_walk(value, (*path, i))
    return out


def _plain_unchecked(loaded) -> list[tuple]:
    d = loaded.design
    out = []
    for path in _plain_walk(d):
        if path[0] == "parts":
            continue
        kind = d.components[path[1]].kind if path[0] == "components" and len(path) > 2 else None
        if consumers.consumer(consumers.pattern_of(path, kind)) is consumers.UNCHECKED:
            out.append(path)
    return out


WAIVER = {"rule": "headroom.output-swing", "justification": "bench-checked", "accepted-by": "a reviewer"}


def _design():
    comps = {
        "R1": {"kind": "resistor", "value": 1e3, "tolerance": 0.01, "pins": {"1": "INM", "2": "OUT"}},
        "R2": {"kind": "resistor", "value": 2e3, "pins": {"1": "INM", "2": "GND"}, "waive": [WAIVER]},
        "R3": {"kind": "resistor", "value": 3e3, "tolerance": 0.01, "pins": {"1": "OUT", "2": "X"},
               "description": "series"},
        "C1": {"kind": "capacitor", "value": 1e-9, "tolerance": 0.1, "pins": {"1": "X", "2": "GND"}},
        "R4": {"kind": "resistor", "value": 4e3, "tolerance": 0.01, "pins": {"1": "X", "2": "GND"}},
    }
    return kit.design(comps, rails={"VCC": {"voltage": 5.0, "tolerance": 0.05}, "VEE": {"voltage": -5.0}})


@pytest.mark.parametrize("patterns", [
    (),
    ("components.*.<resistor>.tolerance",),
    ("components.*.<*>.description", "components.*.<*>.waive[].justification", "rails.*.tolerance"),
    ("components", "components.*.<resistor>.value", "components.*.<capacitor>.tolerance",
     "components.*.<*>.waive"),
])
def test_the_shortcut_lists_what_the_plain_walk_lists(monkeypatch: pytest.MonkeyPatch, patterns) -> None:
    for p in patterns:
        monkeypatch.setitem(consumers.CONSUMERS, p, consumers.UNCHECKED)
    loaded = _design()
    expected = _plain_unchecked(loaded)
    assert declared.unchecked_paths(Context(loaded).for_rule(declared.META)) == expected
    assert len(expected) >= len(patterns)  # each marked pattern is declared somewhere in the design


def test_the_walk_skips_only_leaves() -> None:
    loaded = _design()
    assert list(consumers.declared_fields(loaded.design)) == _plain_walk(loaded.design)
    assert ("components", "R2", "waive", 0, "accepted_by") in _plain_walk(loaded.design)
