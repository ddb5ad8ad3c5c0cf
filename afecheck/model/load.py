"""Load a design file (YAML or JSON) into a LoadedDesign. Placeholder: replaced by the line-tracking loader."""

from __future__ import annotations

from pathlib import Path

import yaml
from pydantic import ValidationError

from afecheck.errors import InputError, Problem
from afecheck.model.loaded import LoadedDesign
from afecheck.model.schema import Design
from afecheck.parts.library import builtin_library


def load_design(path: str | Path, intent: str | Path | None = None, libraries: tuple[str | Path, ...] = ()) -> LoadedDesign:
    """Read, validate and merge a design file and its optional intent file."""
    path = Path(path)
    try:
        data = yaml.safe_load(path.read_text(encoding="utf-8"))
        design = Design.model_validate(data)
    except (OSError, yaml.YAMLError, ValidationError) as exc:
        raise InputError([Problem(str(path), None, None, "", str(exc))]) from None
    parts = builtin_library()
    parts.update(design.parts)
    return LoadedDesign(design=design, file=str(path), parts=parts)
