"""Project configuration: a ``.afecheck.yaml`` beside the design (or given with ``--config``) that picks a rule
set, turns rules off, overrides severities and thresholds, names waiver files and sets the fail level.

    afecheck-config: 1
    ruleset: precision            # a shipped set, or a path to a rule-set file
    fail-on: warning              # error | warning | info | never
    waivers: [waivers.yaml]       # paths relative to this file
    promote: {info: warning}
    rules:
      headroom.input-common-mode: {params: {min_phase_margin: 60 deg}}
      output-swing-limit: off
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from afecheck.engine.finding import Severity
from afecheck.model.paths import PathRefusedError, referenced_file, same_file
from afecheck.policy._yaml import Problems
from afecheck.policy.rulesets import (
    Catalogue,
    RuleSet,
    RuleSetting,
    builtin_ruleset_names,
    load_ruleset,
    merge,
    read_policy_file,
)

CONFIG_NAME = ".afecheck.yaml"
CONFIG_KEY = "afecheck-config"
CONFIG_KEYS = {CONFIG_KEY, "ruleset", "fail-on", "waivers", "promote", "rules"}
DEFAULT_RULESET = "default"


@dataclass(frozen=True)
class Policy:
    """The resolved policy for a design: which rules run, at which severity, with which thresholds."""

    ruleset: str = DEFAULT_RULESET
    fail_on: str = "error"
    disabled: frozenset[str] = frozenset()
    severity: Mapping[str, Severity] = field(default_factory=dict)
    params: Mapping[str, Mapping[str, float]] = field(default_factory=dict)
    promote: Mapping[Severity, Severity] = field(default_factory=dict)
    waiver_files: tuple[str, ...] = ()
    config: str | None = None

    def run_options(self, rule_ids: Sequence[str]) -> dict[str, Any]:
        """Keyword options for the rule runner (``select``, ``params``, ``severity_overrides``), given the ids of
        the rules the runner can run; ``select`` is None (all) when no rule is turned off."""
        return {
            "select": [r for r in rule_ids if r not in self.disabled] if self.disabled else None,
            "params": {k: dict(v) for k, v in self.params.items()},
            "severity_overrides": dict(self.severity),
        }


def discover_config(design: str | Path) -> Path | None:
    """The nearest ``.afecheck.yaml`` in the design's folder or its parents, stopping at a repository root."""
    try:
        folder = Path(design).resolve().parent
    except (OSError, ValueError, RuntimeError):
        return None  # the loader reports the design's own name
    for d in (folder, *folder.parents):
        candidate = d / CONFIG_NAME
        if candidate.is_file():
            return candidate
        if (d / ".git").exists():
            return None
    return None


def resolve_policy(catalogue: Catalogue, config: str | Path | None = None, ruleset: str | None = None) -> Policy:
    """Rule set (``ruleset`` argument, else the config's, else ``default``) with the config's settings on top.

    Paths the config names (waivers, a rule-set file) must lie in the config's folder, the project root it
    stands for; a ``ruleset`` given here (from the command line) is the user's own and is read as given.
    """
    cfg_settings: dict[str, RuleSetting] = {}
    cfg_promote: dict[Severity, Severity] = {}
    cfg_fail_on: str | None = None
    waivers: tuple[str, ...] = ()
    base_dir: Path | None = None
    set_name = ruleset
    if config is not None:
        cpath = Path(config)
        data, problems, cfg_settings, cfg_promote, cfg_fail_on = read_policy_file(
            cpath, CONFIG_KEY, CONFIG_KEYS, "a project config", catalogue)
        waivers = _waiver_paths(data.get("waivers"), cpath.parent, problems)
        if set_name is None and data.get("ruleset") is not None:
            set_name, base_dir = _config_ruleset(data["ruleset"], cpath.parent, problems)
        problems.raise_if_any()
    rs: RuleSet = load_ruleset(set_name or DEFAULT_RULESET, catalogue, base_dir)
    settings = merge(rs.settings, cfg_settings)
    promote = {**rs.promote, **cfg_promote}
    return _policy(catalogue, rs, settings, promote, cfg_fail_on or rs.fail_on or "error", waivers,
                   None if config is None else str(config))


def _config_ruleset(raw: object, folder: Path, problems: Problems) -> tuple[str | None, Path | None]:
    """(name, folder to read it from) of the config's ``ruleset:``: a shipped set, or a file in the config's folder."""
    if not isinstance(raw, str) or not raw.strip():
        problems.add(("ruleset",), "expected the name of a shipped rule set or a rule-set file name")
        return None, None
    if raw in builtin_ruleset_names():
        return raw, None
    if not raw.endswith((".yaml", ".yml", ".json")):
        problems.add(("ruleset",), f"unknown rule set {raw!r}; give a shipped set name "
                                   f"({', '.join(builtin_ruleset_names())}) or a .yaml path")
        return None, None
    try:
        referenced_file(folder, raw, "the config's folder")
    except PathRefusedError as exc:
        problems.add(("ruleset",), str(exc))
        return None, None
    return raw, folder


def _waiver_paths(raw: object, base: Path, problems: Problems) -> tuple[str, ...]:
    if raw is None:
        return ()
    items = [raw] if isinstance(raw, str) else raw
    if not isinstance(items, list) or not all(isinstance(i, str) for i in items):
        problems.add(("waivers",), "expected a file name or a list of file names")
        return ()
    out: list[str] = []
    for i, name in enumerate(items):
        where = ("waivers",) if isinstance(raw, str) else ("waivers", i)
        try:
            path = referenced_file(base, name, "the config's folder")
        except PathRefusedError as exc:
            problems.add(where, str(exc))
            continue
        if any(same_file(path, Path(o)) for o in out):
            problems.add(where, f"waiver file {name!r} is listed twice; list each file once")
            continue
        out.append(str(path))
    return tuple(out)


def _policy(catalogue: Catalogue, rs: RuleSet, settings: Mapping[str, RuleSetting],
            promote: Mapping[Severity, Severity], fail_on: str, waivers: tuple[str, ...], config: str | None) -> Policy:
    severity: dict[str, Severity] = {}
    disabled: set[str] = set()
    params: dict[str, dict[str, float]] = {}
    for meta in catalogue.metas:
        s = settings.get(meta.id, RuleSetting())
        if s.severity is not None and s.severity != meta.severity:
            severity[meta.id] = s.severity
        if s.enabled is False:
            disabled.add(meta.id)
        if s.params:
            params[meta.id] = dict(s.params)
    return Policy(ruleset=rs.name, fail_on=fail_on, disabled=frozenset(disabled), severity=severity, params=params,
                  promote=dict(promote), waiver_files=waivers, config=config)
