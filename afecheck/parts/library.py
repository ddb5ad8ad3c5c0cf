"""The part library: the shipped generic archetypes plus any library files the user adds."""

from __future__ import annotations

from importlib import resources
from pathlib import Path

import yaml

from afecheck.parts.model import OpAmpModel


def builtin_library() -> dict[str, OpAmpModel]:
    """Load every shipped archetype (``afecheck/parts/library/*.yaml``)."""
    parts: dict[str, OpAmpModel] = {}
    for entry in sorted(resources.files("afecheck.parts").joinpath("library").iterdir(), key=lambda p: p.name):
        if entry.name.endswith((".yaml", ".yml")):
            data = yaml.safe_load(entry.read_text(encoding="utf-8")) or {}
            for name, spec in data.get("parts", {}).items():
                parts[name] = OpAmpModel.model_validate(spec)
    return parts


def load_library_file(path: Path) -> dict[str, OpAmpModel]:
    """Load a user library file with a top-level ``parts:`` mapping."""
    data = yaml.safe_load(path.read_text(encoding="utf-8")) or {}
    return {name: OpAmpModel.model_validate(spec) for name, spec in data.get("parts", {}).items()}
