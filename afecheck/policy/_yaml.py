"""Read a policy file (config, rule set, waivers) through the design reader, so every file afecheck reads meets
the same limits: regular files only, size cap, no tags, no merge or duplicate keys, alias and depth limits."""

from __future__ import annotations

from pathlib import Path
from typing import Any

from afecheck.errors import ConfigError, InputError
from afecheck.model.reader import Document, read_file


def load_document(path: str | Path) -> Document:
    """``path`` read as YAML (JSON for ``.json``) with positions; every problem a ConfigError. Mapping keys must be
    text: a number, boolean or null as a key is refused where it stands."""
    try:
        doc = read_file(Path(path), str(path))
    except InputError as exc:
        raise ConfigError(exc.problems) from None
    problems = Problems(doc)
    stack: list[tuple[tuple, Any]] = [((), doc.data)]
    while stack:
        path_here, node = stack.pop()
        if isinstance(node, dict):
            for k, v in node.items():
                if not isinstance(k, str):
                    problems.add((*path_here, str(k)), f"key {k!r} is not text; write keys as names")
                stack.append(((*path_here, str(k)), v))
        elif isinstance(node, list):
            stack.extend(((*path_here, i), v) for i, v in enumerate(node))
    problems.raise_if_any()
    return doc


class Problems:
    """Collects every problem in one policy file so the user fixes them all in one round."""

    def __init__(self, doc: Document):
        self.doc = doc
        self.file = doc.file
        self.items: list = []

    def add(self, path: tuple, message: str) -> None:
        self.items.append(self.doc.problem(tuple(p if isinstance(p, int) else str(p) for p in path), message))

    def line(self, path: tuple) -> int | None:
        pos = self.doc.where(tuple(path))
        return pos[0] if pos else None

    def raise_if_any(self) -> None:
        if self.items:
            raise ConfigError(self.items)
