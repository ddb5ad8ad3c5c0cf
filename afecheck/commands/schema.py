"""``afecheck schema [--intent | --parts | --map]``: print the JSON Schema of the design format (or intent / part
library / netlist map file)."""

from __future__ import annotations

import argparse
import json
from typing import Any, TextIO

HELP = "print the JSON Schema of the design exchange format"
DIALECT = "https://json-schema.org/draft/2020-12/schema"


def add_arguments(p: argparse.ArgumentParser) -> None:
    which = p.add_mutually_exclusive_group()
    which.add_argument("--intent", action="store_true", help="the schema of an intent file instead")
    which.add_argument("--parts", action="store_true", help="the schema of a part library file instead")
    which.add_argument("--map", action="store_true", help="the schema of a map file for SPICE netlist input instead")


def schema_for(kind: str) -> dict[str, Any]:
    """The JSON Schema (draft 2020-12) of ``design``, ``intent``, ``parts`` or ``map`` files, deterministic."""
    from afecheck.model.schema import FORMAT_VERSION, Design, Intent, NetlistMap
    from afecheck.parts.library import PartLibraryFile

    model, title = {
        "design": (Design, f"afecheck design exchange format, version {FORMAT_VERSION}"),
        "intent": (Intent, f"afecheck design-intent file, version {FORMAT_VERSION}"),
        "parts": (PartLibraryFile, f"afecheck part library file, version {FORMAT_VERSION}"),
        "map": (NetlistMap, f"afecheck map file for SPICE netlist input, version {FORMAT_VERSION}"),
    }[kind]
    schema = model.model_json_schema(by_alias=True)
    return {"$schema": DIALECT, **schema, "title": title}


def run(args: argparse.Namespace, stdout: TextIO, stderr: TextIO) -> int:
    kind = "intent" if args.intent else "parts" if args.parts else "map" if args.map else "design"
    stdout.write(json.dumps(schema_for(kind), indent=2, sort_keys=True, ensure_ascii=False) + "\n")
    return 0
