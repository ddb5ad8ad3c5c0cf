"""``afecheck convert FILE``: write a design (a SPICE netlist with its map and intent) as an afecheck YAML design."""

from __future__ import annotations

import argparse
from typing import TextIO

from afecheck.commands.netlist_options import add_netlist_arguments, netlist_options

HELP = "write a design (e.g. a SPICE netlist with its map and intent) as an afecheck YAML design file"


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("file", metavar="FILE", help="design file: a SPICE netlist, or YAML/JSON")
    p.add_argument("--output", "-o", metavar="PATH", help="write the YAML here (atomically) instead of standard output")
    p.add_argument("--intent", help="design-intent file (signals, loads, budgets keyed by net); merged into the output")
    p.add_argument("--parts", action="append", default=[], metavar="LIB", help="extra part library file")
    add_netlist_arguments(p)


def run(args: argparse.Namespace, stdout: TextIO, stderr: TextIO) -> int:
    from afecheck.io import check_outputs, recording_reads, write_outputs
    from afecheck.model.load import load_design
    from afecheck.model.write_yaml import design_yaml

    options = netlist_options(args)
    with recording_reads() as reads:  # every file read, includes too: none of them may be the output
        if args.output:
            check_outputs([args.output], [args.file, args.intent, options["netlist_map"], *args.parts])
        loaded = load_design(args.file, intent=args.intent, libraries=tuple(args.parts), **options)
    for note in loaded.notes:
        print(f"note: {note}", file=stderr)
    text = design_yaml(loaded)
    if not args.output:
        stdout.write(text)
        return 0
    write_outputs([(args.output, text)], reads)
    print(f"wrote {args.output}", file=stderr)
    return 0
