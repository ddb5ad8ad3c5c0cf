"""Read a small YAML policy file with the line and column of every key, so errors can point at them."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import yaml

from afecheck.errors import ConfigError, Problem

Positions = dict[tuple[str | int, ...], tuple[int, int]]


def _walk(node: yaml.Node, loader: yaml.SafeLoader, path: tuple, positions: Positions,
          scalars: dict[tuple, str]) -> None:
    if isinstance(node, yaml.MappingNode):
        for knode, vnode in node.value:
            key = loader.construct_object(knode, deep=True)
            sub = (*path, key if isinstance(key, (str, int)) else str(key))
            positions[sub] = (knode.start_mark.line + 1, knode.start_mark.column + 1)
            _walk(vnode, loader, sub, positions, scalars)
    elif isinstance(node, yaml.SequenceNode):
        for i, item in enumerate(node.value):
            positions[(*path, i)] = (item.start_mark.line + 1, item.start_mark.column + 1)
            _walk(item, loader, (*path, i), positions, scalars)
    elif isinstance(node, yaml.ScalarNode):
        scalars[path] = node.value


def load_yaml(path: str | Path) -> tuple[Any, Positions]:
    """Parse ``path`` (YAML or JSON); return the data and the (line, column) of each key path. Errors: ConfigError."""
    data, positions, _ = load_yaml_scalars(path)
    return data, positions


def load_yaml_scalars(path: str | Path) -> tuple[Any, Positions, dict[tuple, str]]:
    """As :func:`load_yaml`, plus the source text of every scalar (``0123`` stays ``"0123"``, not 83)."""
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise ConfigError([Problem(str(p), None, None, "", f"cannot read the file: {exc}")]) from None
    loader = yaml.SafeLoader(text)
    try:
        node = loader.get_single_node()
        if node is None:
            return None, {}, {}
        data = loader.construct_document(node)
        positions: Positions = {(): (node.start_mark.line + 1, node.start_mark.column + 1)}
        scalars: dict[tuple, str] = {}
        _walk(node, loader, (), positions, scalars)
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        line = mark.line + 1 if mark else None
        col = mark.column + 1 if mark else None
        raise ConfigError([Problem(str(p), line, col, "", f"not valid YAML: {exc.problem or exc}")]) from None
    except yaml.YAMLError as exc:
        raise ConfigError([Problem(str(p), None, None, "", f"not valid YAML: {exc}")]) from None
    finally:
        loader.dispose()
    return data, positions, scalars


class Problems:
    """Collects every problem in one policy file so the user fixes them all in one round."""

    def __init__(self, file: str, positions: Positions):
        self.file = file
        self.positions = positions
        self.items: list[Problem] = []

    def add(self, path: tuple, message: str) -> None:
        key = tuple(path)
        while key and key not in self.positions:
            key = key[:-1]
        line, col = self.positions.get(key, (None, None))
        self.items.append(Problem(self.file, line, col, ".".join(str(p) for p in path), message))

    def line(self, path: tuple) -> int | None:
        return self.positions.get(tuple(path), (None, None))[0]

    def raise_if_any(self) -> None:
        if self.items:
            raise ConfigError(self.items)
