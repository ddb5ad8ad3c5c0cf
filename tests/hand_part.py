"""One generic op-amp archetype written out field by field, for designs checked against hand formulas: one pole at
GBW/A0 (A0 = 1e5), the second pole out of reach (1 THz), no output resistance, 1 PΩ inputs, no input capacitance
and no offsets unless a test asks for them, so the hand formula sees the whole model."""

from __future__ import annotations

from pathlib import Path

from afecheck.analysis import analyse
from afecheck.analysis.results import StageResult
from afecheck.model.load import load_design


def part(name: str, *, gbw: str = "1 MHz", ro: str = "0", rcm: str = "1e15", vos: str = "0", ib: str = "0",
         ios: str = "0") -> str:
    """The part as one entry of a design's ``parts:`` mapping (two-space indent, one line)."""
    return (f"  {name}: {{gbw: {gbw}, open_loop_gain: 1e5, second_pole: 1e12, output_resistance: {ro}, "
            f"input_resistance_diff: 1e15, input_resistance_cm: {rcm}, input_capacitance_diff: 0, "
            f"input_capacitance_cm: 0, offset_voltage: {vos}, bias_current: {ib}, offset_current: {ios}}}")


def template_part(name: str, **fields: str) -> str:
    """The same entry for a design written as a ``str.format`` template (its braces doubled)."""
    return part(name, **fields).replace("{", "{{").replace("}", "}}")


def stages_of(tmp_path: Path, text: str) -> dict[str, StageResult]:
    """Each op-amp's stage result for the design ``text``, written to a file under ``tmp_path`` and analysed."""
    path = tmp_path / "d.yaml"
    path.write_text(text, encoding="utf-8")
    return {s.opamp: s for s in analyse(load_design(path)).stages}
