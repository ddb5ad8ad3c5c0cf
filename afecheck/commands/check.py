"""``afecheck check FILE...``: review designs and print findings."""

from __future__ import annotations

import argparse
from typing import TextIO

HELP = "review design files and report findings"


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("files", nargs="+", metavar="FILE", help="design files (YAML or JSON)")
    p.add_argument("--intent", help="design-intent file (signals, loads, budgets keyed by net)")
    p.add_argument("--parts", action="append", default=[], metavar="LIB", help="extra part library file")
    p.add_argument("--fail-on", default="error", choices=["error", "warning", "info", "never"])


def run(args: argparse.Namespace, stdout: TextIO, stderr: TextIO) -> int:
    from afecheck.api import check_file
    from afecheck.engine.finding import Severity

    worst = 0
    for path in args.files:
        report = check_file(path, intent=args.intent, libraries=tuple(args.parts))
        for f in report.findings:
            print(f"{f.location.file}:{f.location.line or 0}: {f.severity.label}: {f.rule}/{f.slug}: {f.message}",
                  file=stdout)
            worst = max(worst, int(f.severity))
    if args.fail_on == "never":
        return 0
    return 1 if worst and worst >= int(Severity.parse(args.fail_on)) else 0
