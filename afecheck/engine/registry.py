"""Which rules exist: one explicit tuple of built-in rules, plus third-party packs from installed packages.

A pack is an entry point in the group ``afecheck.rules`` naming a module (with ``META`` and ``check``), a
:class:`Rule`, or a sequence of either. Ids and slugs are unique across everything registered and never
reuse a retired id (``rules/retired.yaml``).
"""

from __future__ import annotations

import functools
from collections.abc import Iterable
from dataclasses import dataclass
from importlib import metadata
from types import ModuleType
from typing import Any

from afecheck.checks import coverage, declared
from afecheck.checks.adc import anti_alias, kickback, range_fill, settling
from afecheck.checks.budgets import (
    drift_over_budget,
    gain_error_over_budget,
    noise_over_budget,
    nonlinearity_over_budget,
    offset_over_budget,
)
from afecheck.checks.dc_accuracy import cold_junction, sensor_self_heating
from afecheck.checks.distortion import (
    class2_ceramic,
    common_mode_swing,
    input_impedance_imbalance,
    loop_gain_at_fmax,
    output_near_limit,
    slew_rate,
    transition_region,
)
from afecheck.checks.headroom import floating_input, input_common_mode, output_current, output_swing, supply_rail
from afecheck.checks.limits import capacitive_load, input_current, supply_range
from afecheck.checks.loading import bias_current_offset, input_divider_error, inverting_source_loading
from afecheck.checks.stability import feedback_sign, gain_margin, min_stable_gain, phase_margin
from afecheck.engine.aliases import current_id, retired
from afecheck.engine.finding import Severity
from afecheck.engine.rule import Rule, RuleMeta
from afecheck.errors import ConfigError, Problem

ENTRY_POINT_GROUP = "afecheck.rules"

CRASH_META = RuleMeta(
    id="coverage.rule-crashed", slug="rule-crashed", severity=Severity.ERROR, family="coverage", needs=(),
    summary="a rule stopped with an internal error, so its check did not run",
    fix="report the error with the design file; meanwhile review what the rule covers by hand",
)

_BUILTIN_MODULES: tuple[ModuleType, ...] = (
    coverage, declared,
    inverting_source_loading, input_divider_error, bias_current_offset,
    phase_margin, min_stable_gain, gain_margin, feedback_sign,
    input_common_mode, output_swing, output_current,
    transition_region, common_mode_swing, loop_gain_at_fmax, slew_rate, output_near_limit, class2_ceramic,
    input_impedance_imbalance,
    floating_input, supply_rail,
    noise_over_budget, offset_over_budget, gain_error_over_budget, drift_over_budget,
    range_fill, anti_alias, settling, kickback,
    supply_range, input_current, capacitive_load,
    nonlinearity_over_budget,
    sensor_self_heating,
    cold_junction,
)

BUILTIN_RULES: tuple[Rule, ...] = tuple(Rule(m.META, m.check) for m in _BUILTIN_MODULES)


@dataclass(frozen=True)
class Registry:
    """An ordered, duplicate-free set of rules with lookup by id or slug."""

    rules: tuple[Rule, ...]

    def find(self, key: str) -> Rule | None:
        """The rule whose id (any case) or name is ``key``; a retired id or name finds the rule that replaced it."""
        k = current_id(key) or key.strip()
        for rule in self.rules:
            if rule.meta.id.upper() == k.upper() or rule.meta.slug == k.lower():
                return rule
        return None

    def find_meta(self, key: str) -> RuleMeta | None:
        """Metadata of the rule (or the engine's crash finding) whose id or slug is ``key``."""
        k = current_id(key) or key.strip()
        return next((m for m in self.metas() if m.id.upper() == k.upper() or m.slug == k.lower()), None)

    def metas(self) -> tuple[RuleMeta, ...]:
        """Metadata of every rule plus the engine's own crash finding, sorted by id."""
        return tuple(sorted((CRASH_META, *(r.meta for r in self.rules)), key=lambda m: m.id))


def build_registry(rules: Iterable[Rule], retired: Iterable[str] = ()) -> Registry:
    """Check ids and slugs are unique and not retired; raise ConfigError naming every clash."""
    problems: list[Problem] = []
    seen_ids: dict[str, str] = {CRASH_META.id: CRASH_META.slug}
    seen_slugs: set[str] = {CRASH_META.slug}
    retired_ids = {r.upper() for r in retired}
    kept: list[Rule] = []
    for rule in rules:
        m = rule.meta
        if m.id.upper() in retired_ids:
            problems.append(Problem("<rules>", None, None, m.id, f"rule id {m.id} is retired and may not be reused"))
        elif m.id.upper() in seen_ids or m.slug in seen_slugs:
            problems.append(Problem("<rules>", None, None, m.id, f"{m.id} {m.slug} reuses a registered id or slug"))
        else:
            seen_ids[m.id.upper()] = m.slug
            seen_slugs.add(m.slug)
            kept.append(rule)
    if problems:
        raise ConfigError(problems)
    return Registry(tuple(kept))


def _as_rules(obj: Any, origin: str) -> list[Rule]:
    if isinstance(obj, Rule):
        return [obj]
    if isinstance(obj, ModuleType) and hasattr(obj, "META") and hasattr(obj, "check"):
        return [Rule(obj.META, obj.check)]
    if isinstance(obj, (list, tuple)):
        return [r for item in obj for r in _as_rules(item, origin)]
    raise ConfigError([Problem("<rules>", None, None, origin,
                               "a rule pack entry point must give a Rule, a module with META and check, or a list")])


def plugin_rules() -> list[Rule]:
    """Rules from installed packages' ``afecheck.rules`` entry points, in entry-point name order."""
    found: list[Rule] = []
    for ep in sorted(metadata.entry_points(group=ENTRY_POINT_GROUP), key=lambda e: e.name):
        try:
            obj = ep.load()
        except Exception as exc:  # noqa: BLE001 - a broken pack is a configuration problem, not a traceback
            raise ConfigError([Problem("<rules>", None, None, f"entry point {ep.name}",
                                       f"cannot load rule pack {ep.value}: {exc}")]) from None
        found.extend(_as_rules(obj, f"entry point {ep.name}"))
    return found


def retired_ids() -> tuple[str, ...]:
    """Retired rule ids from the catalogue's ``retired.yaml`` (never reused)."""
    return tuple(r.id for r in retired())


@functools.lru_cache(maxsize=1)
def default_registry() -> Registry:
    """Built-in rules followed by installed rule packs."""
    return build_registry((*BUILTIN_RULES, *plugin_rules()), retired_ids())
