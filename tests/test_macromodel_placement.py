"""An op-amp's macromodel placed from its part's template (afecheck/analysis/netlist.py ``placed``) is the same
set of elements, names, nodes and values as the macromodel built afresh for that op-amp: the stage netlists
(and every number computed on them) do not depend on which of the two built them.

Every shipped part is placed on ordinary nets, on ground (a grounded in+) and on the same net twice (a follower's
out = in-), with and without offsets, and compared element by element with :func:`opamp_macromodel`; a part with its
parameters left to the generic defaults is included so that the assumed list is exercised too.
"""

from __future__ import annotations

from dataclasses import replace

import pytest

from afecheck.analysis.macromodel import opamp_macromodel
from afecheck.analysis.netlist import GROUND, placed
from afecheck.parts.library import builtin_library
from afecheck.parts.model import OpAmpModel

PARTS = builtin_library()


def _sparse() -> OpAmpModel:
    """A part with only its gain-bandwidth declared: every other parameter is a generic default."""
    some = next(iter(PARTS.values()))
    return OpAmpModel.model_validate({"gbw": float(some.gbw)})


@pytest.mark.parametrize("name", sorted(PARTS) + ["<sparse>"])
@pytest.mark.parametrize("offsets", [True, False])
@pytest.mark.parametrize("pins", [("A", "FB", "OUT"), (GROUND, "FB", "OUT"), ("IN", "OUT", "OUT")])
def test_placed_template_equals_a_fresh_macromodel(name, offsets, pins):
    model = _sparse() if name == "<sparse>" else PARTS[name]
    fresh = opamp_macromodel("U7", *pins, model, include_offsets=offsets)
    template = opamp_macromodel("", "in+", "in-", "out", model, offsets)
    got = placed(template.elements, "U7", dict(zip(("in+", "in-", "out"), pins, strict=True)))
    assert got == list(fresh.elements)
    assert [type(e) for e in got] == [type(e) for e in fresh.elements]
    instance = replace(template.instance, refdes="U7", in_plus=pins[0], in_minus=pins[1], out=pins[2],
                       loop_element="U7" + template.instance.loop_element)
    assert instance == fresh.instance


def test_the_parts_exercise_assumed_values_and_the_internal_output_node():
    """The sparse part exercises the assumed list; a shipped part exercises the internal ``#o`` node."""
    assert opamp_macromodel("U1", "a", "b", "c", _sparse()).instance.assumed
    assert any(e.name.endswith("#ro") and e.a == "U1#o"
               for e in opamp_macromodel("U1", "a", "b", "c", next(iter(PARTS.values()))).elements)


def test_an_element_kind_without_a_placement_is_refused():
    from afecheck.analysis.netlist import Vcvs

    with pytest.raises(TypeError):
        placed((Vcvs("#x", "out", GROUND, "in+", "in-", 1.0),), "U1", {"in+": "a", "in-": "b", "out": "c"})
