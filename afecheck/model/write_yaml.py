"""Write a loaded design as an afecheck YAML design file: stable order, one entry a line, origins in comments.

Used by ``afecheck convert`` so a team can move a SPICE netlist (with its map and intent) to the native
format. Entries keep the order they were read in; each one's comment names the file and line it came
from. Numbers are written in SI as Python's shortest exact form, so the file reads back to the same values.
"""

from __future__ import annotations

import json
import math
import re
from pathlib import Path
from typing import Any

from afecheck.model.loaded import LoadedDesign

_PLAIN = re.compile(r"^[A-Za-z_][A-Za-z0-9_.\-+/]*$")
_YAML_WORDS = {"true", "false", "yes", "no", "on", "off", "null", "y", "n", "~"}


def _scalar(value: Any) -> str:
    if value is None:
        return "null"
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        return repr(value) if math.isfinite(value) else json.dumps(repr(value))
    text = str(value)
    if _PLAIN.match(text) and text.lower() not in _YAML_WORDS:
        return text
    return json.dumps(text, ensure_ascii=False)


def flow(value: Any) -> str:
    """``value`` in YAML flow style (mappings in braces, lists in brackets, strings quoted when they must be)."""
    if isinstance(value, dict):
        return "{" + ", ".join(f"{_scalar(k)}: {flow(v)}" for k, v in value.items()) + "}"
    if isinstance(value, (list, tuple)):
        return "[" + ", ".join(flow(v) for v in value) + "]"
    return _scalar(value)


def _origin(loaded: LoadedDesign, *path: str) -> str:
    file, line, _ = loaded.position(*path)
    try:
        shown = Path(file).name if Path(file).parent == Path(loaded.file).parent else file
    except (TypeError, ValueError):
        shown = file
    return f"{shown}:{line}" if line is not None else shown


def design_yaml(loaded: LoadedDesign) -> str:
    """The design (intent merged) as YAML text; part models from library files are written inline."""
    d = loaded.design
    dump = d.model_dump(mode="json", by_alias=True, exclude_unset=True)  # what was written, defaults included
    lines = [f"# afecheck design converted by `afecheck convert` from {Path(loaded.file).name}",
             "# each entry's comment names the file and line it was read from", "afecheck: 1",
             f"name: {_scalar(d.name)}", f"ground: {_scalar(d.ground)}"]
    for key in ("description", "hazards", "operating_temperature"):
        if key in dump:
            lines.append(f"{key}: {flow(dump[key])}")
    used = [c.part for c in d.components.values() if c.kind == "opamp"]
    own = [name for name in dict.fromkeys(used) if not loaded.part_origins.get(name, "").startswith("built-in")]
    if own:
        lines.append("parts:")
        for name in own:
            model = loaded.parts[name].model_dump(mode="json", exclude_none=True)
            lines.append(f"  {_scalar(name)}: {flow(model)}  # {loaded.part_origins.get(name, '')}")
    for section in ("rails", "components", "signals", "loads", "budgets"):
        entries = dump.get(section) or {}
        if not entries:
            continue
        lines.append(f"{section}:")
        for name, entry in entries.items():
            if section == "components":
                pins = entry.pop("pins")
                entry = {"kind": entry.pop("kind"), **entry, "pins": pins}
            lines.append(f"  {_scalar(name)}: {flow(entry)}  # {_origin(loaded, section, name)}")
    return "\n".join(lines) + "\n"
