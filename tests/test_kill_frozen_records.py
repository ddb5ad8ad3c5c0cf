"""Every record the analysis package defines refuses assignment: results are shared, so none may be changed in place.

Analysis results are computed once and read by many rules and reporters (and memoised between stages); a record
one reader could alter would silently change what the next one reads. The architecture makes every such record a
frozen dataclass (docs: frozen data throughout, common practice for shared value objects); this checks each one
behaviourally, by trying to assign to a field.
"""

from __future__ import annotations

import dataclasses
import importlib
import pkgutil

import pytest

import afecheck.analysis


def _records() -> list[type]:
    out = []
    for info in pkgutil.iter_modules(afecheck.analysis.__path__, "afecheck.analysis."):
        module = importlib.import_module(info.name)
        for value in vars(module).values():
            if isinstance(value, type) and dataclasses.is_dataclass(value) and value.__module__ == module.__name__:
                out.append(value)
    return sorted(out, key=lambda c: (c.__module__, c.__qualname__))


RECORDS = _records()
# working state of one computation, never returned or shared: mutable on purpose (a new one is added here knowingly)
SCRATCH = {"afecheck.analysis.loop._Bracket", "afecheck.analysis.stage_analysis._Sources",
           "afecheck.analysis.stamps.StampTarget"}


def test_the_analysis_package_defines_records():
    # guards the parametrisation below against finding nothing (a renamed package would make it vacuous)
    assert len(RECORDS) >= 30


@pytest.mark.parametrize("record", RECORDS, ids=lambda c: f"{c.__module__.rsplit('.', 1)[1]}.{c.__qualname__}")
def test_a_record_refuses_assignment(record):
    if f"{record.__module__}.{record.__qualname__}" in SCRATCH:
        return
    instance = object.__new__(record)
    field = dataclasses.fields(record)[0].name
    with pytest.raises(dataclasses.FrozenInstanceError):
        setattr(instance, field, None)


# Records that hold numpy arrays: value equality of arrays is ambiguous (an array comparison is not one truth value)
# and arrays are unhashable, so these compare and hash by identity (numpy's documented behaviour; common practice)
BY_IDENTITY = ["loop.LoopGain", "loop.LoopProbe", "mna.MnaSystem", "mna._Reduction", "mna.DcSolution",
               "mna.AcSolution", "affine.SweptForm", "corners.UnitGrid", "ranges.DcForms"]


@pytest.mark.parametrize("name", BY_IDENTITY)
def test_an_array_record_compares_and_hashes_by_identity(name):
    module, _, cls = name.partition(".")
    record = getattr(importlib.import_module(f"afecheck.analysis.{module}"), cls)
    one, other = object.__new__(record), object.__new__(record)
    assert one == one and one != other  # never field by field (no field is even read)
    assert {one: 1}[one] == 1 and hash(one) != hash(other)
