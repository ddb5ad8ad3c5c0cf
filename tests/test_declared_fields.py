"""Every field the design format accepts is read by something: the walk over the pydantic models meets the
consumer registry (afecheck/engine/consumers.py), each named consumer exists and reads that field, and a declared
field with no checking consumer is reported by coverage.declared-not-checked ("declared, not checked")."""

from __future__ import annotations

import importlib
import inspect
import types
import typing
from collections.abc import Iterator
from pathlib import Path

import pytest
from pydantic import BaseModel

from afecheck.api import check_file
from afecheck.engine.consumers import BUDGET_DATA, CONSUMERS, TEXT, UNCHECKED, consumer
from afecheck.engine.registry import BUILTIN_RULES
from afecheck.model.schema import Design, Intent


def _models_in(ann) -> list[tuple[str, type[BaseModel]]]:
    """(path suffix, model) for every pydantic model an annotation holds: ``.*`` for dict values, ``[]`` for items,
    ``.<kind>`` for one member of a union of component kinds."""
    origin = typing.get_origin(ann)
    if isinstance(ann, type) and issubclass(ann, BaseModel):
        return [("", ann)]
    if origin is typing.Annotated:
        return _models_in(typing.get_args(ann)[0])
    if origin is dict:
        return [(".*" + s, m) for s, m in _models_in(typing.get_args(ann)[1])]
    if origin in (tuple, list):
        return [("[]" + s, m) for a in typing.get_args(ann) if a is not Ellipsis for s, m in _models_in(a)]
    if origin in (typing.Union, types.UnionType):
        members = [(s, m) for a in typing.get_args(ann) if a is not type(None) for s, m in _models_in(a)]
        if len(members) < 2:
            return members
        return [(f".<{typing.get_args(m.model_fields['kind'].annotation)[0]}>" + s, m) for s, m in members]
    return []


def schema_paths(model: type[BaseModel], prefix: str = "") -> Iterator[str]:
    """Every field path of ``model``, recursively through the models its fields hold."""
    for name, field in model.model_fields.items():
        path = f"{prefix}{name}"
        yield path
        for suffix, sub in _models_in(field.annotation):
            yield from schema_paths(sub, f"{path}{suffix}.")


PATHS = sorted(set(schema_paths(Design)) | set(schema_paths(Intent)))


def test_the_walk_reaches_nested_models() -> None:
    # the walk itself must see deep fields, or the registry check below proves nothing
    for deep in ("loads.*.adc.bits", "parts.*.supply_max", "components.*.<opamp>.intended_gain",
                 "components.*.<resistor>.waive[].expires", "budgets.*.noise"):
        assert deep in PATHS


@pytest.mark.parametrize("path", PATHS)
def test_every_format_field_has_a_registered_consumer(path: str) -> None:
    consumer(path)  # KeyError names the field that nothing reads


def test_registry_names_only_fields_the_format_has() -> None:
    shared = {p.replace(p.split(".")[2], "<*>", 1) for p in PATHS if p.startswith("components.*.<")}
    assert set(CONSUMERS) - set(PATHS) - shared == set()


def _field(path: str) -> str:
    return path.rsplit(".", 1)[-1].replace("[]", "")


RULE_MODULES = {r.meta.id: r.check.__module__ for r in BUILTIN_RULES}


@pytest.mark.parametrize("path", sorted(CONSUMERS))
def test_each_named_consumer_exists_and_reads_the_field(path: str) -> None:
    who = CONSUMERS[path]
    if who in (UNCHECKED, BUDGET_DATA):
        return
    if who == TEXT:
        assert _field(path) == "description"
        return
    module = importlib.import_module(RULE_MODULES[who] if who in RULE_MODULES else f"afecheck.{who}")
    source = inspect.getsource(module)
    if who in RULE_MODULES and _field(path) not in source:
        # a rule may read the field through the shared helpers it imports
        helpers = ("afecheck.checks.common", "afecheck.checks.headroom.limits", "afecheck.checks.loading.sources")
        source += "".join(inspect.getsource(importlib.import_module(m)) for m in helpers)
    assert _field(path) in source, f"{path}: {who} never mentions {_field(path)!r}"


@pytest.mark.parametrize("path", ["budgets.*.noise", "budgets.*.gain_accuracy", "loads.*.adc.sample_rate",
                                  "parts.*.supply_max", "parts.*.max_capacitive_load"])
def test_fields_named_in_the_issue_are_reported_until_a_consumer_registers(path: str) -> None:
    # item 11: these were accepted and never looked at; they are UNCHECKED (coverage.declared-not-checked reports
    # them) or consumed
    assert consumer(path) is UNCHECKED or consumer(path) not in (TEXT, BUDGET_DATA)


def test_item11_declared_noise_budget_and_part_supply_limit_are_reported(tmp_path: Path) -> None:
    design = """afecheck: 1
name: declared but unchecked
parts:
  MY-AMP: {gbw: 1 MHz, supply_max: 5.5 V}
rails: {VCC: {voltage: 12 V}}
signals: {IN: {dc: [1 V, 2 V], band: [1 Hz, 10 Hz]}}
components:
  U1: {kind: opamp, part: MY-AMP, pins: {in+: IN, in-: OUT, out: OUT, v+: VCC, v-: GND}}
loads: {OUT: {resistance: 100k}}
budgets: {OUT: {noise: 10 uV, offset: 5 mV}}
"""
    path = tmp_path / "d.yaml"
    path.write_text(design, encoding="utf-8")
    # both fields now have consumers (budgets.noise, limits.supply-range), so neither is reported as unchecked,
    # and the supply rule does judge the 12 V rail against the part's 5.5 V
    findings = check_file(path).findings
    assert [f for f in findings if f.rule == "coverage.declared-not-checked"] == []
    assert [f.ctx["value"] for f in findings if f.rule == "limits.supply-range"] == [12.0]
    path.write_text(design.replace("noise: 10 uV, ", "").replace(", supply_max: 5.5 V", ""), encoding="utf-8")
    assert [f for f in check_file(path).findings if f.rule == "coverage.declared-not-checked"] == []


@pytest.mark.parametrize("path", [p for p in PATHS if p.startswith(("budgets", "loads.*.adc", "parts."))])
def test_budgets_adc_and_part_limits_have_a_checking_consumer_with_no_exemption(path: str) -> None:
    # issue 12, done when: every field under budgets, loads.*.adc and the part models is read by an analysis or a
    # rule (no UNCHECKED, no "data for a budget not checked yet"); descriptions are text for people
    who = consumer(path)
    assert who not in (UNCHECKED, BUDGET_DATA), f"{path}: {who}"
    assert who != TEXT or path.endswith("description")
