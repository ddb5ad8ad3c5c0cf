"""The library entry points: load -> build -> analyse -> rules -> report data. No printing here."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from afecheck.engine.finding import Finding, Severity
from afecheck.model.loaded import LoadedDesign


@dataclass(frozen=True)
class DesignReport:
    """The findings for one design file."""

    file: str
    name: str
    hazards: tuple[str, ...]
    findings: tuple[Finding, ...]

    def worst(self) -> Severity | None:
        return max((f.severity for f in self.findings), default=None)


def check_design(loaded: LoadedDesign, **options: object) -> DesignReport:
    """Run the rules on a loaded design."""
    from afecheck.engine.runner import run_rules

    findings = tuple(sorted(run_rules(loaded, **options), key=Finding.sort_key))
    d = loaded.design
    return DesignReport(file=loaded.file, name=d.name, hazards=tuple(d.hazards), findings=findings)


def check_file(
    path: str | Path, intent: str | Path | None = None, libraries: tuple[str | Path, ...] = (), **options: object
) -> DesignReport:
    """Load ``path`` (with an optional intent file and extra part libraries) and check it."""
    from afecheck.model.load import load_design

    return check_design(load_design(path, intent=intent, libraries=libraries), **options)
