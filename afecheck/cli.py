"""Command line: argv -> command module -> exit code (0 clean, 1 findings at the fail level, 2 bad input).

Each command lives in ``afecheck/commands/<name>.py`` with ``HELP``, ``add_arguments(parser)`` and
``run(args, stdout, stderr) -> int``; modules are imported only when their command runs, so
``--help`` and ``--version`` start fast.
"""

from __future__ import annotations

import argparse
import importlib
import sys
from typing import TextIO

from afecheck import __version__

COMMANDS: dict[str, str] = {
    "check": "review design files and report findings",
    "stages": "print every op-amp stage with the numbers the rules stand on",
    "spice": "write a design (or one stage) as a SPICE netlist",
    "schema": "print the JSON Schema of the design exchange format",
    "parts": "list the op-amp part models that are loaded",
    "rules": "list every rule, or print one rule's page: afecheck rules NAME",
    "baseline": "record the current findings of designs as a baseline file",
}

EXIT_CLEAN, EXIT_FINDINGS, EXIT_INPUT = 0, 1, 2


class _Parser(argparse.ArgumentParser):
    """argparse that exits 2 with a one-line usage error (its default, kept explicit)."""

    def error(self, message: str) -> None:  # type: ignore[override]
        self.print_usage(sys.stderr)
        self.exit(EXIT_INPUT, f"afecheck: error: {message}\n")


def build_parser(argv: list[str]) -> tuple[argparse.ArgumentParser, object | None]:
    """Parser with every command; only the chosen command's module is imported."""
    parser = _Parser(prog="afecheck", description="Pre-layout review of analog front-end schematics.")
    parser.add_argument("--version", action="version", version=f"afecheck {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    chosen = next((a for a in argv if not a.startswith("-")), None)
    module = None
    for name, help_text in COMMANDS.items():
        p = sub.add_parser(name, help=help_text, description=help_text)
        if name == chosen:
            module = importlib.import_module(f"afecheck.commands.{name}")
            module.add_arguments(p)
    return parser, module


def main(argv: list[str] | None = None, stdout: TextIO | None = None, stderr: TextIO | None = None) -> int:
    """Run afecheck with ``argv``; return the exit status."""
    argv = list(sys.argv[1:] if argv is None else argv)
    stdout = stdout or sys.stdout
    stderr = stderr or sys.stderr
    parser, module = build_parser(argv)
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:
        return int(exc.code or 0)
    if module is None:
        parser.print_help(stdout)
        return EXIT_INPUT if args.command is None and argv else EXIT_CLEAN
    from afecheck.errors import InputError

    try:
        return int(module.run(args, stdout, stderr))
    except InputError as exc:
        for problem in exc.problems:
            print(f"error: {problem}", file=stderr)
        return EXIT_INPUT
    except KeyboardInterrupt:
        print("afecheck: interrupted", file=stderr)
        return 130
