"""The rule engine: selection by id or slug, parameters, severity overrides, the estimate cap, contained
crashes, failed analyses reported as not evaluated, rule packs from entry points, and the rules command."""

from __future__ import annotations

import io
from types import SimpleNamespace

import pytest
from fixtures.rules.kit import design, stage

from afecheck.analysis.results import DesignAnalysis
from afecheck.cli import main
from afecheck.engine import registry as registry_module
from afecheck.engine.context import Context
from afecheck.engine.finding import Severity
from afecheck.engine.registry import BUILTIN_RULES, Registry, build_registry, default_registry
from afecheck.engine.rule import Param, Rule, RuleMeta
from afecheck.engine.runner import run_rules
from afecheck.errors import AnalysisError, ConfigError, InputError

LOW_PM = DesignAnalysis(stages=(stage(phase_margin_deg=50.0),), nets={})


# U1's inputs get DC paths (in- to the output, in+ to ground) so that only the injected analysis decides
WIRED = {"RF": {"kind": "resistor", "value": 1e4, "pins": {"1": "INM", "2": "OUT"}},
         "RB": {"kind": "resistor", "value": 1e4, "pins": {"1": "INP", "2": "GND"}}}


def run(**options):
    return run_rules(design(WIRED), analysis=options.pop("analysis", LOW_PM), **options)


def test_all_rules_run_by_default_and_select_accepts_ids_and_slugs() -> None:
    assert [f.rule for f in run()] == ["stability.phase-margin"]
    assert [f.rule for f in run(select=["phase-margin-below-limit"])] == ["stability.phase-margin"]
    assert [f.rule for f in run(select="afe201")] == ["stability.phase-margin"]
    assert run(select=["loading.inverting-input"]) == ()


def test_unknown_rule_or_parameter_is_an_input_error_naming_every_problem() -> None:
    with pytest.raises(InputError) as exc:
        run(select=["AFE999"], params={"stability.phase-margin": {"max_deg": 3.0}, "nope": {}},
            severity_overrides={"stability.phase-margin": "loud"})
    text = str(exc.value)
    assert "AFE999" in text and "max_deg" in text and "warn_deg" in text and "'nope'" in text and "loud" in text
    assert len(exc.value.problems) == 4


def test_parameters_move_thresholds_per_rule() -> None:
    assert run(params={"stability.phase-margin": {"warn_deg": 45.0}}) == ()
    [f] = run(params={"phase-margin-below-limit": {"error_deg": 55.0}})
    assert f.severity == Severity.ERROR and f.ctx["limit"] == 55.0


def test_severity_override_and_the_estimate_cap() -> None:
    [f] = run(severity_overrides={"stability.phase-margin": Severity.INFO})
    assert f.severity == Severity.INFO
    estimated = DesignAnalysis(stages=(stage(phase_margin_deg=30.0, estimated=True),), nets={})
    [g] = run(analysis=estimated, severity_overrides={"stability.phase-margin": "error"})
    assert g.severity == Severity.WARNING and g.confidence == "estimated"


def boom(ctx):
    raise ZeroDivisionError("divided by zero")
    yield  # pragma: no cover - makes this a generator like every check


BOOM = Rule(RuleMeta(id="AFE990", slug="always-crashes", severity=Severity.WARNING, summary="t", family="t"), boom)


def test_a_crashing_rule_becomes_a_finding_and_the_others_still_run() -> None:
    reg = Registry((BOOM, *BUILTIN_RULES))
    found = run_rules(design(), analysis=LOW_PM, registry=reg)
    crash = [f for f in found if f.rule == "coverage.rule-crashed"]
    assert len(crash) == 1 and "AFE990 always-crashes" in crash[0].message and "ZeroDivisionError" in crash[0].message
    assert crash[0].severity == Severity.ERROR and crash[0].ctx["crashed_rule"] == "AFE990"
    assert "stability.phase-margin" in {f.rule for f in found}


def test_failed_analysis_is_attempted_once_and_each_rule_reports_not_evaluated(monkeypatch) -> None:
    calls = []

    def failing(loaded):
        calls.append(loaded)
        raise AnalysisError("singular circuit at node X")

    monkeypatch.setattr("afecheck.analysis.analyse", failing)
    found = run_rules(design())
    assert len(calls) == 1
    analysis_rules = {r.meta.id for r in BUILTIN_RULES if "analysis" in r.meta.needs}
    assert {f.rule for f in found} == analysis_rules
    assert all(f.severity == Severity.INFO and f.confidence == "not-evaluated" for f in found)
    assert all("singular circuit at node X" in f.message for f in found)


def test_findings_are_sorted_and_repeatable() -> None:
    two = DesignAnalysis(stages=(stage(opamp="U1", phase_margin_deg=40.0), stage(opamp="U1", phase_margin_deg=50.0,
                                                                                 out="OUT2")), nets={})
    a = run(analysis=two)
    assert a == run(analysis=two) and list(a) == sorted(a, key=lambda f: f.sort_key())


def test_context_shares_analyses_between_rule_views_and_reads_parameters() -> None:
    ctx = Context(design())
    ctx.memo("analysis", lambda: LOW_PM)
    meta = RuleMeta(id="AFE991", slug="probe-rule", severity=Severity.INFO, summary="t", family="t",
                    params=(Param("limit", 2.0, "V", "a limit"),))
    view = ctx.for_rule(meta, {"limit": 3.0})
    assert view.analysis is LOW_PM and view.param("limit") == 3.0 and ctx.for_rule(meta).param("limit") == 2.0


class FakeEntryPoint(SimpleNamespace):
    def load(self):
        return self.obj


def test_rule_packs_come_from_entry_points(monkeypatch) -> None:
    eps = [FakeEntryPoint(name="pack", value="pack:RULES", obj=[BOOM])]
    monkeypatch.setattr(registry_module.metadata, "entry_points",
                        lambda group: eps if group == "afecheck.rules" else [])
    assert [r.meta.id for r in registry_module.plugin_rules()] == ["AFE990"]
    broken = [FakeEntryPoint(name="pack", value="pack:RULES", obj=42)]
    monkeypatch.setattr(registry_module.metadata, "entry_points", lambda group: broken)
    with pytest.raises(ConfigError):
        registry_module.plugin_rules()


def test_registry_refuses_clashing_and_retired_ids() -> None:
    with pytest.raises(ConfigError, match="reuses"):
        build_registry((BUILTIN_RULES[0], BUILTIN_RULES[0]))
    with pytest.raises(ConfigError, match="retired"):
        build_registry((BOOM,), retired=("AFE990",))
    assert default_registry().find("stability.phase-margin").meta.slug == "phase-margin-below-limit"


def test_rules_command_lists_every_rule_and_refuses_an_unknown_family() -> None:
    out = io.StringIO()
    assert main(["rules"], stdout=out, stderr=io.StringIO()) == 0
    lines = out.getvalue().splitlines()
    assert len(lines) == len(default_registry().metas())
    first = min(default_registry().metas(), key=lambda m: m.id)
    assert lines[0].split()[:3] == [first.id, first.slug, first.severity.label]
    out = io.StringIO()
    assert main(["rules", "--family", "stability"], stdout=out, stderr=io.StringIO()) == 0
    assert {ln.split()[0] for ln in out.getvalue().splitlines()} == {
        "stability.phase-margin", "stability.min-stable-gain", "stability.gain-margin", "stability.feedback-sense"}
    err = io.StringIO()
    assert main(["rules", "--family", "acoustics"], stdout=io.StringIO(), stderr=err) == 2
    assert "unknown family" in err.getvalue()


def test_rules_name_unknown_rule_exits_2_without_traceback() -> None:
    err = io.StringIO()
    assert main(["rules", "AFE777"], stdout=io.StringIO(), stderr=err) == 2
    assert "unknown rule" in err.getvalue() and "Traceback" not in err.getvalue()
