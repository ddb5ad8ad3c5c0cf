"""The library entry points: load -> build -> analyse -> rules -> policy -> report data. No printing here."""

from __future__ import annotations

import datetime as dt
import re
from collections.abc import Iterator, Sequence
from dataclasses import dataclass, field
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
    from afecheck.catalogue_files import catalogue_root

    root = catalogue_root()
    out = []
    for m in sorted(metas, key=lambda m: m.id):
        doc = root.joinpath(m.folder, "rule.md")
        text = doc.read_text(encoding="utf-8") if doc.is_file() else ""
        description = _section(text, "In the circuit") or m.summary
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


@dataclass
class _Outcome:
    """What reviewing one design gives the run: its result (or the problems), and its waiver bookkeeping."""

    design: DesignResult | None = None
    problems: list[Problem] = field(default_factory=list)
    used: set[str] = field(default_factory=set)
    expired: list[WaiverNote] = field(default_factory=list)
    level: str | None = None
    waivers: list[WaiverNote] = field(default_factory=list)
    notes: tuple[str, ...] = ()
    renamed: dict[str, str] = field(default_factory=dict)
    reads: list[str] = field(default_factory=list)


class _Reviewer:
    """Reviews designs one at a time under one set of options; caches policies and waiver files between designs.

    One reviewer serves a serial run; in a parallel run each worker process builds its own from the same options."""

    def __init__(self, options: dict[str, Any]):
        from afecheck.policy.baseline import read_baseline
        from afecheck.policy.rulesets import Catalogue

        self.o = options
        self.reg = _registry(options.get("registry"))
        self.catalogue = Catalogue(self.reg.metas())
        self.runnable = [r.meta.id for r in self.reg.rules]
        self.policies: dict[str | None, Any] = {}
        self.waiver_cache: dict[str, tuple[WaiverNote, ...]] = {}
        baseline = options.get("baseline")
        self.recorded = read_baseline(baseline) if baseline is not None else None
        self.cli_waivers = self.waivers_of(options.get("waiver_files", ()))

    def waivers_of(self, files: Sequence[str | Path]) -> tuple[WaiverNote, ...]:
        from afecheck.policy.waivers import load_waivers

        out: list[WaiverNote] = []
        _refuse_repeats(files)
        for f in files:
            key = str(f)
            if key not in self.waiver_cache:
                self.waiver_cache[key] = load_waivers(f, self.catalogue)
            out.extend(self.waiver_cache[key])
        return tuple(out)

    def review(self, path: str | Path) -> _Outcome:
        """Load, analyse, run the rules and classify one design; input errors come back as problems."""
        from afecheck.engine.runner import run_rules
        from afecheck.model.load import load_design
        from afecheck.policy.config import discover_config, resolve_policy
        from afecheck.policy.finite import guard_finite
        from afecheck.policy.gate import classify, promote

        o = self.o
        config, detail = o.get("config"), o.get("detail", "none")
        try:
            cfg = Path(config) if config is not None else (discover_config(path) if o.get("discover", True) else None)
            key = None if cfg is None else str(cfg)
            if key not in self.policies:
                self.policies[key] = resolve_policy(self.catalogue, cfg, o.get("ruleset"))
            policy = self.policies[key]
            loaded = load_design(path, intent=o.get("intent"), libraries=o.get("libraries", ()),
                                 input_format=o.get("input_format"), netlist_map=o.get("netlist_map"))
            options = policy.run_options(self.runnable)
            analysis, curves = None, {}
            if detail != "none":
                from afecheck.views import analyse_for_views

                analysis, curves = analyse_for_views(loaded, "curves" if detail == "curves" else "stages")
                if analysis is not None:
                    options["analysis"] = analysis
            findings = promote(guard_finite(run_rules(loaded, registry=self.reg, **options)), policy.promote)
            inline = inline_waivers(loaded, self.catalogue)
            _refuse_repeats([*o.get("waiver_files", ()), *policy.waiver_files])
            file_waivers = self.waivers_of(policy.waiver_files)
            waivers = self.cli_waivers + file_waivers + inline
        except InputError as exc:
            return _Outcome(problems=list(exc.problems), renamed=dict(self.catalogue.renamed_used))
        name = loaded.design.name
        mine = None
        recorded = self.recorded
        if recorded is not None:
            was = recorded.recorded_as(name, loaded.file) if recorded.names_designs else name
            if was is None and not o.get("baseline_any_design"):
                return _Outcome(problems=[Problem(recorded.file, None, None, "designs", (
                    f"this baseline was recorded for {recorded.describe()}, not for design {name!r} ({loaded.file}); "
                    "record one for this design with `afecheck baseline`, or pass --baseline-any-design to use it "
                    "anyway"))], renamed=dict(self.catalogue.renamed_used))
            mine = recorded.for_design(name, was or "*")
        stage_of, opamps = stage_finder(loaded)
        review = classify(findings, waivers, mine, o.get("today"), stage_of)
        rules_run = tuple(m.id for m in self.catalogue.metas if m.id not in policy.disabled)
        views = ()
        if analysis is not None:
            from afecheck.views import stage_views

            views = stage_views(loaded, analysis, curves, options["params"], rules_run, budgets=detail == "curves")
        design = DesignResult(
            file=loaded.file, name=name, hazards=tuple(loaded.design.hazards), entries=review.entries,
            stages=opamps, ruleset=policy.ruleset, config=policy.config, rules_run=rules_run, stage_views=views,
        )
        return _Outcome(design=design, used=set(review.used), expired=[w for w in waivers if w.key in review.expired],
                        level=policy.fail_on, waivers=[*self.cli_waivers, *file_waivers, *inline],
                        notes=tuple(loaded.notes), renamed=dict(self.catalogue.renamed_used))


_WORKER: _Reviewer | None = None


def _start_worker(options: dict[str, Any]) -> None:
    global _WORKER
    _WORKER = _Reviewer(options)


def _review_in_worker(path: str | Path) -> _Outcome:
    """One design in a worker process, with the files it read (so no output of the run can overwrite one)."""
    from afecheck.io import recording_reads

    assert _WORKER is not None
    with recording_reads() as reads:
        out = _WORKER.review(path)
    out.reads = list(dict.fromkeys(reads))
    return out


def _outcomes(paths: Sequence[str | Path], options: dict[str, Any], jobs: int,
              on_done: Any = None) -> Iterator[_Outcome]:
    """Each design's outcome in input order: in this process, or spread over ``jobs`` worker processes.

    In parallel, the first design is still reviewed here: that imports and caches all a review needs (modules,
    rules, part library, policy), so workers forked from this process start warm instead of each doing it again.
    """
    global _WORKER
    serial = _Reviewer(options)  # also checks the shared files (baseline, waivers) before any worker starts
    parallel = jobs > 1 and len(paths) > 2 and options.get("registry") is None
    for path in paths if not parallel else paths[:1]:
        out = serial.review(path)
        if on_done is not None:
            on_done(out)
        yield out
    if not parallel:
        return
    import gc
    import multiprocessing
    from concurrent.futures import ProcessPoolExecutor

    from afecheck.io import note_reads

    rest = paths[1:]
    fork = "fork" in multiprocessing.get_all_start_methods()
    context = multiprocessing.get_context("fork" if fork else "spawn")
    _WORKER = serial  # a forked worker finds the warm reviewer as it is; a spawned one builds its own
    gc.freeze()  # what exists now is never collected in the workers, so its memory pages stay shared
    try:
        with ProcessPoolExecutor(max_workers=min(jobs, len(rest)), mp_context=context,
                                 initializer=None if fork else _start_worker,
                                 initargs=() if fork else (options,)) as pool:
            chunk = max(1, len(rest) // (4 * jobs))
            for out in pool.map(_review_in_worker, rest, chunksize=chunk):
                note_reads(out.reads)
                if on_done is not None:
                    on_done(out)
                yield out
    finally:
        gc.unfreeze()
        _WORKER = None


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
    detail: str = "none",
    input_format: str | None = None,
    netlist_map: str | Path | None = None,
    on_note: Any = None,
    jobs: int = 1,
    on_done: Any = None,
    baseline_any_design: bool = False,
) -> Report:
    """Check every design under its policy (``config``, else a discovered ``.afecheck.yaml`` when ``discover``),
    apply waivers and the baseline, and return the report data. Bad input of any file raises one InputError.

    ``detail``: ``"stages"`` adds each stage's numbers and headroom to the report data, ``"curves"`` also its
    frequency responses (for the reports that draw plots); ``"none"`` keeps the check path lean.
    ``input_format``/``netlist_map`` say how to read SPICE netlists; ``on_note(text)`` hears what a reader skipped.
    ``jobs`` > 1 spreads the designs over that many processes; the report is the same as a serial run's, byte for
    byte. ``on_done(outcome)`` is called as each design finishes (progress).
    A baseline recorded for other designs is refused unless ``baseline_any_design`` is set."""
    from afecheck import __version__

    options = {"intent": intent, "libraries": libraries, "config": config, "discover": discover, "ruleset": ruleset,
               "waiver_files": tuple(waiver_files), "baseline": baseline, "today": today, "registry": registry,
               "detail": detail, "input_format": input_format, "netlist_map": netlist_map,
               "baseline_any_design": baseline_any_design}
    problems: list[Problem] = []
    designs: list[DesignResult] = []
    used: set[str] = set()
    expired: dict[str, WaiverNote] = {}
    levels: set[str] = set()
    all_waivers: dict[str, WaiverNote] = {}
    renamed: dict[str, str] = {}
    for out in _outcomes(list(paths), options, jobs, on_done):
        renamed.update(out.renamed)
        if on_note is not None:
            for note in out.notes:
                on_note(note)
        if out.design is None:
            problems.extend(out.problems)
            continue
        designs.append(out.design)
        used |= out.used
        levels.add(out.level or "error")
        for w in out.expired:
            expired.setdefault(w.key, w)
        for w in out.waivers:
            all_waivers.setdefault(w.key, w)
    if problems:
        raise InputError(list(dict.fromkeys(problems)))  # a bad config shared by several designs is said once
    reg = _registry(registry)
    from afecheck.policy.rulesets import Catalogue

    catalogue = Catalogue(reg.metas())
    catalogue.renamed_used.update(renamed)
    notes: list[str] = []
    if baseline is not None:
        from afecheck.policy.baseline import read_baseline

        recorded = read_baseline(baseline)
        if not recorded.names_designs:
            notes.append(f"baseline {recorded.file} does not say which designs it was recorded for (written by an "
                         "older afecheck); its findings are matched by design name; re-record it to add them")
    level = fail_on or min(levels or {"error"}, key=_FAIL_ORDER.index)
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
        notes=(*notes, *catalogue.rename_notes()),
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
