"""Which reader a design file goes to, told by its name alone (so the check path need not import the SPICE reader)."""

from __future__ import annotations

from pathlib import Path

SPICE_SUFFIXES = (".cir", ".net", ".sp", ".spice", ".ckt")


def is_netlist(path: str | Path, input_format: str | None = None) -> bool:
    """True when ``path`` is read as a SPICE netlist: by ``input_format``, else by its name's ending."""
    if input_format is not None:
        return input_format == "spice"
    return Path(path).suffix.lower() in SPICE_SUFFIXES
