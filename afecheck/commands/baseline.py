"""``afecheck baseline FILE... --output B``: record today's findings so a later gate fails only on new ones."""

from __future__ import annotations

import argparse
from typing import TextIO

from afecheck.commands.check import add_policy_arguments, input_paths, review_options

HELP = "record the current findings of designs as a baseline file"


def add_arguments(p: argparse.ArgumentParser) -> None:
    add_policy_arguments(p)
    p.add_argument("-o", "--output", required=True, metavar="FILE", help="baseline file to write (JSON, atomically)")


def run(args: argparse.Namespace, stdout: TextIO, stderr: TextIO) -> int:
    from afecheck.api import review_files
    from afecheck.io import check_outputs, recording_reads, write_outputs
    from afecheck.policy.baseline import render_baseline
    from afecheck.policy.gate import EXIT_CLEAN

    with recording_reads() as reads:
        check_outputs([args.output], input_paths(args))  # the inputs named on the command line, before the long part
        report = review_files(args.files, **review_options(args))
    recorded = [e.finding for e in report.entries() if e.status == "open"]
    write_outputs([(args.output, render_baseline(recorded, [(d.name, d.file) for d in report.designs]))], reads)
    waived = sum(1 for e in report.entries() if e.status == "waived")
    # a run note, on standard error: the output may itself be standard output (``-o /dev/stdout``)
    print(f"afecheck: recorded {len(recorded)} findings from {len(report.designs)} designs in {args.output}"
          + (f" ({waived} waived findings left out)" if waived else ""), file=stderr)
    return EXIT_CLEAN
