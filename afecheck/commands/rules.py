"""``afecheck rules [NAME]``: the rule catalogue, or one rule's page when a rule is named."""

from __future__ import annotations

import argparse
from typing import TextIO

HELP = "list every rule, or print one rule's page: afecheck rules NAME"


def add_arguments(p: argparse.ArgumentParser) -> None:
    """Command-line options of this command."""
    p.add_argument("rule", metavar="NAME", nargs="?",
                   help="a rule's id or name (e.g. stability.phase-margin or phase-margin-below-limit): print its page")
    p.add_argument("--family", help="only rules of this family (loading, stability, headroom, distortion, ...)")


def rule_page(folder: str) -> str | None:
    """The text of ``rules/<folder>/rule.md`` read through the installed package, or None."""
    from afecheck.catalogue_files import catalogue_root

    page = catalogue_root().joinpath(folder, "rule.md")
    return page.read_text(encoding="utf-8") if page.is_file() else None


def _page(key: str, stdout: TextIO) -> int:
    from afecheck.engine.registry import default_registry
    from afecheck.errors import InputError, Problem

    meta = default_registry().find_meta(key)
    if meta is None:
        raise InputError([Problem("<command line>", None, None, "NAME",
                                  f"unknown rule {key.strip()!r}; `afecheck rules` lists them")])
    text = rule_page(meta.folder)
    if text is None:
        raise InputError([Problem("<catalogue>", None, None, meta.folder, "this rule has no documentation page")])
    stdout.write(text if text.endswith("\n") else text + "\n")
    return 0


def run(args: argparse.Namespace, stdout: TextIO, stderr: TextIO) -> int:
    """Print to ``stdout``; unknown input raises InputError (exit 2 in the CLI)."""
    from afecheck.engine.registry import default_registry
    from afecheck.errors import InputError, Problem

    if args.rule:
        return _page(args.rule, stdout)
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
