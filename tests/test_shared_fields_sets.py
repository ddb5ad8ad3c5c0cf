"""Validated models share pydantic's set of given field names where it is equal (a memory saving): every field,
every given-field set and every intent merge read exactly as with a set per model."""

from __future__ import annotations

import sys
from pathlib import Path

from afecheck.model.load import load_design
from afecheck.model.schema import Design
from afecheck.model.validate import share_fields_sets

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT / "tests"))
from tools.generate import generate_design  # noqa: E402

SAMPLES = ROOT / "sample_designs"


def _models(root: object) -> list:
    """Every pydantic model under ``root`` (fields, mappings, tuples, lists), walked independently."""
    found, stack = [], [root]
    while stack:
        node = stack.pop()
        if hasattr(node, "__pydantic_fields_set__"):
            found.append(node)
            stack.extend(node.__dict__.values())
        elif isinstance(node, dict):
            stack.extend(node.values())
        elif isinstance(node, (list, tuple)):
            stack.extend(node)
    return found


def test_equal_field_sets_are_one_object_and_say_the_same() -> None:
    data = generate_design(5)
    alone = Design.model_validate(data)
    shared = Design.model_validate(data)
    share_fields_sets(shared)
    before, after = _models(alone), _models(shared)
    assert len(before) == len(after) > 60
    assert [m.model_fields_set for m in before] == [m.model_fields_set for m in after]
    assert [m.__dict__ for m in before] == [m.__dict__ for m in after]
    distinct = {frozenset(m.model_fields_set) for m in after}
    assert len({id(m.__pydantic_fields_set__) for m in after}) == len(distinct) < len(after) // 5
    assert len({id(m.__pydantic_fields_set__) for m in before}) == len(before)


def test_a_copy_with_an_update_leaves_the_shared_set_alone() -> None:
    loaded = load_design(SAMPLES / "daq_front_end.yaml")
    comps = [c for c in loaded.design.components.values() if c.kind == "resistor"]
    same = [c for c in comps if c.__pydantic_fields_set__ is comps[0].__pydantic_fields_set__]
    assert len(same) >= 2
    given = set(comps[0].model_fields_set)
    changed = same[0].model_copy(update={"description": "moved"})
    assert "description" in changed.model_fields_set
    assert same[1].model_fields_set == given and same[0].model_fields_set == given

