"""File output shared by commands: atomic writes, so a report is either whole or absent, never half-written."""

from __future__ import annotations

import contextlib
import os
import tempfile
from pathlib import Path


def write_text_atomic(path: str | Path, text: str) -> None:
    """Write ``text`` (UTF-8, newlines kept as given) to ``path`` via a temp file in the same folder and os.replace."""
    target = Path(path)
    folder = target.parent if str(target.parent) else Path(".")
    fd, tmp = tempfile.mkstemp(dir=folder, prefix=f".{target.name}.", suffix=".tmp")
    try:
        with os.fdopen(fd, "wb") as handle:
            handle.write(text.encode("utf-8"))
            handle.flush()
            os.fsync(handle.fileno())
        os.replace(tmp, target)
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        raise


def same_file(a: str | Path, b: str | Path) -> bool:
    """True when ``a`` and ``b`` name the same existing file (or the same absolute path if either is missing)."""
    pa, pb = Path(a), Path(b)
    try:
        return pa.samefile(pb)
    except OSError:
        return pa.resolve() == pb.resolve()
