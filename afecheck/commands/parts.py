"""``afecheck parts [--parts LIB] [--json]``: list the op-amp part models loaded and what each leaves out."""

from __future__ import annotations

import argparse
import json
from typing import TextIO

HELP = "list the op-amp part models that are loaded"


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("--parts", action="append", default=[], metavar="LIB", help="extra part library file (repeatable)")
    p.add_argument("--design", metavar="FILE", help="also load this design's own parts and part_libraries")
    p.add_argument("--json", action="store_true", help="machine-readable output")


def run(args: argparse.Namespace, stdout: TextIO, stderr: TextIO) -> int:
    from afecheck.model.units import format_si
    from afecheck.parts.library import load_parts, missing_parameters

    if args.design:
        from afecheck.model.load import load_design

        loaded = load_design(args.design, libraries=tuple(args.parts))
        models, origins = dict(loaded.parts), dict(loaded.part_origins)
    else:
        part_set = load_parts(args.parts)
        models, origins = part_set.models, part_set.origins
    rows = []
    for name in sorted(models):
        m = models[name]
        rows.append({
            "name": name,
            "archetype": m.archetype,
            "gbw_hz": m.gbw,
            "min_stable_gain": m.min_stable_gain,
            "input_stage": m.input_stage,
            "origin": origins.get(name, ""),
            "missing": missing_parameters(m),
        })
    if args.json:
        stdout.write(json.dumps({"schema_version": 1, "parts": rows}, indent=2, sort_keys=True,
                                ensure_ascii=False) + "\n")
        return 0
    header = ("name", "archetype", "GBW", "min gain", "input stage", "origin")
    table = [header] + [
        (r["name"], r["archetype"] or "-", format_si(r["gbw_hz"], "Hz", 3),
         f"{r['min_stable_gain']:g}" if r["min_stable_gain"] is not None else "-", r["input_stage"], r["origin"])
        for r in rows
    ]
    widths = [max(len(row[i]) for row in table) for i in range(len(header))]
    for row in table:
        stdout.write("  ".join(cell.ljust(w) for cell, w in zip(row, widths, strict=True)).rstrip() + "\n")
    incomplete = [r for r in rows if r["missing"]]
    if incomplete:
        stdout.write("\nmissing parameters (the analysis assumes a generic default or reports the check as "
                     "not evaluated):\n")
        for r in incomplete:
            stdout.write(f"  {r['name']}: {', '.join(r['missing'])}\n")
    return 0
