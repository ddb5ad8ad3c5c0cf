"""Retired rule identifiers and names, kept as aliases of the rules that replaced them (``rules/retired.yaml``).

An old identifier still works wherever a rule is named (configs, rule sets, waivers, baselines), with a note
that says the new one; it is never given to another rule. Fingerprints keep using a rule's first identifier,
so waivers and baselines recorded before a rename still match.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass


@dataclass(frozen=True)
class Retired:
    """One retired identifier: what it was called, and the rule that carries it on (None if the rule is gone)."""

    id: str
    name: str = ""
    now: str | None = None
    reason: str = ""


@functools.lru_cache(maxsize=1)
def retired() -> tuple[Retired, ...]:
    """Every entry of the catalogue's ``retired.yaml`` (a shipped file, read once)."""
    import yaml

    from afecheck.catalogue_files import catalogue_root

    text = catalogue_root().joinpath("retired.yaml").read_text(encoding="utf-8")
    loader = getattr(yaml, "CSafeLoader", yaml.SafeLoader)  # libyaml when built with it: the same data, faster
    data = yaml.load(text, Loader=loader) or []
    out = []
    for entry in data:
        if isinstance(entry, dict):
            out.append(Retired(id=str(entry["id"]), name=str(entry.get("name") or ""), now=entry.get("now"),
                               reason=str(entry.get("reason") or "")))
        else:
            out.append(Retired(id=str(entry)))
    return tuple(out)


@functools.lru_cache(maxsize=1)
def _forward() -> dict[str, str]:
    table: dict[str, str] = {}
    for r in retired():
        if r.now:
            table[r.id.upper()] = r.now
            if r.name:
                table[r.name.lower()] = r.now
    return table


@functools.lru_cache(maxsize=1)
def _first() -> dict[str, str]:
    return {r.now: r.id for r in retired() if r.now}


def current_id(key: str) -> str | None:
    """The identifier that replaced the retired id or name ``key``, or None when ``key`` is not retired."""
    k = key.strip()
    return _forward().get(k.upper()) or _forward().get(k.lower())


def fingerprint_id(rule_id: str) -> str:
    """The identifier a fingerprint is computed from: a renamed rule's first id, so old records keep matching."""
    return _first().get(rule_id, rule_id)
