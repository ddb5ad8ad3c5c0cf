"""Validate read data against a pydantic model and turn every validation error into a positioned Problem."""

from __future__ import annotations

import difflib
from functools import cache
from typing import Any, TypeVar

from pydantic import BaseModel, ValidationError

from afecheck.errors import InputError, Problem
from afecheck.model.reader import Document, PathKey

M = TypeVar("M", bound=BaseModel)
_MISSING = object()


def validate(doc: Document, model: type[M]) -> M:
    """``model`` validated from ``doc.data``; every error at once as an InputError with file:line:column."""
    try:
        validated = model.model_validate(doc.data)
    except ValidationError as exc:
        raise InputError(validation_problems(doc, exc, model)) from None
    share_fields_sets(validated)
    return validated


def share_fields_sets(root: BaseModel) -> None:
    """Frozen models under ``root`` given the same fields share one set of their names (pydantic's fields-set).

    pydantic keeps one such set per model instance, 200 to 700 bytes: 18 MiB for the 48 000 components of a
    4000-channel design. A frozen model's set never changes (pydantic copies it before a copy's update), so one set
    per distinct content serves every instance (docs/SCALE.md, memory). Models are looked for only in the fields
    whose type can hold one, directly or in a mapping, tuple or list."""
    shared: dict[frozenset[str], set[str]] = {}
    stack: list[BaseModel] = [root]
    while stack:
        node = stack.pop()
        frozen, nested = _model_fields(type(node))
        if frozen:
            fields = node.__pydantic_fields_set__
            object.__setattr__(node, "__pydantic_fields_set__", shared.setdefault(frozenset(fields), fields))
        for name in nested:
            value = node.__dict__[name]
            if isinstance(value, BaseModel):
                stack.append(value)
            elif isinstance(value, (dict, list, tuple)):
                items = value.values() if isinstance(value, dict) else value
                stack.extend(item for item in items if isinstance(item, BaseModel))


@cache
def _model_fields(model: type[BaseModel]) -> tuple[bool, tuple[str, ...]]:
    """(frozen, the fields whose type can hold a model) of ``model``."""
    nested = tuple(name for name, info in model.model_fields.items() if _models_in(info.annotation))
    return bool(model.model_config.get("frozen")), nested


def validation_problems(doc: Document, exc: ValidationError, model: type[BaseModel]) -> list[Problem]:
    """One Problem per pydantic error, placed at the key (or value) its ``loc`` points to in ``doc``."""
    problems = []
    for error in exc.errors(include_url=False):
        path, value = data_path(doc.data, error["loc"])
        kind = error["type"]
        if kind in ("union_tag_invalid", "union_tag_not_found") and isinstance(value, dict):
            if "kind" in value:
                path, value = path + ("kind",), value["kind"]
        message = _message(error, model)
        leaf = not isinstance(value, (dict, list)) and kind != "extra_forbidden"
        pos = doc.values.get(path) if leaf and path in doc.values else doc.where(path)
        line, column = pos if pos else (1, None)
        problems.append(Problem(doc.file_of(path), line, column, ".".join(str(p) for p in path), message))
    return sorted(problems, key=lambda p: (p.line or 0, p.column or 0, p.path))


def data_path(data: Any, loc: tuple[str | int, ...]) -> tuple[PathKey, Any]:
    """Map a pydantic ``loc`` onto the keys really present in ``data`` (as path strings); skip union tags and
    missing keys. Returns the path and the value found there."""
    path: list[str | int] = []
    current = data
    for item in loc:
        if isinstance(current, dict):
            key = item if item in current else next((k for k in current if str(k) == str(item)), _MISSING)
            if key is _MISSING:
                continue
            path.append(str(key))
            current = current[key]
        elif isinstance(current, list) and isinstance(item, int) and 0 <= item < len(current):
            path.append(item)
            current = current[item]
    return tuple(path), current


def _message(error: dict[str, Any], model: type[BaseModel]) -> str:
    kind = error["type"]
    loc = error["loc"]
    ctx = error.get("ctx") or {}
    name = str(loc[-1]) if loc else ""
    if kind == "missing":
        return f"required key {name!r} is missing"
    if kind == "extra_forbidden":
        # the names come from the whole schema: a key valid elsewhere is no hint for this place
        close = difflib.get_close_matches(name, [n for n in _field_names(model) if n != name], n=1, cutoff=0.75)
        hint = f"; did you mean {close[0]!r}?" if close else ""
        return f"unknown key {name!r}{hint}"
    if kind == "union_tag_invalid":
        return f"unknown kind {ctx.get('tag')!r}; expected one of {ctx.get('expected_tags')}"
    if kind == "union_tag_not_found":
        return f"'{ctx.get('discriminator', 'kind').strip(chr(39))}' is missing; it says what the entry is"
    message = error["msg"]
    for prefix in ("Value error, ", "Assertion failed, "):
        message = message.removeprefix(prefix)
    if kind in ("value_error", "assertion_error"):
        return message
    value = error.get("input")
    if isinstance(value, (str, int, float, bool)) or value is None:
        return f"{message} (read {value!r})"
    return message


@cache
def _field_names(model: type[BaseModel]) -> tuple[str, ...]:
    """Every field name and alias reachable from ``model``: the spellings an unknown key may be a typo of."""
    names: set[str] = set()
    todo: list[type[BaseModel]] = [model]
    seen: set[type[BaseModel]] = set()
    while todo:
        current = todo.pop()
        if current in seen:
            continue
        seen.add(current)
        for field_name, info in current.model_fields.items():
            names.add(info.alias or field_name)
            todo.extend(_models_in(info.annotation))
    return tuple(sorted(names))


def _models_in(annotation: Any) -> list[type[BaseModel]]:
    found: list[type[BaseModel]] = []
    stack = [annotation]
    while stack:
        current = stack.pop()
        if isinstance(current, type) and issubclass(current, BaseModel):
            found.append(current)
        stack.extend(getattr(current, "__args__", ()) or ())
        origin = getattr(current, "__origin__", None)
        if origin is not None and origin is not current:
            stack.append(origin)
    return found
