"""Confidence by sensitivity: does an assumed part parameter decide a finding's verdict?

A finding that rests on assumed part defaults is recomputed with every one of those parameters declared at its
default (the uncapped verdict) and then with each in turn at both ends of its plausible range
(:meth:`OpAmpModel.plausible_range`). When all runs give the same severity for the finding, the assumptions do not
decide it: it becomes "computed" at that severity and lists what it checked. Otherwise it stays "estimated"
(capped at warning by the runner) and ``ctx["decided_by"]`` names the assumptions that change it.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Sequence
from dataclasses import replace
from typing import Any

from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.model.loaded import LoadedDesign

MAX_ASSUMPTIONS = 8
"""A finding resting on more assumptions than this is left estimated (the reruns would cost too much)."""

Verdicts = dict[str, tuple[Severity, ...]]


def _split(name: str) -> tuple[str, str]:
    ref, _, param = name.rpartition(".")  # parameter names hold no dot; a reference may
    return ref, param


def _part_name(loaded: LoadedDesign, ref: str) -> str | None:
    """The part model name of op-amp ``ref``; None when ``ref`` is no op-amp with a known part.

    Analyses also record assumptions that are not part parameters (a resistor's tolerance, an ADC's acquisition
    time): those have no plausible range here, so a finding resting on one stays an estimate.
    """
    comp = loaded.design.components.get(ref)
    if comp is None or comp.kind != "opamp" or comp.part not in loaded.parts:  # type: ignore[union-attr]
        return None
    return comp.part  # type: ignore[union-attr]


def _variant(loaded: LoadedDesign, updates: Iterable[tuple[str, str, float]]) -> LoadedDesign:
    """``loaded`` with part models updated: (part name, parameter, value) each declared."""
    parts = dict(loaded.parts)
    for part, param, value in updates:
        parts[part] = parts[part].model_copy(update={param: value})
    return replace(loaded, parts=parts)


class Sensitivity:
    """Variant designs and their shared analyses for one design; one instance per rule run over that design."""

    def __init__(self, base: Context) -> None:
        self.base = base
        self._rule = ""
        self._contexts: dict[frozenset, Context] = {}
        self._runs: dict[tuple[str, frozenset], list[Finding]] = {}

    def _context(self, updates: frozenset[tuple[str, str, float]]) -> Context:
        if updates not in self._contexts:
            self._contexts[updates] = Context(_variant(self.base.loaded, updates))
        return self._contexts[updates]

    def settle(self, findings: Sequence[Finding], run: Callable[[Context], list[Finding]],
               rule: str = "") -> list[Finding]:
        """Each finding with assumptions, made computed when no assumption decides it (module docstring).

        ``run`` reruns the rule named ``rule`` on a variant context; its results are shared by all its findings.
        """
        self._rule = rule
        return [self._settle_one(f, run) if f.assumed and f.confidence == "estimated" else f for f in findings]

    def _settle_one(self, f: Finding, run: Callable[[Context], list[Finding]]) -> Finding:
        if len(f.assumed) > MAX_ASSUMPTIONS:
            return f
        try:
            nominal, ends = self._plan(f.assumed)
        except (KeyError, ValueError):
            return f  # an assumption with no known range: it stays an estimate
        verdict = self._verdict(nominal, f, run)
        if not verdict or len(set(verdict)) != 1:
            return f
        decided = []
        checked: list[str] = []
        for name, updates in ends:
            results = [self._verdict(u, f, run) for u in updates]
            checked.append(f"{name} {self._range_text(updates, name)}")
            if any(r != verdict for r in results):
                decided.append(name)
        ctx: dict[str, Any] = dict(f.ctx)
        if decided:
            ctx["decided_by"] = ", ".join(decided)
            note = (f" (estimated: the verdict changes with assumed {', '.join(decided)} over "
                    f"{'its' if len(decided) == 1 else 'their'} plausible range)")
            tail = f". Fix: {f.fix}" if f.fix and f.message.endswith(f". Fix: {f.fix}") else ""
            head = f.message[: len(f.message) - len(tail)] if tail else f.message
            return replace(f, ctx=ctx, message=head + note + tail)
        ctx["assumptions_checked"] = "; ".join(checked)
        return replace(f, confidence="computed", severity=verdict[0], ctx=ctx)

    def _plan(self, assumed: tuple[str, ...]):
        loaded = self.base.loaded
        declared: dict[tuple[str, str], float] = {}
        ranges: dict[str, tuple[str, str, tuple[float, float]]] = {}
        for name in assumed:
            ref, param = _split(name)
            part = _part_name(loaded, ref)
            if part is None:
                raise KeyError(name)
            model = loaded.parts[part]
            declared[(part, param)] = float(model.get(param)[0])
            ranges[name] = (part, param, model.plausible_range(param))
        nominal = frozenset((p, q, v) for (p, q), v in declared.items())
        ends = []
        for name, (part, param, (lo, hi)) in ranges.items():
            rest = {k: v for k, v in declared.items() if k != (part, param)}
            ends.append((name, [frozenset({*((p, q, v) for (p, q), v in rest.items()), (part, param, end)})
                                for end in (lo, hi)]))
        return nominal, ends

    def _verdict(self, updates: frozenset, f: Finding, run: Callable[[Context], list[Finding]]) -> tuple:
        key = (self._rule, updates)
        if key not in self._runs:  # one rerun of a rule per variant, shared by all its findings
            self._runs[key] = run(self._context(updates))
        again = self._runs[key]
        return tuple(sorted(g.severity for g in again if g.fingerprint == f.fingerprint))

    @staticmethod
    def _range_text(updates: list[frozenset], name: str) -> str:
        _, param = _split(name)
        values = sorted(v for u in updates for (_, q, v) in u if q == param)
        return f"{values[0]:.3g}..{values[-1]:.3g}"
