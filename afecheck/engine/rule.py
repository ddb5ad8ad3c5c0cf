"""What a rule is: metadata beside a ``check(ctx)`` generator of findings."""

from __future__ import annotations

import re
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from typing import TYPE_CHECKING

from afecheck.engine.finding import Finding, Severity

if TYPE_CHECKING:
    from afecheck.engine.context import Context


RULE_ID = re.compile(r"[a-z]+(?:-[a-z]+)*\.[a-z0-9]+(?:-[a-z0-9]+)*")
"""A rule identifier: its family, a dot, and the topic in words (``stability.phase-margin``)."""


@dataclass(frozen=True)
class Param:
    """A rule threshold: name, default in SI, unit for config files, and where the default comes from."""

    name: str
    default: float
    unit: str
    doc: str
    source: str = "common practice"


@dataclass(frozen=True)
class RuleMeta:
    """A rule's stable identity and defaults. Ids are never reused (see rules/retired.yaml)."""

    id: str
    slug: str
    severity: Severity
    summary: str
    family: str
    params: tuple[Param, ...] = ()
    fix: str = ""
    needs: tuple[str, ...] = ("analysis",)

    @property
    def folder(self) -> str:
        """The rule's documentation folder in the catalogue: ``<family>/<topic>`` for id ``family.topic``."""
        return self.id.replace(".", "/")

    def param(self, name: str) -> Param:
        for p in self.params:
            if p.name == name:
                return p
        raise KeyError(f"{self.id} has no parameter {name!r}")


@dataclass(frozen=True)
class Rule:
    """A registered rule: its metadata and its check function."""

    meta: RuleMeta
    check: Callable[[Context], Iterator[Finding]]
