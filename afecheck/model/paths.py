"""The one containment rule for paths written inside files: a design's intent and part libraries, a config's
waivers and rule set, a rule set's ``extends``. A referenced file must resolve, symlinks followed, to a regular
file inside the folder of the file that names it; absolute paths, NUL bytes and over-long names are refused."""

from __future__ import annotations

import os
import re
import stat
from pathlib import Path

MAX_PATH_CHARS = 1024
"""Longest referenced path read; the file system's own limits (255 bytes a name) are checked too."""
_WINDOWS_DRIVE = re.compile(r"^[A-Za-z]:")


class PathRefusedError(ValueError):
    """A referenced path that breaks the containment rule; the message says why and what is expected."""


def referenced_file(folder: Path, text: object, owner: str = "the file that names it") -> Path:
    """``folder/text`` when it is a regular file inside ``folder`` after symlinks; else PathRefusedError.

    ``owner`` names the folder in messages ("the design file's folder", "the config's folder").
    """
    if not isinstance(text, str) or not text.strip():
        raise PathRefusedError("expected a file name (text)")
    shown = text if len(text) <= 80 else text[:77] + "..."
    if "\x00" in text:
        raise PathRefusedError(f"path {shown!r} holds a NUL byte; give a plain file name")
    if len(text) > MAX_PATH_CHARS or any(len(part.encode("utf-8", "surrogatepass")) > 255
                                         for part in re.split(r"[/\\]", text)):
        raise PathRefusedError(f"path {shown!r} is too long for a file name")
    if Path(text).is_absolute() or text.startswith(("/", "\\")) or _WINDOWS_DRIVE.match(text):
        raise PathRefusedError(f"absolute path {shown!r} refused: give a path relative to {owner}")
    target = folder / text
    try:
        escaped = not target.resolve().is_relative_to(folder.resolve())
    except (OSError, RuntimeError, ValueError):
        escaped = True
    if escaped:
        raise PathRefusedError(f"path {shown!r} leads outside {owner}; referenced files must lie in that folder or "
                          "below it")
    try:
        mode = os.stat(target).st_mode
    except (OSError, ValueError):
        raise PathRefusedError(f"no such file {str(target)!r}") from None
    if not stat.S_ISREG(mode):
        raise PathRefusedError(f"{str(target)!r} is not a regular file; only regular files are read")
    return target


def same_file(a: Path, b: Path) -> bool:
    """True when ``a`` and ``b`` are one file (same device and inode), however they are spelt."""
    try:
        sa, sb = os.stat(a), os.stat(b)
    except (OSError, ValueError):
        return False
    return (sa.st_dev, sa.st_ino) == (sb.st_dev, sb.st_ino)
