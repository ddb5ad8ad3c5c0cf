"""Findings: frozen, plain data that rules yield and reporters render."""

from __future__ import annotations

import hashlib
from dataclasses import dataclass, field
from enum import IntEnum
from typing import Any, Literal


class Severity(IntEnum):
    """How much a finding matters; ordered so that ``>=`` compares with the fail level."""

    INFO = 1
    WARNING = 2
    ERROR = 3

    @property
    def label(self) -> str:
        return self.name.lower()

    @classmethod
    def parse(cls, text: str) -> Severity:
        try:
            return cls[text.strip().upper()]
        except KeyError:
            raise ValueError(f"unknown severity {text!r}; expected error, warning or info") from None


Confidence = Literal["computed", "estimated", "not-evaluated"]


@dataclass(frozen=True)
class Location:
    """Where a finding points: the line of the component the fix touches, and the electrical names."""

    file: str | None = None
    line: int | None = None
    path: str = ""
    refs: tuple[str, ...] = ()
    nets: tuple[str, ...] = ()
    pins: tuple[str, ...] = ()


@dataclass(frozen=True)
class Finding:
    """One problem a rule found, with the numbers behind it (``ctx``) and the usual fix."""

    rule: str
    slug: str
    severity: Severity
    message: str
    location: Location
    ctx: dict[str, Any] = field(default_factory=dict)
    fix: str = ""
    confidence: Confidence = "computed"
    assumed: tuple[str, ...] = ()
    design: str = ""
    caused_by: str = ""
    """Fingerprint of the root finding this one rests on (an upstream stage that clips, floats or could not be
    evaluated); empty for a root or an independent finding. See docs/CONFIDENCE.md."""

    @property
    def fingerprint(self) -> str:
        """Stable key for waivers and baselines: rule plus electrical names, never line numbers."""
        from afecheck.engine.aliases import fingerprint_id

        key = "|".join(
            (fingerprint_id(self.rule), self.design, ",".join(sorted(self.location.refs)),
             ",".join(sorted(self.location.nets)))
        )
        return hashlib.sha256(key.encode("utf-8")).hexdigest()[:16]

    def sort_key(self) -> tuple:
        return (self.location.file or "", self.location.line or 0, self.rule, self.location.refs, self.message)
