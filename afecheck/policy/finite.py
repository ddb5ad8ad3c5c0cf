"""The last guard before findings reach a report: no NaN or infinity in a finding's numbers or its message.

A rule that computed a non-finite value did not evaluate anything; printing "nan" or "inf" would pass a guess
for a result. Such a finding becomes a "not evaluated" one (capped at warning) that names the quantities
that could not be computed, with the non-finite numbers removed.
"""

from __future__ import annotations

import math
import re
from collections.abc import Iterable
from dataclasses import replace
from typing import Any

from afecheck.engine.finding import Finding, Severity

_TOKEN = re.compile(r"(?<![\w.])[-+]?(?:nan|inf|infinity)(?![\w])", re.IGNORECASE)


def _non_finite_keys(value: Any, path: str = "") -> list[str]:
    if isinstance(value, float):
        return [] if math.isfinite(value) else [path or "value"]
    if isinstance(value, complex):
        return [] if math.isfinite(value.real) and math.isfinite(value.imag) else [path or "value"]
    if isinstance(value, dict):
        return [k for key, v in value.items() for k in _non_finite_keys(v, f"{path}.{key}" if path else str(key))]
    if isinstance(value, (list, tuple)):
        return [k for i, v in enumerate(value) for k in _non_finite_keys(v, f"{path}[{i}]")]
    return []


def _finite_only(value: Any) -> Any:
    """``value`` with every non-finite float replaced by None (kept as data, never printed as nan/inf)."""
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, complex):
        return value if math.isfinite(value.real) and math.isfinite(value.imag) else None
    if isinstance(value, dict):
        return {k: _finite_only(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return type(value)(_finite_only(v) for v in value)
    return value


def quoted_names(value: Any) -> set[str]:
    """Names a finding carries as text in its numbers (a list of declared rails, say), each item of a list too."""
    if isinstance(value, str):
        return {value, *(part.strip() for part in value.split(","))}
    if isinstance(value, dict):
        return {n for v in value.values() for n in quoted_names(v)}
    if isinstance(value, (list, tuple)):
        return {n for v in value for n in quoted_names(v)}
    return set()


def _message_tokens(f: Finding) -> bool:
    """True when the message prints nan or inf outside the part, net and other names it quotes."""
    text = f"{f.message} {f.fix}"
    names = {*f.location.refs, *f.location.nets, *f.location.pins, *quoted_names(f.ctx)}
    for name in sorted(names, key=len, reverse=True):
        if name:
            text = text.replace(name, " ")
    return bool(_TOKEN.search(text))


def guard_finite(findings: Iterable[Finding]) -> tuple[Finding, ...]:
    """``findings`` with any that carry NaN or infinity turned into not-evaluated findings saying so."""
    out = []
    for f in findings:
        keys = _non_finite_keys(f.ctx)
        if not keys and not _message_tokens(f):
            out.append(f)
            continue
        what = ", ".join(keys) if keys else "a printed value"
        subject = ", ".join(f.location.refs) or "this check"
        out.append(replace(
            f, severity=min(f.severity, Severity.WARNING), confidence="not-evaluated",
            message=(f"{subject} not evaluated by {f.rule}: the computation gave no finite value for {what} "
                     "(an infinite or undefined result, e.g. a zero or infinite resistance); check the values "
                     "it rests on"),
            ctx={**_finite_only(f.ctx), "not_evaluated": f"non-finite {what}"},
        ))
    return tuple(out)
