"""The part library: the shipped generic archetypes plus the library files a design or the user adds.

Precedence (docs/FORMAT.md): built-in archetypes, then the design's ``part_libraries:`` files in
order, then ``--parts`` files in order. A name defined in two of these is an error naming both
places; only the design's own ``parts:`` entries may redefine a name, and they win.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Iterator, Mapping
from dataclasses import dataclass, field
from functools import lru_cache
from importlib import resources
from pathlib import Path
from typing import Literal

from pydantic import BaseModel, ConfigDict, Field

from afecheck.errors import InputError, Problem
from afecheck.model.reader import read_bytes, read_file
from afecheck.model.validate import validate
from afecheck.parts.model import OpAmpModel

BUILTIN = "built-in"
_NOT_PARAMETERS = ("description", "archetype", "gbw", "input_stage")
_TRANSITION_FIELDS = ("transition_below_vplus", "transition_width", "transition_offset_step")


class PartLibraryFile(BaseModel):
    """A part library file: a top-level ``parts:`` mapping of part name -> op-amp model fields."""

    model_config = ConfigDict(extra="forbid", frozen=True, populate_by_name=True)

    afecheck_parts: Literal[1] | None = Field(default=None, alias="afecheck-parts",
                                              description="library file format version")
    description: str | None = None
    parts: dict[str, OpAmpModel] = Field(description="part name -> op-amp macromodel")


@dataclass(frozen=True)
class PartEntry:
    """One part model and where it was defined."""

    name: str
    model: OpAmpModel
    file: str
    line: int | None = None
    column: int | None = None
    place: Callable[[], tuple[int | None, int | None]] | None = field(default=None, compare=False, repr=False)
    """Finds (line, column) when first asked for, in place of ``line`` and ``column`` (a design's own parts:)."""

    def where(self) -> tuple[int | None, int | None]:
        """(line, column) of the definition; (None, None) for a shipped archetype."""
        return self.place() if self.place is not None else (self.line, self.column)

    @property
    def origin(self) -> str:
        """``file:line`` of the definition, or ``built-in (file)`` for a shipped archetype."""
        line = self.where()[0]
        return f"{self.file}:{line}" if line is not None else self.file


class _Origins(Mapping[str, str]):
    """Part name -> origin, each rendered when read (a design's own part finds its line only then)."""

    def __init__(self, entries: dict[str, PartEntry]):
        self._entries = entries

    def __getitem__(self, name: str) -> str:
        return self._entries[name].origin

    def __iter__(self) -> Iterator[str]:
        return iter(self._entries)

    def __len__(self) -> int:
        return len(self._entries)


@dataclass(frozen=True)
class PartSet:
    """Part models by name, with the place each was defined."""

    entries: dict[str, PartEntry] = field(default_factory=dict)

    @property
    def models(self) -> dict[str, OpAmpModel]:
        return {name: e.model for name, e in self.entries.items()}

    @property
    def origins(self) -> Mapping[str, str]:
        return _Origins(self.entries)

    @property
    def shipped(self) -> frozenset[str]:
        """Names of the shipped archetypes in the set (not redefined by a design's own parts:)."""
        return frozenset(name for name, e in self.entries.items() if e.file.startswith(BUILTIN))


def read_library(path: Path, display: str | None = None) -> list[PartEntry]:
    """Part entries of one library file (its errors with its own file:line); raise InputError."""
    doc = read_file(path, display)
    lib = validate(doc, PartLibraryFile)
    entries = []
    for name, model in lib.parts.items():
        line, column = doc.keys.get(("parts", name), (None, None))
        entries.append(PartEntry(name, model, doc.file, line, column))
    return entries


@lru_cache(maxsize=1)
def _builtin_entries() -> tuple[PartEntry, ...]:
    entries: list[PartEntry] = []
    folder = resources.files("afecheck.parts").joinpath("library")
    for item in sorted(folder.iterdir(), key=lambda p: p.name):
        if item.name.endswith((".yaml", ".yml")):
            name = f"{BUILTIN} ({item.name})"
            doc = read_bytes(item.read_bytes(), name)
            lib = validate(doc, PartLibraryFile)
            entries.extend(PartEntry(n, m, name) for n, m in lib.parts.items())
    return tuple(entries)


def builtin_entries() -> list[PartEntry]:
    """The shipped archetypes (``afecheck/parts/library/*.yaml``) as entries, sorted by file."""
    return list(_builtin_entries())


def builtin_library() -> dict[str, OpAmpModel]:
    """The shipped archetypes by name."""
    return {e.name: e.model for e in _builtin_entries()}


def load_library_file(path: Path) -> dict[str, OpAmpModel]:
    """Part models of one user library file (top-level ``parts:`` mapping); raise InputError."""
    return {e.name: e.model for e in read_library(Path(path))}


def combine(groups: Iterable[list[PartEntry]], inline: Iterable[PartEntry] = ()) -> PartSet:
    """Merge entry groups in precedence order; a repeated name is an error unless it comes from ``inline``."""
    entries: dict[str, PartEntry] = {}
    problems: list[Problem] = []
    for group in groups:
        for entry in group:
            first = entries.get(entry.name)
            if first is not None:
                problems.append(Problem(
                    entry.file, *entry.where(), f"parts.{entry.name}",
                    f"part {entry.name!r} is already defined in {first.origin}; rename one (only a design's own "
                    "parts: entry may redefine a part)"))
                continue
            entries[entry.name] = entry
    if problems:
        raise InputError(problems)
    for entry in inline:
        entries[entry.name] = entry
    return PartSet(entries)


def load_parts(libraries: Iterable[str | Path] = ()) -> PartSet:
    """Built-in archetypes plus the given library files (no design): what ``afecheck parts`` lists."""
    groups: list[list[PartEntry]] = [builtin_entries()]
    problems: list[Problem] = []
    for lib in libraries:
        try:
            groups.append(read_library(Path(lib), str(lib)))
        except InputError as exc:
            problems.extend(exc.problems)
    if problems:
        raise InputError(problems)
    return combine(groups)


def missing_parameters(model: OpAmpModel) -> list[str]:
    """Parameters the model leaves out: the analysis assumes a default (``ASSUMED_DEFAULTS``) or skips the check.

    The input-stage transition parameters count only for a rail-to-rail complementary input stage.
    """
    names = [n for n in OpAmpModel.model_fields if n not in _NOT_PARAMETERS and getattr(model, n) is None]
    if model.input_stage != "rail-to-rail-complementary":
        names = [n for n in names if n not in _TRANSITION_FIELDS]
    return sorted(names)
