"""A design as loaded: the validated model, the part models it uses, and where each key stands in its file."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from functools import cached_property
from typing import Any

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
    shipped_parts: frozenset[str] = frozenset()
    """Names of the part models that are shipped archetypes (the designer declared none of their fields)."""
    sensors: Mapping[str, Any] = field(default_factory=dict)
    """Thermocouples and bridges as declared (``design`` holds the parts they became)."""
    intent_files: tuple[str, ...] = ()
    """Intent files merged into ``design`` (their keys' positions point into them)."""
    notes: tuple[str, ...] = ()
    """What the reader skipped on purpose (a netlist's analysis commands), for the user to see."""

    @cached_property
    def two_pin_by_net(self) -> Mapping[str, tuple[tuple[str, str, str], ...]]:
        """net -> (refdes, other net, kind) for every resistor, capacitor and NTC on it; built once per design."""
        index: dict[str, list[tuple[str, str, str]]] = {}
        for ref, comp in self.design.components.items():
            if comp.kind not in ("resistor", "capacitor", "ntc", "rtd", "bridge_arm", "inductor"):
                continue
            a, b = comp.pins.get("1"), comp.pins.get("2")
            if a is not None and b is not None:
                index.setdefault(a, []).append((ref, b, comp.kind))
                if b != a:
                    index.setdefault(b, []).append((ref, a, comp.kind))
        return {net: tuple(items) for net, items in index.items()}

    @cached_property
    def fixed_nets(self) -> frozenset[str]:
        """Nets held at a fixed voltage: ground, rails, and either end of a vsource chain tied to one of them."""
        d = self.design
        fixed = {d.ground, *d.rails}
        links = [(c.pins.get("p"), c.pins.get("n")) for c in d.components.values() if c.kind == "vsource"]
        changed = True
        while changed:
            changed = False
            for a, b in links:
                if a and b and (a in fixed) != (b in fixed):
                    fixed.update((a, b))
                    changed = True
        return frozenset(fixed)

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
