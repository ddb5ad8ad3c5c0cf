"""Run rules over one design. Placeholder until the rule engine lands."""

from __future__ import annotations

from afecheck.engine.finding import Finding
from afecheck.model.loaded import LoadedDesign


def run_rules(loaded: LoadedDesign, **options: object) -> tuple[Finding, ...]:
    """Run every selected rule on ``loaded``; return findings sorted for stable output."""
    return ()
