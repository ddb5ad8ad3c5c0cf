"""Source-side numbers the loading and distortion rules share: series resistance up to the op-amp pin."""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from afecheck.analysis.results import StageInput, StageResult
    from afecheck.model.loaded import LoadedDesign


def series_resistance(loaded: LoadedDesign, refs: tuple[str, ...]) -> float:
    """Sum of the resistors among ``refs`` (the parts between a source and the op-amp pin)."""
    comps = loaded.design.components
    return float(sum(comps[r].value for r in refs if r in comps and comps[r].kind == "resistor"))  # type: ignore[union-attr]


def plus_source_resistance(loaded: LoadedDesign, inp: StageInput) -> float:
    """Worst-case (largest) resistance from the driving source to the in+ pin: Thevenin Rs plus series parts."""
    return float(inp.source.r_max) + series_resistance(loaded, inp.via)


def ac_coupled(loaded: LoadedDesign, inp: StageInput) -> bool:
    """True when a capacitor sits between the source and the pin, so no DC (bias) current flows from the source."""
    comps = loaded.design.components
    return any(r in comps and comps[r].kind == "capacitor" for r in inp.via)


def signal_inputs(stage: StageResult, pin: str) -> list[StageInput]:
    """The stage's inputs arriving at ``pin`` (``in+`` or ``in-``)."""
    return [i for i in stage.inputs if i.pin == pin]
