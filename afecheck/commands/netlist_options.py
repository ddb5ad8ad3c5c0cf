"""The options every command that reads a design shares for SPICE netlist input: ``--input-format``, ``--map``."""

from __future__ import annotations

import argparse
from typing import Any


def add_netlist_arguments(p: argparse.ArgumentParser) -> None:
    """``--input-format`` and ``--map``."""
    p.add_argument("--input-format", choices=["auto", "yaml", "json", "spice"], default="auto",
                   help="how to read the design files (auto: .cir .net .sp .spice .ckt are SPICE netlists, "
                        "the rest YAML or JSON)")
    p.add_argument("--map", dest="netlist_map", metavar="FILE",
                   help="map file for SPICE netlist input: subcircuit -> op-amp part model and pin order "
                        "(see docs/SPICE-IMPORT.md)")


def netlist_options(args: argparse.Namespace) -> dict[str, Any]:
    """Keyword arguments for ``load_design`` from the shared netlist options."""
    fmt = getattr(args, "input_format", "auto")
    return {"input_format": None if fmt in (None, "auto") else ("spice" if fmt == "spice" else "yaml"),
            "netlist_map": getattr(args, "netlist_map", None)}
