"""``afecheck explain ID-or-slug``: print a rule's documentation page from the shipped catalogue."""

from __future__ import annotations

import argparse
from typing import TextIO

HELP = "print the documentation of one rule"


def add_arguments(p: argparse.ArgumentParser) -> None:
    """Command-line options of this command."""
    p.add_argument("rule", metavar="RULE", help="rule id (AFE201) or slug (phase-margin-below-limit)")


def rule_page(folder: str) -> str | None:
    """The text of ``rules/<folder>/rule.md`` read through the installed package, or None."""
    from importlib import resources

    page = resources.files("afecheck._catalogue").joinpath(folder, "rule.md")
    return page.read_text(encoding="utf-8") if page.is_file() else None


def run(args: argparse.Namespace, stdout: TextIO, stderr: TextIO) -> int:
    """Print to ``stdout``; unknown input raises InputError (exit 2 in the CLI)."""
    from afecheck.engine.registry import default_registry
    from afecheck.errors import InputError, Problem

    key = args.rule.strip()
    meta = next((m for m in default_registry().metas() if m.id.upper() == key.upper() or m.slug == key.lower()), None)
    if meta is None:
        raise InputError([Problem("<command line>", None, None, "RULE",
                                  f"unknown rule {key!r}; `afecheck rules` lists them")])
    text = rule_page(meta.folder)
    if text is None:
        raise InputError([Problem("<catalogue>", None, None, meta.folder, "this rule has no documentation page")])
    stdout.write(text if text.endswith("\n") else text + "\n")
    return 0
