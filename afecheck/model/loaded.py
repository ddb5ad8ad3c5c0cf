"""A design as loaded: the validated model, the part models it uses, and where each key stands in its file."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

from afecheck.engine.finding import Location
from afecheck.model.schema import Design
from afecheck.parts.model import OpAmpModel

PathKey = tuple[str | int, ...]


def path_text(path: PathKey) -> str:
    """Render a key path as ``components.R1.pins.1`` for messages."""
    return ".".join(str(p) for p in path)


@dataclass(frozen=True)
class LoadedDesign:
    """A validated design (intent merged), its part models, and the source positions of its keys."""

    design: Design
    file: str
    parts: Mapping[str, OpAmpModel]
    positions: Mapping[PathKey, tuple[str, int, int]] = field(default_factory=dict)
    part_origins: Mapping[str, str] = field(default_factory=dict)
    """Where each part model was defined: ``file:line`` or ``built-in (file)``."""
    intent_files: tuple[str, ...] = ()
    """Intent files merged into ``design`` (their keys' positions point into them)."""

    def position(self, *path: str | int) -> tuple[str, int | None, int | None]:
        """(file, line, column) of the deepest known key along ``path``; the design file if unknown."""
        key: PathKey = tuple(path)
        while key:
            if key in self.positions:
                return self.positions[key]
            key = key[:-1]
        return (self.file, None, None)

    def locate(
        self,
        refs: tuple[str, ...] = (),
        nets: tuple[str, ...] = (),
        pins: tuple[str, ...] = (),
        path: PathKey | None = None,
    ) -> Location:
        """Location of a finding: the first ref's component entry (or ``path``), plus the electrical names."""
        if path is None:
            if refs:
                path = ("components", refs[0])
            elif nets:
                net = nets[0]
                for section in ("signals", "loads", "rails", "budgets"):
                    if (section, net) in self.positions:
                        path = (section, net)
                        break
            path = path or ()
        file, line, _ = self.position(*path)
        return Location(file=file, line=line, path=path_text(path), refs=refs, nets=nets, pins=pins)

    def part(self, refdes: str) -> OpAmpModel:
        """The part model of op-amp ``refdes``."""
        return self.parts[self.design.components[refdes].part]  # type: ignore[union-attr]
