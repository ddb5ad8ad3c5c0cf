"""The library entry points: load -> build -> analyse -> rules -> policy -> report data. No printing here."""

from __future__ import annotations

import datetime as dt
import re
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import RuleMeta
from afecheck.errors import InputError, Problem
from afecheck.model.loaded import LoadedDesign
from afecheck.report.data import DesignResult, Entry, Report, RuleInfo, WaiverNote, parse_fail_level

_FAIL_ORDER = ("info", "warning", "error", "never")


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
    """Run the rules on a loaded design (options go to the rule runner: select, params, severity_overrides)."""
    from afecheck.engine.runner import run_rules
    from afecheck.policy.finite import guard_finite

    findings = tuple(sorted(guard_finite(run_rules(loaded, **options)), key=Finding.sort_key))
    d = loaded.design
    return DesignReport(file=loaded.file, name=d.name, hazards=tuple(d.hazards), findings=findings)


def check_file(
    path: str | Path, intent: str | Path | None = None, libraries: tuple[str | Path, ...] = (), **options: object
) -> DesignReport:
    """Load ``path`` (with an optional intent file and extra part libraries) and check it."""
    from afecheck.model.load import load_design

    return check_design(load_design(path, intent=intent, libraries=libraries), **options)


def _natural(text: str) -> tuple:
    return tuple(int(t) if t.isdigit() else t for t in re.split(r"(\d+)", text))


def _section(markdown: str, title: str) -> str:
    """The first paragraph under ``## title`` in a rule.md (empty if absent)."""
    m = re.search(rf"^##\s+{re.escape(title)}\s*$(.*?)(?=^##\s|\Z)", markdown, re.M | re.S | re.I)
    if not m:
        return ""
    paragraphs = [p.strip() for p in m.group(1).strip().split("\n\n") if p.strip()]
    return " ".join(paragraphs[0].split()) if paragraphs else ""


def rule_catalogue(metas: Sequence[RuleMeta]) -> tuple[RuleInfo, ...]:
    """RuleInfo for each rule: metadata plus the text of ``rules/<id>-<slug>/rule.md`` when it ships."""
    from importlib import resources

    root = resources.files("afecheck._catalogue")
    out = []
    for m in sorted(metas, key=lambda m: m.id):
        doc = root.joinpath(f"{m.id}-{m.slug}", "rule.md")
        text = doc.read_text(encoding="utf-8") if doc.is_file() else ""
        description = _section(text, "What it checks") or m.summary
        out.append(RuleInfo(id=m.id, slug=m.slug, severity=m.severity, summary=m.summary, family=m.family,
                            description=description, help=text.strip() or description, fix=m.fix))
    return tuple(out)


def stage_finder(loaded: LoadedDesign):
    """A function Finding -> op-amp refdes of its stage ("" for design-wide), from the op-amps' pin nets."""
    d = loaded.design
    skip = {d.ground, *d.rails}
    opamps = sorted((r for r, c in d.components.items() if c.kind == "opamp"), key=_natural)
    inputs = {u: {n for p, n in d.components[u].pins.items() if p in ("in+", "in-")} - skip for u in opamps}
    outputs = {u: {n for p, n in d.components[u].pins.items() if p == "out"} - skip for u in opamps}

    def stage_of(f: Finding) -> str:
        refs = f.location.refs
        for r in refs:
            if r in inputs:
                return r
        nets = set(f.location.nets)
        for r in refs:
            comp = d.components.get(r)
            if comp is not None:
                nets |= set(comp.pins.values())
        for table in (inputs, outputs):
            for u in opamps:
                if table[u] & nets:
                    return u
        return ""

    return stage_of, tuple(opamps)


def inline_waivers(loaded: LoadedDesign, catalogue: Any) -> tuple[WaiverNote, ...]:
    """Waivers written in the design (``waive:`` on a component or at the top level), rules resolved by id or slug;
    an unknown rule is an input error at the waiver's line."""
    d = loaded.design
    found: list[tuple[tuple, tuple[str, ...], Any]] = [(("waive", i), (), w) for i, w in enumerate(d.waive)]
    for ref, comp in d.components.items():
        found += [(("components", ref, "waive", i), (ref,), w) for i, w in enumerate(comp.waive)]
    out: list[WaiverNote] = []
    problems: list[Problem] = []
    for path, own, w in found:
        file, line, column = loaded.position(*path, "rule")
        meta = catalogue.find(w.rule)
        if meta is None:
            problems.append(Problem(file, line, column, ".".join(map(str, (*path, "rule"))),
                                    f"unknown rule {w.rule!r}; `afecheck rules` lists every id and slug"))
            continue
        refs = tuple(dict.fromkeys((*own, *w.refs)))
        out.append(WaiverNote(fingerprint="", justification=w.justification, accepted_by=w.accepted_by,
                              expires=None if w.expires is None else w.expires.isoformat(), rule=meta.id,
                              file=file, line=line, refs=refs, nets=tuple(w.nets)))
    if problems:
        raise InputError(problems)
    return tuple(out)


def _registry(registry: Any):
    if registry is not None:
        return registry
    from afecheck.engine.registry import default_registry

    return default_registry()


def review_files(
    paths: Sequence[str | Path],
    *,
    intent: str | Path | None = None,
    libraries: tuple[str | Path, ...] = (),
    config: str | Path | None = None,
    discover: bool = True,
    ruleset: str | None = None,
    fail_on: str | None = None,
    waiver_files: Sequence[str | Path] = (),
    baseline: str | Path | None = None,
    today: dt.date | None = None,
    registry: Any = None,
    baseline_any_design: bool = False,
) -> Report:
    """Check every design under its policy (``config``, else a discovered ``.afecheck.yaml`` when ``discover``),
    apply waivers and the baseline, and return the report data. Bad input of any file raises one InputError.

    A baseline recorded for other designs is refused (ConfigError) unless ``baseline_any_design`` is set."""
    from afecheck import __version__
    from afecheck.engine.runner import run_rules
    from afecheck.model.load import load_design
    from afecheck.policy.baseline import read_baseline
    from afecheck.policy.config import discover_config, resolve_policy
    from afecheck.policy.finite import guard_finite
    from afecheck.policy.gate import classify, promote
    from afecheck.policy.rulesets import Catalogue
    from afecheck.policy.waivers import load_waivers

    reg = _registry(registry)
    catalogue = Catalogue(reg.metas())
    runnable = [r.meta.id for r in reg.rules]
    problems: list[Problem] = []
    policies: dict[str | None, Any] = {}
    waiver_cache: dict[str, tuple[WaiverNote, ...]] = {}

    def waivers_of(files: Sequence[str | Path]) -> tuple[WaiverNote, ...]:
        out: list[WaiverNote] = []
        _refuse_repeats(files)
        for f in files:
            key = str(f)
            if key not in waiver_cache:
                waiver_cache[key] = load_waivers(f, catalogue)
            out.extend(waiver_cache[key])
        return tuple(out)

    recorded = read_baseline(baseline) if baseline is not None else None
    notes: list[str] = []
    if recorded is not None and not recorded.names_designs:
        notes.append(f"baseline {recorded.file} does not say which designs it was recorded for (written by an older "
                     "afecheck); its findings are matched by design name; re-record it to add them")
    cli_waivers = waivers_of(waiver_files)
    designs: list[DesignResult] = []
    used: set[str] = set()
    expired: dict[str, WaiverNote] = {}
    levels: set[str] = set()
    inline_all: list[WaiverNote] = []
    for path in paths:
        try:
            cfg = Path(config) if config is not None else (discover_config(path) if discover else None)
            key = None if cfg is None else str(cfg)
            if key not in policies:
                policies[key] = resolve_policy(catalogue, cfg, ruleset)
            policy = policies[key]
            levels.add(policy.fail_on)
            loaded = load_design(path, intent=intent, libraries=libraries)
            findings = promote(guard_finite(run_rules(loaded, registry=reg, **policy.run_options(runnable))),
                               policy.promote)
            inline = inline_waivers(loaded, catalogue)
            inline_all.extend(inline)
            _refuse_repeats([*waiver_files, *policy.waiver_files])
            waivers = cli_waivers + waivers_of(policy.waiver_files) + inline
        except InputError as exc:
            problems.extend(exc.problems)
            continue
        name = loaded.design.name
        mine = None
        if recorded is not None:
            was = recorded.recorded_as(name, loaded.file) if recorded.names_designs else name
            if was is None and not baseline_any_design:
                problems.append(Problem(recorded.file, None, None, "designs", (
                    f"this baseline was recorded for {recorded.describe()}, not for design {name!r} ({loaded.file}); "
                    "record one for this design with `afecheck baseline`, or pass --baseline-any-design to use it "
                    "anyway")))
                continue
            mine = recorded.for_design(name, was or "*")
        stage_of, opamps = stage_finder(loaded)
        review = classify(findings, waivers, mine, today, stage_of)
        used |= review.used
        for w in waivers:
            if w.key in review.expired:
                expired.setdefault(w.key, w)
        designs.append(DesignResult(
            file=loaded.file, name=name, hazards=tuple(loaded.design.hazards), entries=review.entries,
            stages=opamps, ruleset=policy.ruleset, config=policy.config,
            rules_run=tuple(m.id for m in catalogue.metas if m.id not in policy.disabled),
        ))
    if problems:
        raise InputError(list(dict.fromkeys(problems)))  # a bad config shared by several designs is said once
    level = fail_on or min(levels or {"error"}, key=_FAIL_ORDER.index)
    all_waivers = {w.key: w for w in (*(w for ws in waiver_cache.values() for w in ws), *inline_all)}
    unused = tuple(sorted((w for key, w in all_waivers.items() if key not in used),
                          key=lambda w: (w.file, w.line or 0)))
    return Report(
        designs=tuple(designs),
        rules=rule_catalogue(catalogue.metas),
        fail_on=parse_fail_level(level),
        tool_version=__version__,
        baseline=None if baseline is None else str(baseline),
        unused_waivers=unused,
        expired_waivers=tuple(sorted(expired.values(), key=lambda w: (w.file, w.line or 0))),
        notes=tuple(notes),
    )


def _refuse_repeats(files: Sequence[str | Path]) -> None:
    """Refuse a waiver file given twice (by identity, however it is spelt): its waivers would count twice."""
    from afecheck.model.paths import same_file

    seen: list[Path] = []
    problems = []
    for f in files:
        p = Path(f)
        first = next((s for s in seen if same_file(s, p)), None)
        if first is not None:
            problems.append(Problem(str(f), None, None, "", f"waiver file given twice (also as {str(first)!r}); give "
                                                          "each waiver file once"))
        else:
            seen.append(p)
    if problems:
        raise InputError(problems)


__all__ = ["DesignReport", "Entry", "Report", "check_design", "check_file", "review_files", "rule_catalogue"]
