"""``afecheck check FILE...``: review designs, write reports in one or more formats, and gate on the fail level.

Formats pair with outputs in order: ``--format sarif --output a.sarif --format text`` writes SARIF to a.sarif and
text to the terminal. A ``--format`` without an ``--output`` goes to standard output (at most one may).
"""

from __future__ import annotations

import argparse
import contextlib
import datetime as dt
import gc
import os
import re
from collections.abc import Iterator
from pathlib import Path
from typing import Any, TextIO

from afecheck.commands.netlist_options import add_netlist_arguments, netlist_options
from afecheck.commands.progress import progress_line
from afecheck.report import FORMATS

HELP = "review design files and report findings"


def _date(text: str) -> dt.date:
    try:
        return dt.date.fromisoformat(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"read {text!r}; expected a date such as 2027-06-30") from None


def add_policy_arguments(p: argparse.ArgumentParser) -> None:
    """FILE..., --intent, --parts, --config/--no-config, --ruleset, --waivers, --today."""
    p.add_argument("files", nargs="+", metavar="FILE", help="design files (YAML, JSON or SPICE netlist)")
    p.add_argument("--intent", help="design-intent file (signals, loads, budgets keyed by net)")
    p.add_argument("--parts", action="append", default=[], metavar="LIB", help="extra part library file")
    cfg = p.add_mutually_exclusive_group()
    cfg.add_argument("--config", metavar="FILE",
                     help="project config (default: the nearest .afecheck.yaml beside the design or above it)")
    cfg.add_argument("--no-config", action="store_true", help="ignore any .afecheck.yaml; use the rule set alone")
    p.add_argument("--ruleset", metavar="NAME|FILE", help="rule set to use instead of the config's (default, precision,"
                   " or a rule-set file)")
    p.add_argument("--waivers", action="append", default=[], metavar="FILE",
                   help="waiver file (repeatable; adds to the config's waivers)")
    p.add_argument("--today", type=_date, metavar="DATE",
                   help="date used to judge waiver expiry (default: today, UTC); makes runs reproducible")
    add_netlist_arguments(p)


def review_options(args: argparse.Namespace) -> dict[str, Any]:
    """Keyword arguments for :func:`afecheck.api.review_files` from the shared options."""
    return {
        "intent": args.intent,
        "libraries": tuple(args.parts),
        "config": args.config,
        "discover": not args.no_config,
        "ruleset": args.ruleset,
        "waiver_files": tuple(args.waivers),
        "today": args.today or dt.datetime.now(dt.UTC).date(),
        **netlist_options(args),
    }


def input_paths(args: argparse.Namespace) -> list[Path]:
    """Every file the command reads, so that no output ever overwrites one."""
    from afecheck.policy.config import discover_config

    named = [*args.files, args.intent, *args.parts, args.config, *args.waivers, getattr(args, "baseline", None),
             getattr(args, "netlist_map", None)]
    if not args.no_config and args.config is None:
        named += [discover_config(f) for f in args.files]
    return [Path(n) for n in named if n]


class _FormatAction(argparse.Action):
    """``--format FMT`` starts a new report; ``--output PATH`` sends the latest one to a file."""

    def __call__(self, parser: argparse.ArgumentParser, namespace: argparse.Namespace, values: Any,
                 option_string: str | None = None) -> None:
        reports = list(getattr(namespace, "reports", None) or [])
        if self.dest == "format":
            reports.append([values, None])
        else:
            if not reports:
                reports.append(["text", None])
            if reports[-1][1] is not None:
                parser.error(f"{option_string} {values}: each --output follows its own --format")
            reports[-1][1] = values
        namespace.reports = reports


def add_arguments(p: argparse.ArgumentParser) -> None:
    add_policy_arguments(p)
    p.add_argument("--fail-on", choices=["error", "warning", "info", "never"],
                   help="lowest severity that fails the run with exit 1 (default: config, rule set, else error)")
    p.add_argument("-f", "--format", dest="format", action=_FormatAction, choices=FORMATS, metavar="FMT",
                   help="report format (repeatable): " + ", ".join(FORMATS) + "; default text")
    p.add_argument("-o", "--output", dest="output", action=_FormatAction, metavar="PATH",
                   help="write the preceding --format to PATH (atomically) instead of standard output")
    p.add_argument("--baseline", metavar="FILE",
                   help="baseline from `afecheck baseline`: only findings not in it fail the gate")
    p.add_argument("--baseline-any-design", action="store_true",
                   help="use the --baseline even though it was recorded for other designs (a design renamed or moved)")
    p.add_argument("--only-designs", action="store_true",
                   help="skip files that are not afecheck designs (no top-level 'afecheck' key), e.g. in a pre-commit"
                   " hook that passes every YAML file")
    p.add_argument("--color", choices=["auto", "always", "never"], default="auto",
                   help="colour the text report (auto: only on a terminal; never when NO_COLOR is set)")
    p.add_argument("-j", "--jobs", type=_jobs, default=None, metavar="N",
                   help="check designs in N processes (default: one per core; 1: all in this process); the report "
                   "is the same byte for byte")
    p.add_argument("-q", "--quiet", action="store_true",
                   help="no progress line (it is shown only on a terminal, on standard error, for runs over a second)")
    p.set_defaults(reports=None)


def _jobs(text: str) -> int:
    try:
        n = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"read {text!r}; expected a whole number of processes, 1 or more") from None
    if n < 1:
        raise argparse.ArgumentTypeError(f"read {n}; expected 1 or more processes")
    return n


def use_color(choice: str, stream: TextIO) -> bool:
    """Colour only when asked or on a TTY, and never when NO_COLOR is set to anything non-empty."""
    if os.environ.get("NO_COLOR"):
        return False
    if choice != "auto":
        return choice == "always"
    isatty = getattr(stream, "isatty", None)
    return bool(isatty and isatty())


def _plan(args: argparse.Namespace, stderr: TextIO) -> list[list[str | None]] | None:
    reports = args.reports or [["text", None]]
    if sum(1 for r in reports if r[1] is None) > 1:
        print("afecheck: error: only one --format may go to standard output; give the others an --output",
              file=stderr)
        return None
    return reports


_DESIGN_KEY = re.compile(r'^(afecheck|\s*"afecheck")\s*:', re.M)


def is_design_file(path: str | Path) -> bool:
    """True when ``path`` has a top-level ``afecheck:`` key (YAML or JSON) or a SPICE netlist's name; unreadable
    files count as designs so that the loader reports them."""
    from afecheck.model.spice_reader import is_netlist

    if is_netlist(path):
        return True
    try:
        text = Path(path).read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError):
        return True
    return bool(_DESIGN_KEY.search(text)) or text.lstrip().startswith('{"afecheck"')


@contextlib.contextmanager
def _collector_tuned() -> Iterator[None]:
    """A check builds many objects and few reference cycles: what start-up made is frozen out of the cyclic
    collector's walks, and the youngest generation is collected every 20 000 new objects instead of every 700
    (measured on a 1000-channel design: 0.43 s of collector CPU down to 0.15 s, the same peak memory); both are
    put back afterwards for a caller that runs the command in its own process."""
    before = gc.get_threshold()
    gc.freeze()
    gc.set_threshold(20_000, 20, 10)
    try:
        yield
    finally:
        gc.set_threshold(*before)
        gc.unfreeze()


def run(args: argparse.Namespace, stdout: TextIO, stderr: TextIO) -> int:
    from afecheck.api import review_files
    from afecheck.io import check_outputs, recording_reads, write_outputs
    from afecheck.policy.gate import EXIT_INPUT, exit_code
    from afecheck.report import render

    plan = _plan(args, stderr)
    if plan is None:
        return EXIT_INPUT
    formats = {str(fmt) for fmt, _ in plan}
    if "html" in formats:
        from afecheck.report.html import missing_dependencies

        missing = missing_dependencies()
        if missing:
            print(f"afecheck: error: --format html needs {' and '.join(missing)}, which are not installed; "
                  "install them with: pip install 'afecheck[html]'", file=stderr)
            return EXIT_INPUT
    detail = "curves" if "html" in formats else "stages" if "markdown" in formats else "none"
    files = [str(path) for _fmt, path in plan if path is not None]
    with recording_reads() as reads:
        check_outputs(files, input_paths(args))  # the inputs named on the command line, before the long part
        if args.only_designs:
            args.files = [f for f in args.files if is_design_file(f)]
            if not args.files:
                print("afecheck: no design files among the files given", file=stderr)
                return 0
        jobs = args.jobs or os.cpu_count() or 1
        with _collector_tuned(), progress_line(len(args.files), stderr, quiet=args.quiet) as done:
            report = review_files(args.files, fail_on=args.fail_on, baseline=args.baseline,
                                  baseline_any_design=args.baseline_any_design, detail=detail,
                                  on_note=lambda note: print(f"note: {note}", file=stderr), jobs=jobs,
                                  on_done=done, **review_options(args))
    for note in report.notes:
        print(f"afecheck: note: {note}", file=stderr)
    rendered = [(path, render(report, str(fmt), color=path is None and use_color(args.color, stdout)))
                for fmt, path in plan]
    write_outputs([(path, text) for path, text in rendered if path is not None], reads)
    for path, text in rendered:
        if path is None:
            stdout.write(text)
    return exit_code(report)
