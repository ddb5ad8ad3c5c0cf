"""``afecheck rules``: list every rule with its id, slug, default severity and one line."""

from __future__ import annotations

import argparse
from typing import TextIO

HELP = "list every rule with id, slug, severity and one line"


def add_arguments(p: argparse.ArgumentParser) -> None:
    """Command-line options of this command."""
    p.add_argument("--family", help="only rules of this family (loading, stability, headroom, distortion, ...)")


def run(args: argparse.Namespace, stdout: TextIO, stderr: TextIO) -> int:
    """Print to ``stdout``; unknown input raises InputError (exit 2 in the CLI)."""
    from afecheck.engine.registry import default_registry
    from afecheck.errors import InputError, Problem

    metas = default_registry().metas()
    if args.family:
        families = sorted({m.family for m in metas})
        metas = tuple(m for m in metas if m.family == args.family)
        if not metas:
            raise InputError([Problem("<command line>", None, None, "--family",
                                      f"unknown family {args.family!r}; expected one of {', '.join(families)}")])
    id_w = max(len(m.id) for m in metas)
    slug_w = max(len(m.slug) for m in metas)
    for m in metas:
        print(f"{m.id:<{id_w}}  {m.slug:<{slug_w}}  {m.severity.label:<7}  {m.summary}", file=stdout)
    return 0
