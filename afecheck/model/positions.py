"""Where each key path of a loaded design stands: (file, line, column), looked up only when asked for.

A design's positions come from its own file, overlaid by what intent files add; nothing is copied up front, so a
clean design that draws no finding and no input error never has its positions built (docs/BENCHMARK.md, memory).
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping

from afecheck.model.reader import Document, PathKey

Place = tuple[str, int, int]


class _Layer:
    """Positions taken from ``doc`` for the paths under ``prefix`` (keys only, or keys over values)."""

    __slots__ = ("doc", "prefix", "keys_only", "with_prefix")

    def __init__(self, doc: Document, prefix: PathKey, keys_only: bool, with_prefix: bool):
        self.doc, self.prefix, self.keys_only, self.with_prefix = doc, prefix, keys_only, with_prefix

    def covers(self, path: PathKey) -> bool:
        n = len(self.prefix)
        return path[:n] == self.prefix and (self.with_prefix or len(path) > n)

    def get(self, path: PathKey) -> Place | None:
        pos = self.doc.keys.get(path)
        if pos is None and not self.keys_only:
            pos = self.doc.values.get(path)
        return None if pos is None else (self.doc.file, *pos)


class Positions(Mapping[PathKey, Place]):
    """Key path -> (file, line, column): the design file's key (else value) positions, under the intent files'
    entries laid over them in the order they were merged, under positions set one by one."""

    def __init__(self, doc: Document):
        self._doc = doc
        self._layers: list[_Layer] = []
        self._same: dict[PathKey, PathKey] = {}

    def overlay(self, doc: Document, prefix: PathKey, keys_only: bool = False, with_prefix: bool = True) -> None:
        """From now on, paths under ``prefix`` found in ``doc`` (an intent file) stand where ``doc`` puts them."""
        self._layers.append(_Layer(doc, prefix, keys_only, with_prefix))

    def same_as(self, path: PathKey, other: PathKey) -> None:
        """``path`` (a part a sensor became) stands where ``other`` (the sensor) stands."""
        self._same[path] = other

    def get(self, path: PathKey, default: Place | None = None) -> Place | None:  # type: ignore[override]
        path = tuple(path)
        if path in self._same:
            found = self.get(self._same[path])
            if found is not None:
                return found
        for layer in reversed(self._layers):
            if layer.covers(path):
                found = layer.get(path)
                if found is not None:
                    return found
        doc = self._doc
        pos = doc.keys.get(path)
        if pos is None and path:
            pos = doc.values.get(path)
        return default if pos is None else (doc.file_of(path), *pos)

    def __getitem__(self, path: PathKey) -> Place:
        found = self.get(path)
        if found is None:
            raise KeyError(path)
        return found

    def __contains__(self, path: object) -> bool:
        return isinstance(path, (tuple, list)) and self.get(tuple(path)) is not None

    def _paths(self) -> set[PathKey]:
        doc = self._doc
        paths = {p for p in doc.values if p} | set(doc.keys) | set(self._same)
        for layer in self._layers:
            paths |= {p for p in layer.doc.keys if layer.covers(p)}
            if not layer.keys_only:
                paths |= {p for p in layer.doc.values if layer.covers(p)}
        return {p for p in paths if p in self}

    def __iter__(self) -> Iterator[PathKey]:
        return iter(sorted(self._paths(), key=lambda p: tuple(map(str, p))))

    def __len__(self) -> int:
        return len(self._paths())
