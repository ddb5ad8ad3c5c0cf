"""Command line: argv -> command module -> exit status (see EXIT_STATUSES).

Each command lives in ``afecheck/commands/<name>.py`` with ``HELP``, ``add_arguments(parser)`` and
``run(args, stdout, stderr) -> int``; modules are imported only when their command runs, so
``--help`` and ``--version`` start fast.
"""

from __future__ import annotations

import argparse
import gc
import importlib
import os
import sys
from typing import TextIO

from afecheck import __version__

COMMANDS: dict[str, str] = {
    "check": "review design files and report findings",
    "stages": "print every op-amp stage with the numbers the rules stand on",
    "spice": "write a design (or one stage) as a SPICE netlist",
    "convert": "write a design (e.g. a SPICE netlist with its map and intent) as an afecheck YAML design file",
    "schema": "print the JSON Schema of the design exchange format",
    "parts": "list the op-amp part models that are loaded",
    "rules": "list every rule, or print one rule's page: afecheck rules NAME",
    "baseline": "record the current findings of designs as a baseline file",
}

EXIT_CLEAN, EXIT_FINDINGS, EXIT_INPUT, EXIT_INTERNAL, EXIT_INTERRUPTED, EXIT_BROKEN_PIPE = 0, 1, 2, 3, 130, 141
EXIT_STATUSES = (
    (EXIT_CLEAN, "no finding at or above the fail level"),
    (EXIT_FINDINGS, "findings at or above the fail level (check)"),
    (EXIT_INPUT, "bad input or usage: every problem listed as file:line:column, nothing written"),
    (EXIT_INTERNAL, "internal error in afecheck itself (a bug: please report it; AFECHECK_DEBUG=1 shows the "
                    "traceback)"),
    (EXIT_INTERRUPTED, "interrupted (Ctrl-C)"),
    (EXIT_BROKEN_PIPE, "the program reading standard output stopped reading (as with `| head`)"),
)
DEBUG_VARIABLE = "AFECHECK_DEBUG"
PLUGINS_VARIABLE = "PYDANTIC_DISABLE_PLUGINS"
START_UP_THRESHOLD = 20_000
"""New objects between two collections of the youngest generation while afecheck runs (Python's default is
700): start-up imports build long-lived modules, classes and validators with no garbage to find (docs/SCALE.md)."""


class _Parser(argparse.ArgumentParser):
    """argparse that exits 2 with a one-line usage error (its default, kept explicit)."""

    def error(self, message: str) -> None:  # type: ignore[override]
        self.print_usage(sys.stderr)
        self.exit(EXIT_INPUT, f"afecheck: error: {message}\n")


def build_parser(argv: list[str]) -> tuple[argparse.ArgumentParser, object | None]:
    """Parser with the chosen command only (with every command when none or an unknown one is named, so that
    help and the "invalid choice" error list them all); only the chosen command's module is imported."""
    epilog = "exit status:\n" + "\n".join(f"  {code:<4}{meaning}" for code, meaning in EXIT_STATUSES)
    parser = _Parser(prog="afecheck", description="Pre-layout review of analog front-end schematics.", epilog=epilog,
                     formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--version", action="version", version=f"afecheck {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    chosen = next((a for a in argv if not a.startswith("-")), None)
    module = None
    for name, help_text in COMMANDS.items():
        if chosen in COMMANDS and name != chosen:
            continue  # each sub-parser costs start-up time (argparse looks up translations for its texts)
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
    # afecheck uses no pydantic plugin: without this, building the first model reads the entry points of every
    # installed distribution to look for one (start-up; a value the user set is kept)
    os.environ.setdefault(PLUGINS_VARIABLE, "__all__")
    threshold = gc.get_threshold()
    gc.set_threshold(max(threshold[0], START_UP_THRESHOLD), *threshold[1:])
    try:
        return _guarded(argv, stdout, stderr)
    finally:
        gc.set_threshold(*threshold)


def _guarded(argv: list[str], stdout: TextIO, stderr: TextIO) -> int:
    """The command's exit status; every failure turned into its status and a message (see EXIT_STATUSES)."""
    from afecheck.errors import InputError
    from afecheck.io import OutputError

    try:
        return _dispatch(argv, stdout, stderr)
    except InputError as exc:
        for problem in exc.problems:
            print(f"error: {problem}", file=stderr)
        return EXIT_INPUT
    except OutputError as exc:
        print(f"afecheck: error: {exc}", file=stderr)
        return EXIT_INPUT
    except KeyboardInterrupt:
        print("afecheck: interrupted", file=stderr)
        return EXIT_INTERRUPTED
    except BrokenPipeError:
        _quiet_broken_stdout(stdout)
        return EXIT_BROKEN_PIPE
    except Exception as exc:  # noqa: BLE001 - the one place that turns a bug into a status a CI gate can tell apart
        if os.environ.get(DEBUG_VARIABLE, "") not in ("", "0"):
            raise
        text = " ".join(str(exc).split()) or "(no message)"
        print(f"afecheck: internal error: {type(exc).__name__}: {text[:300]} (a bug in afecheck, please report it; "
              f"exit {EXIT_INTERNAL}; {DEBUG_VARIABLE}=1 shows the traceback)", file=stderr)
        return EXIT_INTERNAL


def _dispatch(argv: list[str], stdout: TextIO, stderr: TextIO) -> int:
    parser, module = build_parser(argv)
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:
        return int(exc.code or 0)
    if module is None:
        parser.print_help(stdout)
        return EXIT_INPUT if args.command is None and argv else EXIT_CLEAN
    return int(module.run(args, stdout, stderr))


def _quiet_broken_stdout(stdout: TextIO) -> None:
    """The reader of standard output left (``afecheck rules | head``): send what is still buffered nowhere."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, stdout.fileno())
    except (OSError, ValueError, AttributeError):
        return
