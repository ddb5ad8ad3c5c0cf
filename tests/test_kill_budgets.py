"""Budget rules: a computed figure against its declared budget, worked by hand at the shares the rule pages give.

A budget rule warns above ``budget_warn`` (80 %) and errs above ``budget_error`` (100 %) of the budget; the limit it
prints is that share of the budget and the margin is limit − value (docs/CONFIDENCE.md's ctx convention). The
figures below are chosen so every share is exact: 1.2 mV against 1 mV is 120 %, 0.9 mV is 90 %.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from fixtures.rules import kit

from afecheck.analysis.dc_error import DcTerm
from afecheck.checks.budgets import gain_error_over_budget, offset_over_budget
from afecheck.checks.budgets.offset_over_budget import terms_text
from afecheck.checks.budgets.shared import budget_nets, dc_error_of_budgets, over_budget, top_shares
from afecheck.engine.context import Context
from afecheck.engine.finding import Severity
from afecheck.model.load import load_design

BUDGETS = {"OUT": {"offset": 1e-3}, "MID": {"noise": 1e-6}, "REF": {"gain_accuracy": 0.01, "drift": 1e-3}}


def _ctx(rule, params=None):
    return Context(kit.design(budgets=BUDGETS)).for_rule(rule.META, params)


def test_over_budget_error_warning_and_pass_by_hand() -> None:
    ctx = _ctx(offset_over_budget)
    f = over_budget(ctx, "OUT", "offset", 1.2e-3, 1e-3, "V", "worst-case offset", "detail")
    assert f.severity is Severity.ERROR and f.ctx["limit"] == 1e-3
    assert f.ctx["margin"] == pytest.approx(-0.2e-3, rel=1e-12) and f.ctx["value"] == 1.2e-3
    assert f.message.startswith("OUT: worst-case offset 1.20 mV is 120 % of its 1.00 mV budget (limit 1.00 mV); detail")
    assert f.ctx["limit_source"] == "budgets.OUT.offset × rule parameter"
    # 90 %: a warning against 80 % of the budget, 0.8 mV, with 0.1 mV past it
    f = over_budget(ctx, "OUT", "offset", 0.9e-3, 1e-3, "V", "worst-case offset", "detail")
    assert f.severity is Severity.WARNING and f.ctx["limit"] == pytest.approx(0.8e-3, rel=1e-12)
    assert f.ctx["margin"] == pytest.approx(-0.1e-3, rel=1e-9) and "(limit 800 " in f.message
    assert over_budget(ctx, "OUT", "offset", 0.75e-3, 1e-3, "V", "worst-case offset", "detail") is None


def test_over_budget_prints_fractions_as_percentages() -> None:
    ctx = _ctx(gain_error_over_budget)
    f = over_budget(ctx, "REF", "gain_accuracy", 0.012, 0.01, "1", "worst-case gain error", "detail")
    assert "worst-case gain error 1.20 % is 120 % of its 1.00 % budget (limit 1.00 %)" in f.message


def test_over_budget_follows_the_rule_parameters() -> None:
    # budget_error 1.5: 120 % is only a warning now, against 80 % of the budget
    ctx = _ctx(offset_over_budget, {"budget_error": 1.5})
    f = over_budget(ctx, "OUT", "offset", 1.2e-3, 1e-3, "V", "worst-case offset", "detail")
    assert f.severity is Severity.WARNING and f.ctx["limit"] == pytest.approx(0.8e-3, rel=1e-12)


def test_budget_nets_in_file_order() -> None:
    ctx = _ctx(offset_over_budget)
    assert budget_nets(ctx, "offset") == ["OUT"]
    assert budget_nets(ctx, "noise", "drift") == ["MID", "REF"]
    assert budget_nets(ctx, "nonlinearity") == []


class _Share:
    def __init__(self, name: str, share: float) -> None:
        self.name, self.share = name, share


def test_top_contributors_are_the_first_three_with_two_figures() -> None:
    items = [_Share("U1 voltage noise", 0.452), _Share("R3 thermal", 0.281), _Share("R1 thermal", 0.15),
             _Share("U1 current noise", 0.117)]
    assert top_shares(items) == "U1 voltage noise 45 %, R3 thermal 28 %, R1 thermal 15 %"
    assert top_shares(items, 1) == "U1 voltage noise 45 %"


def _term(name: str, kind: str, offset: float, gain: float | None = None) -> DcTerm:
    return DcTerm(name=name, kind=kind, refs=(), limit=0.0, error_low=offset, error_high=offset, offset=offset,
                  gain_error=gain)


def test_largest_offset_terms_by_magnitude_leaving_out_the_sensor() -> None:
    terms = [_term("R1 tolerance", "resistor", 0.2e-3), _term("U1 offset voltage", "opamp", -1e-3),
             _term("RT1 sensor", "sensor", 5e-3), _term("U1 bias current", "opamp", 0.1e-3),
             _term("R2 tolerance", "resistor", 0.05e-3)]
    assert terms_text(terms, "offset", "V") == "U1 offset voltage 1.00 mV, R1 tolerance 200 µV, U1 bias current 100 µV"
    gains = [_term("U1 offset voltage", "opamp", 1e-3, None), _term("R1 tolerance", "resistor", 0.0, -0.002),
             _term("R2 tolerance", "resistor", 0.0, 0.001)]
    # a term with no gain part (an offset) counts as 0 and ranks last
    assert terms_text(gains, "gain_error", "1") == "R1 tolerance 0.2 %, R2 tolerance 0.1 %, U1 offset voltage 0 %"


def test_offset_finding_points_at_the_part_behind_the_largest_circuit_term() -> None:
    # the catalogue example: the finding names the parts of the largest term the circuit can fix (not the sensor)
    loaded = load_design(Path(__file__).resolve().parents[1] / "rules" / "budgets" / "offset" / "bad.yaml")
    (f,) = [x for x in kit.run(offset_over_budget, loaded, ()) if x.confidence != "not-evaluated"]
    e = dc_error_of_budgets(Context(loaded).for_rule(offset_over_budget.META)).nets["OUT"]
    circuit = [t for t in e.terms if t.kind != "sensor"]
    lead = max(circuit, key=lambda t: abs(t.offset))
    assert lead.refs and f.location.refs == lead.refs
    assert f.ctx["value"] == pytest.approx(sum(abs(t.offset) for t in e.terms), rel=1e-12)  # linear sum
