"""Rule sets: named bundles of per-rule settings (on/off, severity, thresholds) shipped in rules/sets/*.yaml.

The same ``rules:`` grammar is used by rule-set files and by the project config:

    rules:
      headroom.input-common-mode: off                          # or on
      phase-margin-below-limit: error      # a severity: error, warning or info
      loading.input-divider: {severity: warning, params: {max_error: 0.5 %}}
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path

from afecheck.catalogue_files import catalogue_root
from afecheck.engine.aliases import current_id
from afecheck.engine.finding import Severity
from afecheck.engine.rule import RuleMeta
from afecheck.model.paths import PathRefusedError, referenced_file, same_file
from afecheck.model.units import UNITS, UnitError, parse_quantity
from afecheck.policy._yaml import Problems, load_document

RULESET_KEY = "afecheck-ruleset"
RULESET_KEYS = {RULESET_KEY, "description", "extends", "fail-on", "promote", "rules"}
SETTING_KEYS = {"enabled", "severity", "params"}
_NUMBER = re.compile(r"^\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(.*?)\s*$")
_SUFFIXES = {
    "deg": {"": 1.0, "°": 1.0, "deg": 1.0, "degrees": 1.0},
    "dB": {"": 1.0, "dB": 1.0, "db": 1.0},
    "%": {"": 1.0, "%": 0.01, "ppm": 1e-6},  # a bare number is already a fraction (SI), as everywhere else
}


@dataclass(frozen=True)
class RuleSetting:
    """What one layer says about one rule; None means "not said here"."""

    enabled: bool | None = None
    severity: Severity | None = None
    params: Mapping[str, float] = field(default_factory=dict)


@dataclass(frozen=True)
class RuleSet:
    """A resolved rule set: its settings (after ``extends``), promotions and fail level."""

    name: str
    description: str = ""
    fail_on: str | None = None
    promote: Mapping[Severity, Severity] = field(default_factory=dict)
    settings: Mapping[str, RuleSetting] = field(default_factory=dict)
    source: str = ""


class Catalogue:
    """Rule metadata with lookup by id (any case) or slug; the rule list is passed in, never imported here."""

    def __init__(self, metas: Sequence[RuleMeta]):
        self.metas = tuple(metas)
        self._by_key = {m.id.upper(): m for m in self.metas} | {m.slug: m for m in self.metas}
        self.renamed_used: dict[str, str] = {}

    def find(self, key: object) -> RuleMeta | None:
        """The rule named ``key`` (id in any case, or name); a retired id or name is noted and resolved."""
        if not isinstance(key, str):
            return None
        k = key.strip()
        meta = self._by_key.get(k.upper()) or self._by_key.get(k.lower())
        if meta is None and (now := current_id(k)) is not None:
            meta = self._by_key.get(now.upper())
            if meta is not None:
                self.renamed_used[k] = meta.id
        return meta

    def rename_notes(self) -> tuple[str, ...]:
        """One line per retired id or name that this run's configs, rule sets or waivers still use."""
        return tuple(f"{old} is the retired name of rule {new}: it still works; write {new} instead"
                     for old, new in sorted(self.renamed_used.items()))


_SIGNED_UNITS = ("dB", "deg")
"""Thresholds that may be below zero (a gain margin in dB, a phase in degrees); every other one is a size."""


def parse_param_value(value: object, unit: str) -> float:
    """Read a threshold given in a config file as SI float; units via parse_quantity, plus deg, dB and %.

    The result is finite, and not negative unless the unit is dB or degrees: 1e400 (infinite once read),
    a number of 300 digits or a negative share are refused here, never compared.
    """
    result = _param_number(value, unit)
    if not math.isfinite(result):
        raise UnitError(f"read {_shown(value)}, which is not a finite number")
    if result < 0 and unit not in _SIGNED_UNITS:
        raise UnitError(f"read {_shown(value)}; a threshold in {unit} cannot be negative")
    return result


def _shown(value: object) -> str:
    text = repr(value) if not isinstance(value, int) or abs(value) < 10**40 else f"a {len(str(value))}-digit number"
    return text if len(text) <= 60 else text[:57] + "..."


def _param_number(value: object, unit: str) -> float:
    if unit in _SUFFIXES:
        if isinstance(value, bool) or not isinstance(value, (int, float, str)):
            raise UnitError(f"read {_shown(value)}; expected a number in {unit}")
        if isinstance(value, (int, float)):
            return parse_quantity(value, "1")
        m = _NUMBER.match(value)
        if not m or m.group(2) not in _SUFFIXES[unit]:
            accepted = ", ".join(repr(s) for s in _SUFFIXES[unit] if s)
            raise UnitError(f"read {_shown(value)}; expected a number with unit {accepted}")
        return parse_quantity(m.group(1), "1") * _SUFFIXES[unit][m.group(2)]
    if unit in ("1", "") and isinstance(value, str):
        m = _NUMBER.match(value)
        if m and m.group(2) in ("%", "ppm"):
            return parse_quantity(m.group(1), "1") * _SUFFIXES["%"][m.group(2)]
    return parse_quantity(value, unit if unit in UNITS else "1")


def parse_rules_section(data: object, catalogue: Catalogue, problems: Problems,
                        base: tuple = ("rules",)) -> dict[str, RuleSetting]:
    """The ``rules:`` mapping of a rule set or config; every bad entry is added to ``problems``."""
    out: dict[str, RuleSetting] = {}
    if data is None:
        return out
    if not isinstance(data, dict):
        problems.add(base, "expected a mapping of rule id or slug to a setting")
        return out
    for key, raw in data.items():
        path = (*base, key)
        meta = catalogue.find(key)
        if meta is None:
            problems.add(path, f"unknown rule {key!r}; `afecheck rules` lists every id and slug")
            continue
        if meta.id in out:
            problems.add(path, f"rule {meta.id} is set twice (by id and by slug)")
            continue
        setting = _parse_setting(raw, meta, problems, path)
        if setting is not None:
            out[meta.id] = setting
    return out


def _parse_setting(raw: object, meta: RuleMeta, problems: Problems, path: tuple) -> RuleSetting | None:
    if isinstance(raw, bool):
        return RuleSetting(enabled=raw)
    if isinstance(raw, str):
        if raw.strip().lower() in ("off", "on"):
            return RuleSetting(enabled=raw.strip().lower() == "on")
        try:
            return RuleSetting(severity=Severity.parse(raw))
        except ValueError:
            problems.add(path, f"read {raw!r}; expected off, on, error, warning, info or a mapping")
            return None
    if not isinstance(raw, dict):
        problems.add(path, "expected off, on, a severity, or a mapping with enabled, severity, params")
        return None
    bad = False
    for k in raw:
        if k not in SETTING_KEYS:
            problems.add((*path, k), f"unknown key {k!r}; expected one of {', '.join(sorted(SETTING_KEYS))}")
            bad = True
    enabled = raw.get("enabled")
    if enabled is not None and not isinstance(enabled, bool):
        problems.add((*path, "enabled"), f"read {enabled!r}; expected true or false")
        bad = True
    severity = None
    if raw.get("severity") is not None:
        try:
            severity = Severity.parse(str(raw["severity"]))
        except ValueError as exc:
            problems.add((*path, "severity"), str(exc))
            bad = True
    params: dict[str, float] = {}
    given = raw.get("params") or {}
    if not isinstance(given, dict):
        problems.add((*path, "params"), "expected a mapping of parameter name to value")
        given = {}
    known = {p.name: p for p in meta.params}
    for name, value in given.items():
        ppath = (*path, "params", name)
        if name not in known:
            expected = ", ".join(sorted(known)) or "none"
            problems.add(ppath, f"{meta.id} has no parameter {name!r} (expected: {expected})")
            bad = True
            continue
        try:
            params[name] = parse_param_value(value, known[name].unit)
        except UnitError as exc:
            problems.add(ppath, f"{name} is in {known[name].unit}: {exc}")
            bad = True
    return None if bad else RuleSetting(enabled=enabled, severity=severity, params=params)


def parse_promote(data: object, problems: Problems, path: tuple = ("promote",)) -> dict[Severity, Severity]:
    """``promote: {warning: error}``: every evaluated finding reported at the key's level is raised to the value."""
    out: dict[Severity, Severity] = {}
    if data is None:
        return out
    if not isinstance(data, dict):
        problems.add(path, "expected a mapping such as {warning: error}")
        return out
    for k, v in data.items():
        try:
            out[Severity.parse(str(k))] = Severity.parse(str(v))
        except ValueError as exc:
            problems.add((*path, k), str(exc))
    return out


def merge(base: Mapping[str, RuleSetting], top: Mapping[str, RuleSetting]) -> dict[str, RuleSetting]:
    """Settings of ``top`` over ``base``, field by field (params merged by name)."""
    out = dict(base)
    for rid, s in top.items():
        b = out.get(rid, RuleSetting())
        out[rid] = RuleSetting(
            enabled=s.enabled if s.enabled is not None else b.enabled,
            severity=s.severity if s.severity is not None else b.severity,
            params={**b.params, **s.params},
        )
    return out


FAIL_ON_VALUES = ("error", "warning", "info", "never")


def _is_version_one(value: object) -> bool:
    """The format version 1 as an integer (``true`` and ``1.0`` are not versions)."""
    return type(value) is int and value == 1


def read_policy_file(path: Path, version_key: str, allowed: set[str], what: str, catalogue: Catalogue
                     ) -> tuple[dict, Problems, dict[str, RuleSetting], dict[Severity, Severity], str | None]:
    """The part rule sets and project configs share: version key, known keys, rules, promote, fail-on.

    Returns the raw data and the problems collected so far (the caller adds its own keys' problems).
    """
    doc = load_document(path)
    data = doc.data
    problems = Problems(doc)
    if not isinstance(data, dict) or not _is_version_one(data.get(version_key)):
        problems.add((), f"{what} is a mapping that starts with '{version_key}: 1'")
        problems.raise_if_any()
    for k in data:
        if k not in allowed:
            problems.add((k,), f"unknown key {k!r}; expected one of {', '.join(sorted(allowed))}")
    settings = parse_rules_section(data.get("rules"), catalogue, problems)
    promote = parse_promote(data.get("promote"), problems)
    fail_on = data.get("fail-on")
    if fail_on is not None and str(fail_on) not in FAIL_ON_VALUES:
        problems.add(("fail-on",), f"read {fail_on!r}; expected {', '.join(FAIL_ON_VALUES)}")
    return data, problems, settings, promote, None if fail_on is None else str(fail_on)


def builtin_ruleset_names() -> tuple[str, ...]:
    """Names of the rule sets shipped in the catalogue (rules/sets/*.yaml)."""
    folder = catalogue_root().joinpath("sets")
    return tuple(sorted(p.name[:-5] for p in folder.iterdir() if p.name.endswith(".yaml")))


def find_ruleset(name: str, base_dir: Path | None) -> tuple[Path | None, str]:
    """(file, label) of a shipped set by name or a set file by path; (None, name) when there is no such set.

    With ``base_dir`` (a path written in a config or rule-set file) the file must lie inside that folder;
    a file outside it raises PathRefusedError.
    """
    if name in builtin_ruleset_names():
        ref = catalogue_root().joinpath("sets", f"{name}.yaml")
        return Path(str(ref)), name
    if not name.endswith((".yaml", ".yml", ".json")):
        return None, name
    if base_dir is not None:
        found = referenced_file(base_dir, name, f"the folder of the file that names it ({base_dir})")
        return found, found.stem
    candidate = Path(name)
    try:
        return (candidate, candidate.stem) if candidate.is_file() else (None, name)
    except (OSError, ValueError):
        return None, name


def load_ruleset(name: str, catalogue: Catalogue, base_dir: Path | None = None, _chain: tuple = ()) -> RuleSet:
    """A shipped rule set by name, or a rule-set file by path (relative to ``base_dir`` and confined to it),
    with ``extends`` resolved (each parent confined to the folder of the set that extends it)."""
    from afecheck.errors import ConfigError, Problem

    where = _chain[-1] if _chain else str(base_dir or ".")
    key = "extends" if _chain else "ruleset"
    try:
        path, label = find_ruleset(name, base_dir)
    except PathRefusedError as exc:
        raise ConfigError([Problem(where, None, None, key, str(exc))]) from None
    if path is None:
        known = ", ".join(builtin_ruleset_names())
        message = f"unknown rule set {name!r}; shipped sets: {known}; or give a path to a .yaml file"
        raise ConfigError([Problem(where, None, None, key, message)])
    if any(same_file(path, Path(c)) for c in _chain):
        raise ConfigError([Problem(str(path), None, None, "extends", "rule sets extend each other in a loop")])
    data, problems, settings, promote, fail_on = read_policy_file(path, RULESET_KEY, RULESET_KEYS, "a rule set",
                                                                  catalogue)
    extends = data.get("extends")
    if extends is not None and (not isinstance(extends, str) or not extends.strip()):
        problems.add(("extends",), "expected the name of a shipped rule set or a rule-set file name")
    problems.raise_if_any()
    parent = None
    if extends:
        try:
            parent = load_ruleset(extends, catalogue, path.parent, (*_chain, str(path)))
        except ConfigError as exc:
            line = problems.line(("extends",))
            raise ConfigError([Problem(p.file, p.line or line, p.column, p.path, p.message)
                               if p.file == str(path) else p for p in exc.problems]) from None
        settings = merge(parent.settings, settings)
        promote = {**parent.promote, **promote}
        fail_on = fail_on if fail_on is not None else parent.fail_on
    return RuleSet(name=label, description=str(data.get("description") or ""),
                   fail_on=None if fail_on is None else str(fail_on), promote=promote, settings=settings,
                   source=str(path))
