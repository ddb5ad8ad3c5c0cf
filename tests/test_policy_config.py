"""Project config and rule sets: discovery, overrides that change exactly what they say, errors with file:line."""

from __future__ import annotations

import datetime as dt
import shutil
from pathlib import Path

import pytest
from fixtures.gate.fakes import REGISTRY

from afecheck.api import review_files
from afecheck.engine.finding import Severity
from afecheck.errors import ConfigError
from afecheck.policy.config import CONFIG_NAME, discover_config, resolve_policy
from afecheck.policy.rulesets import Catalogue, builtin_ruleset_names, load_ruleset, parse_param_value

GATE = Path(__file__).parent / "fixtures" / "gate"
TODAY = dt.date(2026, 12, 2)
CAT = Catalogue(REGISTRY.metas())


def _write(tmp: Path, name: str, text: str) -> Path:
    p = tmp / name
    p.write_text(text, encoding="utf-8")
    return p


def _summary(report) -> list[tuple[str, str, str]]:
    return sorted((e.finding.rule, e.finding.severity.label, ",".join(e.finding.location.refs))
                  for e in report.entries())


def _design(tmp: Path) -> Path:
    target = tmp / "logger.yaml"
    shutil.copy(GATE / "logger.yaml", target)
    return target


def test_no_config_gives_rule_defaults(tmp_path):
    report = review_files([_design(tmp_path)], registry=REGISTRY, today=TODAY)
    assert _summary(report) == [("TST101", "error", "R1"), ("TST102", "warning", "C1"), ("TST103", "info", "U1")]
    assert report.designs[0].ruleset == "default" and report.designs[0].config is None


def test_config_overrides_change_exactly_what_they_say(tmp_path):
    design = _design(tmp_path)
    before = _summary(review_files([design], registry=REGISTRY, today=TODAY))
    # turn one rule off: only its finding goes
    _write(tmp_path, CONFIG_NAME, "afecheck-config: 1\nrules:\n  opamp-listed: off\n")
    after = _summary(review_files([design], registry=REGISTRY, today=TODAY))
    assert after == [f for f in before if f[0] != "TST103"]
    # override one severity: only that finding's severity changes
    _write(tmp_path, CONFIG_NAME, "afecheck-config: 1\nrules:\n  TST102: {severity: error}\n")
    after = _summary(review_files([design], registry=REGISTRY, today=TODAY))
    assert after == sorted([("TST102", "error", "C1") if f[0] == "TST102" else f for f in before])
    # threshold with units: 4k7 > 470 ohm and 10 kohm stays above 4.7 kohm, so only R1 is flagged still;
    # 10.5 kohm catches R2 (10 kohm) as well. [IEC60062] RKM code 4k7 = 4700 ohm
    _write(tmp_path, CONFIG_NAME, "afecheck-config: 1\nrules:\n  TST101: {params: {min_resistance: 4k7}}\n")
    assert _summary(review_files([design], registry=REGISTRY, today=TODAY)) == before
    _write(tmp_path, CONFIG_NAME, "afecheck-config: 1\nrules:\n  TST101: {params: {min_resistance: 10.5 kΩ}}\n")
    after = _summary(review_files([design], registry=REGISTRY, today=TODAY))
    assert after == sorted(before + [("TST101", "error", "R2")])
    # fail level from config
    _write(tmp_path, CONFIG_NAME, "afecheck-config: 1\nfail-on: never\n")
    report = review_files([design], registry=REGISTRY, today=TODAY)
    assert _summary(report) == before and report.fail_on is None and not report.failed()


def test_cli_fail_on_beats_config_and_config_beats_ruleset(tmp_path):
    design = _design(tmp_path)
    _write(tmp_path, CONFIG_NAME, "afecheck-config: 1\nfail-on: info\n")
    assert review_files([design], registry=REGISTRY, today=TODAY).fail_on == Severity.INFO
    assert review_files([design], registry=REGISTRY, today=TODAY, fail_on="warning").fail_on == Severity.WARNING


def test_config_is_discovered_beside_design_and_above_it(tmp_path):
    (tmp_path / ".git").mkdir()
    sub = tmp_path / "boards" / "logger"
    sub.mkdir(parents=True)
    design = sub / "logger.yaml"
    design.write_text("x", encoding="utf-8")
    assert discover_config(design) is None
    cfg = _write(tmp_path, CONFIG_NAME, "afecheck-config: 1\n")
    assert discover_config(design) == cfg
    near = _write(sub, CONFIG_NAME, "afecheck-config: 1\n")
    assert discover_config(design) == near


def test_explicit_config_and_no_config(tmp_path):
    design = _design(tmp_path)
    _write(tmp_path, CONFIG_NAME, "afecheck-config: 1\nrules: {TST101: off}\n")
    other = _write(tmp_path, "other.yaml", "afecheck-config: 1\nrules: {TST102: off}\n")
    assert {e.finding.rule for e in review_files([design], registry=REGISTRY, today=TODAY).entries()} == {
        "TST102", "TST103"}
    assert {e.finding.rule for e in review_files([design], registry=REGISTRY, today=TODAY, config=other)
            .entries()} == {"TST101", "TST103"}
    assert len(review_files([design], registry=REGISTRY, today=TODAY, discover=False).entries()) == 3


BAD_CONFIGS = [
    ("afecheck-config: 1\nrules:\n  TST404: off\n", 3, "unknown rule 'TST404'"),
    ("afecheck-config: 1\nrules:\n  TST101:\n    params: {min_resistance: 10 furlongs}\n", 4, "min_resistance"),
    ("afecheck-config: 1\nrules:\n  TST101:\n    params: {max_resistance: 1k}\n", 4, "no parameter 'max_resistance'"),
    ("afecheck-config: 1\nrulez: {}\n", 2, "unknown key 'rulez'"),
    ("afecheck-config: 1\nfail-on: sometimes\n", 2, "expected error, warning, info, never"),
    ("afecheck-config: 1\nrules:\n  TST101: {severity: fatal}\n", 3, "unknown severity"),
    ("afecheck-config: 1\nrules:\n  TST101: {colour: red}\n", 3, "unknown key 'colour'"),
    ("afecheck-config: 1\nruleset: strictest\n", 2, "unknown rule set 'strictest'"),
    ("afecheck-config: 1\nwaivers: missing.yaml\n", 2, "no such file"),
    ("rules: {}\n", 1, "afecheck-config: 1"),
    ("afecheck-config: 1\nrules: [\n", 3, "not valid YAML"),
]


@pytest.mark.parametrize(("text", "line", "needle"), BAD_CONFIGS)
def test_bad_config_is_a_config_error_with_file_and_line(tmp_path, text, line, needle):
    cfg = _write(tmp_path, CONFIG_NAME, text)
    with pytest.raises(ConfigError) as info:
        resolve_policy(CAT, cfg)
    problems = info.value.problems
    assert any(needle in p.message or needle in str(p) for p in problems), [str(p) for p in problems]
    assert all(p.file == str(cfg) for p in problems)
    assert any(p.line == line for p in problems), [str(p) for p in problems]


def test_all_problems_reported_in_one_round(tmp_path):
    cfg = _write(tmp_path, CONFIG_NAME, "afecheck-config: 1\nbogus: 1\nrules:\n  TST404: off\n  TST101: loud\n")
    with pytest.raises(ConfigError) as info:
        resolve_policy(CAT, cfg)
    assert sorted(p.line for p in info.value.problems) == [2, 4, 5]


@pytest.mark.parametrize(("value", "unit", "expected"), [
    ("60 deg", "deg", 60.0), ("60°", "deg", 60.0), (45, "deg", 45.0),
    ("6 dB", "dB", 6.0),                      # a threshold in dB stays in dB
    ("0.1 %", "1", 1e-3), ("50 ppm", "1", 5e-5), ("0.25", "1", 0.25),  # [SI] percent = 1e-2, ppm = 1e-6
    ("200 mV", "V", 0.2), ("4k7", "ohm", 4700.0),  # [SI] milli = 1e-3; [IEC60062] RKM 4k7
    ("30 %", "%", 0.3), (0.3, "%", 0.3), ("0.3", "%", 0.3),
])
def test_parameter_values_read_with_units(value, unit, expected):
    assert parse_param_value(value, unit) == pytest.approx(expected, rel=1e-12)


def test_ruleset_extends_and_promotes(tmp_path):
    _write(tmp_path, "base.yaml", "afecheck-ruleset: 1\nrules:\n  TST101: {params: {min_resistance: 2k}}\n"
                          "  TST103: off\n")
    top = _write(tmp_path, "strict.yaml", "afecheck-ruleset: 1\nextends: base.yaml\npromote: {warning: error}\n"
                                          "fail-on: warning\nrules:\n  TST103: on\n")
    rs = load_ruleset(str(top.name), CAT, tmp_path)
    assert rs.settings["TST101"].params == {"min_resistance": 2000.0}
    assert rs.settings["TST103"].enabled is True
    assert rs.fail_on == "warning" and rs.promote == {Severity.WARNING: Severity.ERROR}
    cfg = _write(tmp_path, CONFIG_NAME, "afecheck-config: 1\nruleset: strict.yaml\n")
    report = review_files([_design(tmp_path)], registry=REGISTRY, today=TODAY, config=cfg)
    assert _summary(report) == [("TST101", "error", "R1"), ("TST102", "error", "C1"), ("TST103", "info", "U1")]
    assert report.fail_on == Severity.WARNING and report.designs[0].ruleset == "strict"


def test_ruleset_loop_is_an_error(tmp_path):
    _write(tmp_path, "a.yaml", "afecheck-ruleset: 1\nextends: b.yaml\n")
    _write(tmp_path, "b.yaml", "afecheck-ruleset: 1\nextends: a.yaml\n")
    with pytest.raises(ConfigError, match="loop"):
        load_ruleset("a.yaml", CAT, tmp_path)


def test_shipped_rule_sets_resolve_against_the_real_catalogue():
    from afecheck.engine.registry import default_registry

    catalogue = Catalogue(default_registry().metas())
    names = builtin_ruleset_names()
    assert {"default", "precision"} <= set(names)
    default = resolve_policy(catalogue, None, "default")
    assert not default.severity and not default.params and not default.disabled
    precision = resolve_policy(catalogue, None, "precision")
    assert precision.promote == {Severity.WARNING: Severity.ERROR}
    assert precision.params, "the precision set tightens thresholds"
    for rule_id, values in precision.params.items():
        meta = next(m for m in catalogue.metas if m.id == rule_id)
        for name, value in values.items():
            default_value = meta.param(name).default
            # tighter means: a margin to keep (phase/gain margin, band) goes up, an error allowance goes down
            assert value != default_value, (rule_id, name)


def test_bad_config_shared_by_two_designs_is_reported_once(tmp_path):
    a = _design(tmp_path)
    b = tmp_path / "second.yaml"
    shutil.copy(GATE / "logger.yaml", b)
    _write(tmp_path, CONFIG_NAME, "afecheck-config: 1\nrules:\n  TST404: off\n")
    from afecheck.errors import InputError

    with pytest.raises(InputError) as info:
        review_files([a, b], registry=REGISTRY, today=TODAY)
    assert len(info.value.problems) == 1 and info.value.problems[0].line == 3
