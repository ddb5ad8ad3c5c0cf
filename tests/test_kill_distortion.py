"""Distortion rules: where a class-2 ceramic capacitor sits decides whether its voltage coefficient matters."""

from __future__ import annotations

from fixtures.rules import kit

from afecheck.checks.distortion import class2_ceramic
from afecheck.checks.distortion.class2_ceramic import classify
from afecheck.engine.context import Context

BAND = {"SIG": {"band": [10.0, 1e3]}}


def _classify(components: dict, ref: str):
    loaded = kit.design(components, signals=BAND)
    return classify(Context(loaded).for_rule(class2_ceramic.META), ref)


def test_a_capacitor_from_a_stiff_output_to_ground_is_exempt() -> None:
    # the op-amp's loop forces the output voltage whatever the load capacitor's value does (common practice)
    for pins in ({"1": "OUT", "2": "GND"}, {"1": "GND", "2": "OUT"}):
        assert _classify({"CL": {"kind": "capacitor", "value": 1e-6, "dielectric": "X7R", "pins": pins}}, "CL") is None
    # across the feedback path, output to in−, it is part of the transfer function
    cf = {"CF": {"kind": "capacitor", "value": 1e-9, "dielectric": "X7R", "pins": {"1": "OUT", "2": "INM"}}}
    assert _classify(cf, "CF") == ("feedback", 0.0, 1.0)


def test_a_feedback_capacitor_works_against_no_resistance_and_the_default_limit_is_one_percent() -> None:
    # the whole output-to-in− voltage sits across a feedback capacitor: 100 % of the signal, against the rule's
    # default 1 % (a class-2 dielectric's voltage coefficient, common practice); no resistance is named
    cf = {"CF": {"kind": "capacitor", "value": 1e-9, "dielectric": "X7R", "pins": {"1": "OUT", "2": "INM"}}}
    (f,) = kit.run(class2_ceramic, kit.design(cf, signals=BAND), ())
    assert f.ctx["value"] == 1.0 and f.ctx["limit"] == 0.01
    assert "sits in a feedback position with 100 % of the signal across it at 10.0 Hz (limit 1.00 %)" in f.message
