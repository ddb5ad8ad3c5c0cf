"""The progress line of long runs: designs done of total, stages analysed, elapsed and remaining time.

Shown on standard error, only on a terminal, only for runs longer than about a second, never under ``--quiet`` or
in CI logs (``CI`` set), and never mixed into a report (reports go to standard output or files).
"""

from __future__ import annotations

import contextlib
import io
import os
from collections.abc import Callable, Iterator
from typing import Any, TextIO

SHOW_AFTER_S = 1.0  # AFECHECK_PROGRESS_AFTER_S overrides it (the tests draw the line at once)


def wanted(stream: TextIO, quiet: bool) -> bool:
    """True when a progress line may be drawn on ``stream``."""
    if quiet or os.environ.get("CI"):
        return False
    isatty = getattr(stream, "isatty", None)
    return bool(isatty and isatty())


@contextlib.contextmanager
def progress_line(total: int, stream: TextIO, quiet: bool = False) -> Iterator[Callable[[Any], None] | None]:
    """Yield a callback to call once per finished design (with its outcome), or None when no line is drawn."""
    if total < 1 or not wanted(stream, quiet):
        yield None
        return
    from tqdm import tqdm

    stages = 0
    delay = float(os.environ.get("AFECHECK_PROGRESS_AFTER_S", SHOW_AFTER_S))
    try:
        width = os.get_terminal_size(stream.fileno()).columns
    except (OSError, ValueError, AttributeError, io.UnsupportedOperation):
        width = 0
    sized = {"dynamic_ncols": True} if width > 0 else {"ncols": 100}  # a terminal that reports no size gets 100
    with tqdm(total=total, file=stream, unit="design", delay=delay, leave=False, **sized,
              desc="afecheck", bar_format="{desc}: {n}/{total} designs, {postfix} [{elapsed} elapsed, "
              "{remaining} left]", postfix="0 stages") as bar:
        def done(outcome: Any) -> None:
            nonlocal stages
            design = getattr(outcome, "design", None)
            stages += len(design.stages) if design is not None else 0
            bar.set_postfix_str(f"{stages} stages analysed", refresh=False)
            bar.update(1)

        yield done
