"""Run the selected rules over one design: bind parameters, contain failures, apply severity policy, sort."""

from __future__ import annotations

import traceback
from collections.abc import Iterable, Mapping
from typing import Any

from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.registry import CRASH_META, Registry, default_registry
from afecheck.engine.rule import Rule
from afecheck.engine.sensitivity import Sensitivity
from afecheck.errors import AnalysisError, InputError, Problem
from afecheck.model.loaded import LoadedDesign

OPTIONS_FILE = "<options>"


def run_rules(loaded: LoadedDesign, **options: Any) -> tuple[Finding, ...]:
    """Run every selected rule on ``loaded``; return findings sorted for stable output.

    Options: ``select`` (ids or slugs, None = all), ``params`` (rule id or slug -> {name: SI value}),
    ``severity_overrides`` (rule id or slug -> Severity or its name), ``registry`` (rules to draw from),
    ``analysis`` (a DesignAnalysis already computed for ``loaded``, reused instead of analysing again).
    Unknown ids, slugs or parameter names raise :class:`InputError`.
    """
    registry: Registry = options.pop("registry", None) or default_registry()
    select = options.pop("select", None)
    params = options.pop("params", None) or {}
    overrides = options.pop("severity_overrides", None) or {}
    analysis = options.pop("analysis", None)
    if options:
        raise TypeError(f"run_rules() got unexpected options: {', '.join(sorted(options))}")
    problems: list[Problem] = []
    rules = _selected(registry, select, problems)
    bound = _bound_params(registry, params, problems)
    severities = _overrides(registry, overrides, problems)
    if problems:
        raise InputError(problems)
    base = Context(loaded)
    if analysis is not None:
        base.memo("analysis", lambda: analysis)
    # an injected analysis cannot be recomputed for variant part models, so its estimates stay estimates
    sensitivity = Sensitivity(base) if analysis is None else None
    found: list[Finding] = []
    for rule in rules:
        params_of = bound.get(rule.meta.id, {})
        results = _run_one(rule, base.for_rule(rule.meta, params_of))
        if sensitivity is not None:
            results = sensitivity.settle(results, lambda c, r=rule, p=params_of: _rerun(r, c.for_rule(r.meta, p)),
                                         rule.meta.id)
        for f in results:
            found.append(_apply_policy(f, severities.get(f.rule)))
    return tuple(sorted(_grouped(base, found), key=Finding.sort_key))


def _grouped(base: Context, found: list[Finding]) -> tuple[Finding, ...] | list[Finding]:
    """Findings with ``caused_by`` linking downstream ones to their root, when the analysis was computed."""
    from afecheck.engine.causes import link_causes

    analysis = base.computed("analysis")
    return found if analysis is None else link_causes(found, analysis)


def _rerun(rule: Rule, ctx: Context) -> list[Finding]:
    """A rule's findings on a variant design for the sensitivity test; a failure counts as no finding."""
    try:
        return list(rule.check(ctx))
    except Exception:  # noqa: BLE001 - a variant that cannot be judged changes the verdict
        return []


def _run_one(rule: Rule, ctx: Context) -> list[Finding]:
    """A rule's findings; a failed analysis becomes 'not evaluated', any other exception a crash finding."""
    from afecheck.checks.common import not_evaluated

    try:
        return list(rule.check(ctx))
    except AnalysisError as exc:
        return [not_evaluated(ctx, f"{rule.meta.id} {rule.meta.slug}", f"analysis failed: {exc}")]
    except Exception as exc:  # noqa: BLE001 - one broken rule must not stop the others
        where = traceback.extract_tb(exc.__traceback__)[-1]
        detail = f"{type(exc).__name__}: {exc} (at {where.filename.rsplit('/', 1)[-1]}:{where.lineno})"
        return [Finding(
            rule=CRASH_META.id, slug=CRASH_META.slug, severity=CRASH_META.severity,
            message=f"rule {rule.meta.id} {rule.meta.slug} stopped with an error, so its check did not run: {detail}",
            location=ctx.loaded.locate(), ctx={"crashed_rule": rule.meta.id, "error": detail},
            confidence="not-evaluated", design=ctx.loaded.design.name,
        )]


def _apply_policy(f: Finding, override: Severity | None) -> Finding:
    """Severity override for evaluated findings, then the cap: an estimate is never more than a warning."""
    from dataclasses import replace

    severity = f.severity
    if override is not None and f.confidence != "not-evaluated" and f.rule != CRASH_META.id:
        severity = override
    if f.confidence == "estimated" and severity > Severity.WARNING:
        severity = Severity.WARNING
    return f if severity == f.severity else replace(f, severity=severity)


def _selected(registry: Registry, select: Iterable[str] | None, problems: list[Problem]) -> list[Rule]:
    if select is None:
        return list(registry.rules)
    if isinstance(select, str):
        select = [s for s in select.replace(",", " ").split() if s]
    chosen: dict[str, Rule] = {}
    for key in select:
        rule = registry.find(key)
        if rule is None:
            problems.append(Problem(OPTIONS_FILE, None, None, "select", f"unknown rule {key!r}; see `afecheck rules`"))
        else:
            chosen[rule.meta.id] = rule
    return [r for r in registry.rules if r.meta.id in chosen]


def _bound_params(registry: Registry, params: Mapping[str, Mapping[str, Any]],
                  problems: list[Problem]) -> dict[str, dict[str, float]]:
    bound: dict[str, dict[str, float]] = {}
    for key, values in params.items():
        rule = registry.find(key)
        if rule is None:
            problems.append(Problem(OPTIONS_FILE, None, None, f"params.{key}", f"unknown rule {key!r}"))
            continue
        if not isinstance(values, Mapping):
            problems.append(Problem(OPTIONS_FILE, None, None, f"params.{key}", "expected a mapping of name: value"))
            continue
        names = {p.name for p in rule.meta.params}
        for name, value in values.items():
            path = f"params.{key}.{name}"
            if name not in names:
                expected = ", ".join(sorted(names)) or "none"
                problems.append(Problem(OPTIONS_FILE, None, None, path,
                                        f"{rule.meta.id} has no parameter {name!r} (expected: {expected})"))
            elif isinstance(value, bool) or not isinstance(value, (int, float)):
                problems.append(Problem(OPTIONS_FILE, None, None, path, f"expected a number in SI, read {value!r}"))
            else:
                bound.setdefault(rule.meta.id, {})[name] = float(value)
    return bound


def _overrides(registry: Registry, overrides: Mapping[str, Any], problems: list[Problem]) -> dict[str, Severity]:
    out: dict[str, Severity] = {}
    for key, value in overrides.items():
        rule = registry.find(key)
        if rule is None:
            problems.append(Problem(OPTIONS_FILE, None, None, f"severity.{key}", f"unknown rule {key!r}"))
            continue
        try:
            out[rule.meta.id] = value if isinstance(value, Severity) else Severity.parse(str(value))
        except ValueError as exc:
            problems.append(Problem(OPTIONS_FILE, None, None, f"severity.{key}", str(exc)))
    return out
