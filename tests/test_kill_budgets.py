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
from afecheck.checks.budgets import (
    drift_over_budget,
    gain_error_over_budget,
    noise_over_budget,
    nonlinearity_over_budget,
    offset_over_budget,
)
from afecheck.checks.budgets.offset_over_budget import terms_text
from afecheck.checks.budgets.shared import (
    budget_nets,
    dc_error_of_budgets,
    noise_of_budgets,
    over_budget,
    top_shares,
)
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


def test_gain_error_finding_by_the_dc_error_analysis() -> None:
    # the catalogue example: the value is the analysis's worst-case (linear-sum) gain error, the RSS is quoted, and
    # the finding points at the parts of the largest term the circuit can fix
    loaded = load_design(Path(__file__).resolve().parents[1] / "rules" / "budgets" / "gain-error" / "bad.yaml")
    (f,) = [x for x in kit.run(gain_error_over_budget, loaded, ()) if x.confidence != "not-evaluated"]
    net = f.location.nets[0]
    e = dc_error_of_budgets(Context(loaded).for_rule(gain_error_over_budget.META)).nets[net]
    lead = max((t for t in e.terms if t.kind != "sensor"), key=lambda t: abs(t.gain_error or 0.0))
    assert lead.refs and f.location.refs == lead.refs
    assert f.ctx["value"] == e.gain_error_worst and f.ctx["rss"] == e.gain_error_rss
    budget = loaded.design.budgets[net].gain_accuracy
    share = 1.0 if f.severity is Severity.ERROR else 0.8  # the rule page's 100 % and 80 % of the budget
    assert f.ctx["limit"] == pytest.approx(share * budget, rel=1e-12)
    # the default warning share is 80 %: a budget of worst/0.9 puts the error at 90 % of it, a warning
    wider = e.gain_error_worst / 0.9
    g = over_budget(Context(loaded).for_rule(gain_error_over_budget.META), net, "gain_accuracy",
                    e.gain_error_worst, wider, "1", "gain error", "")
    assert g.severity is Severity.WARNING and g.ctx["limit"] == pytest.approx(0.8 * wider, rel=1e-12)


RULES = Path(__file__).resolve().parents[1] / "rules" / "budgets"


def _example(topic: str, edit=None, tmp_path=None):
    path = RULES / topic / "bad.yaml"
    if edit is not None:
        path = tmp_path / f"{topic}.yaml"
        path.write_text(edit((RULES / topic / "bad.yaml").read_text(encoding="utf-8")), encoding="utf-8")
    return load_design(path)


def _one(rule, loaded):
    (f,) = [x for x in kit.run(rule, loaded, ()) if x.confidence != "not-evaluated"]
    return f


def _share(f) -> float:
    return 1.0 if f.severity is Severity.ERROR else 0.8  # the rule pages: error above 100 %, warning above 80 %


@pytest.mark.parametrize("rule", [noise_over_budget, drift_over_budget, nonlinearity_over_budget,
                                  offset_over_budget, gain_error_over_budget])
def test_every_budget_rule_warns_above_80_and_errs_above_100_percent_by_default(rule) -> None:
    ctx = _ctx(rule)
    assert over_budget(ctx, "OUT", "x", 0.9, 1.0, "V", "figure", "").severity is Severity.WARNING
    assert over_budget(ctx, "OUT", "x", 1.2, 1.0, "V", "figure", "").severity is Severity.ERROR
    assert over_budget(ctx, "OUT", "x", 0.75, 1.0, "V", "figure", "") is None


def test_noise_finding_equals_the_noise_analysis() -> None:
    loaded = _example("noise")
    f = _one(noise_over_budget, loaded)
    nn = noise_of_budgets(Context(loaded).for_rule(noise_over_budget.META)).nets["OUT"]
    assert f.ctx["value"] == nn.output_rms and f.location.refs == nn.contributors[0].refs
    assert f.ctx["limit"] == pytest.approx(_share(f) * 60e-6, rel=1e-12)
    assert (f.ctx["band_low_hz"], f.ctx["band_high_hz"]) == tuple(nn.band)
    assert f.ctx["top_contributors"] == top_shares(nn.contributors)
    # the input-referred figure is quoted only when the analysis has one
    assert nn.input_rms is not None and f.ctx["input_rms"] == nn.input_rms


def test_drift_finding_equals_the_dc_error_analysis(tmp_path) -> None:
    loaded = _example("drift")
    f = _one(drift_over_budget, loaded)
    e = dc_error_of_budgets(Context(loaded).for_rule(drift_over_budget.META)).nets["OUT"]
    assert f.ctx["value"] == e.drift_worst and f.ctx["rss"] == e.drift_rss
    assert (f.ctx["temperature_low_c"], f.ctx["temperature_high_c"]) == (-40.0, 85.0)
    assert f.location.refs == e.drift_terms[0].refs
    assert f.ctx["limit"] == pytest.approx(_share(f) * 5e-3, rel=1e-12) and "over -40..85 °C" in f.message
    # no operating temperature range: nothing to take the drift over
    loaded = _example("drift", lambda t: t.replace("operating_temperature: [-40 °C, 85 °C]\n", ""), tmp_path)
    (g,) = kit.run(drift_over_budget, loaded, ())
    assert g.confidence == "not-evaluated" and "declares no operating_temperature range" in g.message


def test_nonlinearity_finding_equals_the_dc_error_analysis() -> None:
    loaded = _example("nonlinearity")
    f = _one(nonlinearity_over_budget, loaded)
    nl = dc_error_of_budgets(Context(loaded).for_rule(nonlinearity_over_budget.META)).nets["OUT"].nonlinearity
    assert f.ctx["value"] == nl.fraction and f.ctx["deviation"] == nl.worst and f.location.refs == nl.refs
    assert f.ctx["limit"] == pytest.approx(_share(f) * 0.01, rel=1e-12)


def test_nonlinearity_of_an_output_that_does_not_move_is_not_evaluated(tmp_path) -> None:
    # the thermistor held at one temperature: the output has no span to be straight or curved over
    def hold(text: str) -> str:
        return text.replace("temperature: [-20 °C, 80 °C]", "temperature: [25 °C, 25 °C]")
    loaded = _example("nonlinearity", hold, tmp_path)
    (f,) = kit.run(nonlinearity_over_budget, loaded, ())
    assert f.confidence == "not-evaluated" and "does not move across the declared range" in f.message
