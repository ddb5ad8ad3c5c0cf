"""Fields a design declares that no analysis or rule checks yet (see afecheck/engine/consumers.py)."""

from __future__ import annotations

from collections.abc import Callable, Iterator, Mapping
from typing import Any

from afecheck.engine.consumers import UNCHECKED, consumer, declared_fields, may_hold_models, pattern_of
from afecheck.engine.context import Context
from afecheck.engine.finding import Finding, Severity
from afecheck.engine.rule import RuleMeta
from afecheck.model.loaded import path_text

META = RuleMeta(
    id="coverage.declared-not-checked", slug="declared-not-checked", severity=Severity.INFO, family="coverage",
    needs=(),
    summary="the design declares a value (a budget, a part limit, an ADC setting) that no rule checks yet",
    fix="review that value by hand; it is listed so that a declared limit is never taken as verified",
)


_KEYED = ("rails", "signals", "loads", "budgets", "components")  # sections whose second key is an instance name


def unchecked_paths(ctx: Context) -> list[tuple[str | int, ...]]:
    """Key paths the user declared (design, intent, own part models) whose registered consumer is UNCHECKED."""
    loaded = ctx.loaded
    d = loaded.design
    found: list[tuple[str | int, ...]] = []
    verdicts: dict[tuple, bool] = {}  # by the path with its instance key (net, refdes) replaced by the kind

    def unchecked(path: tuple[str | int, ...], kind: str | None = None) -> bool:
        shape = (path[0], kind, path[2:]) if len(path) > 2 and path[0] in _KEYED else path
        verdict = verdicts.get(shape)
        if verdict is None:
            verdict = verdicts[shape] = consumer(pattern_of(path, kind)) is UNCHECKED
        return verdict

    for name in sorted(d.model_fields_set):  # the order of declared_fields(d)
        if name == "parts":
            continue  # walked below, once per part the design uses
        if unchecked((name,)):
            found.append((name,))
        if name == "components":
            found += _unchecked_components(d.components, unchecked)
        else:
            found += [p for p in declared_fields(getattr(d, name), (name,)) if unchecked(p)]
    for ref, comp in loaded.sensors.items():  # thermocouples and bridges as declared, before they became parts
        found += [p for p in declared_fields(comp, ("components", ref))
                  if consumer(pattern_of(p, comp.kind)) is UNCHECKED]
    used = sorted({c.part for c in d.components.values() if c.kind == "opamp"})  # type: ignore[union-attr]
    for name in used:
        if name not in loaded.parts or name in loaded.shipped_parts:
            continue  # the shipped archetypes are not the designer's declarations
        for path in declared_fields(loaded.parts[name], ("parts", name)):
            if consumer(pattern_of(path)) is UNCHECKED:
                found.append(path)
    return found


def _unchecked_components(components: Mapping[str, Any],
                          unchecked: Callable[..., bool]) -> list[tuple[str | int, ...]]:
    """The unchecked declared fields of every component, in the walk's order; a component whose declared fields
    hold no model (no waivers) is judged by its kind and field names, once for all components of that shape."""
    found: list[tuple[str | int, ...]] = []
    flat: dict[tuple[str, frozenset[str]], tuple[str, ...]] = {}
    for ref, comp in components.items():
        fields = comp.model_fields_set
        if fields & may_hold_models(type(comp)):
            found += [p for p in declared_fields(comp, ("components", ref)) if unchecked(p, comp.kind)]
            continue
        key = (comp.kind, frozenset(fields))
        names = flat.get(key)
        if names is None:
            names = flat[key] = tuple(n for n in sorted(fields) if unchecked(("components", ref, n), comp.kind))
        found += [("components", ref, n) for n in names]
    return found


def check(ctx: Context) -> Iterator[Finding]:
    """One info finding listing every declared but unchecked field, pointing at the first of them."""
    paths = unchecked_paths(ctx)
    if not paths:
        return
    names = [path_text(p) for p in paths]
    shown = ", ".join(names[:12]) + (f" and {len(names) - 12} more" if len(names) > 12 else "")
    loc = ctx.loaded.locate(path=paths[0])
    yield Finding(
        rule=META.id, slug=META.slug, severity=META.severity,
        message=f"declared, not checked: {shown}: no analysis or rule reads these values yet. Fix: {META.fix}",
        location=loc, ctx={"fields": names, "count": len(names)}, fix=META.fix, design=ctx.loaded.design.name,
    )
