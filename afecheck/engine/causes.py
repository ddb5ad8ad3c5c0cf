"""Downstream findings grouped under their root: a stage that floats, has no feedback, clips, sits on no known
supply or could not be evaluated is reported once; findings of that stage that could not judge it, and findings of
later stages about the signal it passes on, carry the root's fingerprint in ``caused_by``.

Roots, strongest first: supply pin off its rail (headroom.supply-pin-off-rail), input without DC path
(headroom.no-bias-path), feedback missing or
positive (stability.feedback-sense), output clips (headroom.output-swing error), analysis incomplete
(coverage.not-evaluated). Later stages are found through the
analysis: a stage input whose source is another stage's output.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import replace
from typing import TYPE_CHECKING

from afecheck.engine.finding import Finding, Severity

if TYPE_CHECKING:
    from afecheck.analysis.results import DesignAnalysis

ROOT_RULES: tuple[str, ...] = ("headroom.supply-pin-off-rail", "headroom.no-bias-path", "stability.feedback-sense",
                               "headroom.output-swing", "coverage.not-evaluated")
# Rules whose findings on a later stage rest on the signal an earlier stage passes on.
SIGNAL_RULES = frozenset({"coverage.not-evaluated", "loading.inverting-input", "loading.input-divider",
                          "dc-accuracy.bias-offset", "headroom.input-common-mode", "headroom.output-swing",
                          "headroom.output-current", "distortion.input-pair-transition", "distortion.common-mode-error",
                          "distortion.loop-gain-at-fmax", "distortion.slew-rate", "distortion.near-swing-limit",
                          "distortion.impedance-balance"})


def _is_root(f: Finding) -> bool:
    if f.rule not in ROOT_RULES or f.caused_by:
        return False
    if f.rule == "headroom.output-swing":
        return f.severity == Severity.ERROR and f.confidence != "not-evaluated"
    if f.rule == "coverage.not-evaluated":
        return True
    return f.severity >= Severity.WARNING


def downstream_of(analysis: DesignAnalysis) -> dict[str, frozenset[str]]:
    """op-amp -> every op-amp whose input is (through any number of stages) driven by its output."""
    owner = {s.out: s.opamp for s in analysis.stages if s.out}
    direct: dict[str, set[str]] = {s.opamp: set() for s in analysis.stages}
    for s in analysis.stages:
        for inp in s.inputs:
            up = owner.get(inp.source.net)
            if inp.source.kind in ("stage-output", "unknown") and up is not None and up != s.opamp:
                direct[up].add(s.opamp)
    closure: dict[str, frozenset[str]] = {}
    for start in direct:
        seen: set[str] = set()
        todo = list(direct[start])
        while todo:
            nxt = todo.pop()
            if nxt not in seen and nxt != start:
                seen.add(nxt)
                todo.extend(direct.get(nxt, ()))
        closure[start] = frozenset(seen)
    return closure


def _stage_of(f: Finding, opamps: frozenset[str]) -> str | None:
    return next((r for r in f.location.refs if r in opamps), None)


def link_causes(findings: Sequence[Finding], analysis: DesignAnalysis) -> tuple[Finding, ...]:
    """``findings`` with ``caused_by`` set on every finding that rests on a root finding (module docstring)."""
    opamps = frozenset(s.opamp for s in analysis.stages)
    below = downstream_of(analysis)
    roots: dict[str, Finding] = {}
    for rule in ROOT_RULES:
        for f in findings:
            stage = _stage_of(f, opamps)
            if f.rule == rule and stage is not None and stage not in roots and _is_root(f):
                roots[stage] = f
    upstream_root: dict[str, Finding] = {}
    for stage, root in roots.items():
        for later in sorted(below.get(stage, ())):
            upstream_root.setdefault(later, root)
    return tuple(_linked(f, _stage_of(f, opamps), roots, upstream_root) for f in findings)


def _linked(f: Finding, stage: str | None, roots: Mapping[str, Finding],
            upstream_root: Mapping[str, Finding]) -> Finding:
    if stage is None or f.caused_by:
        return f
    own = roots.get(stage)
    if own is not None and own is not f and (f.confidence == "not-evaluated" or f.rule == "coverage.not-evaluated"):
        return replace(f, caused_by=own.fingerprint)
    up = upstream_root.get(stage)
    if up is not None and f.rule in SIGNAL_RULES:
        return replace(f, caused_by=up.fingerprint)
    return f
