"""Writing outputs: regular files are replaced atomically, devices and pipes written directly, inputs never.

A run's outputs are written as a set: every new regular file is first written whole to a temp file beside its
target (``.NAME.afecheck-partial-PID``), then devices and pipes are written, and the renames come last, so a
failure before them leaves every old output in place. Temp files left by a killed run are removed by the next
run that writes the same target once their process is gone.
"""

from __future__ import annotations

import contextlib
import contextvars
import os
import re
import stat
import sys
import zlib
from collections.abc import Iterable, Iterator, Sequence
from dataclasses import dataclass
from pathlib import Path

PARTIAL = ".afecheck-partial-"
"""Marks a temp file that holds an output being written: ``.NAME.afecheck-partial-PID``."""

_DESCRIPTOR_LINKS = ("/dev/stdout", "/dev/stderr", "/dev/fd/", "/proc/")
_MAX_LINKS = 40


class OutputError(Exception):
    """An output that cannot or must not be written: a usage error (exit status 2)."""


@dataclass(frozen=True)
class _Target:
    given: str
    final: Path  # the file finally written (symlinks followed)
    direct: bool  # written in place: a character device, a pipe or a descriptor link such as /dev/stdout
    mode: int | None  # the existing regular file's permission bits, kept when it is replaced


def _follow(given: str) -> tuple[Path, bool]:
    """The path ``given`` finally names, its symlinks followed one by one; True when it passes a descriptor link."""
    current = os.path.abspath(given)
    for _ in range(_MAX_LINKS):
        if current.startswith(_DESCRIPTOR_LINKS):
            return Path(given), True
        if not os.path.islink(current):
            return Path(current), False
        link = os.readlink(current)
        current = os.path.normpath(os.path.join(os.path.realpath(os.path.dirname(current)), link))
    raise OutputError(f"cannot write {given}: more than {_MAX_LINKS} symbolic links in a row")


def _target(given: str) -> _Target:
    final, through_descriptor = _follow(given)
    if through_descriptor:
        return _Target(given, final, True, None)
    try:
        st = os.stat(final)
    except FileNotFoundError:
        return _Target(given, final, False, None)
    except OSError as exc:
        raise OutputError(f"cannot write {given}: {exc.strerror or exc}") from None
    if stat.S_ISREG(st.st_mode):
        return _Target(given, final, False, stat.S_IMODE(st.st_mode))
    if stat.S_ISCHR(st.st_mode) or stat.S_ISFIFO(st.st_mode):
        return _Target(given, final, True, None)
    if stat.S_ISDIR(st.st_mode):
        raise OutputError(f"cannot write {given}: it is a directory; name a file in it")
    raise OutputError(f"cannot write {given}: not a regular file, character device or pipe")


def _identity(path: str | Path) -> tuple[int, int] | None:
    """(device, inode) of the regular file ``path`` names after its symlinks, or None."""
    try:
        st = os.stat(path)
    except (OSError, ValueError):
        return None
    return (st.st_dev, st.st_ino) if stat.S_ISREG(st.st_mode) else None


def check_outputs(paths: Sequence[str | Path], inputs: Iterable[str | Path] = ()) -> None:
    """Refuse directories, odd file types, one file named twice, and any file among ``inputs`` (by identity)."""
    read = {i for i in map(_identity, (p for p in inputs if p)) if i is not None}
    seen: dict[object, str] = {}
    for given in map(str, paths):
        target = _target(given)
        ident = _identity(given)  # after every link, /dev/fd/N and /proc/self/fd/N included
        if ident is not None and ident in read:
            raise OutputError(f"--output {given} is an input file of this run (the same file, however it is named); "
                              "afecheck never writes to its inputs")
        key = ident or str(target.final)
        if key in seen:
            raise OutputError(f"--output {given} and --output {seen[key]} are the same file; give each report its own")
        seen[key] = given


def _partial_name(final: Path, pid: int) -> Path:
    name = final.name
    if len(os.fsencode(name)) > 180:  # leave room under the usual 255-byte limit on a file name
        name = f"{name[:40]}~{zlib.crc32(os.fsencode(name)):08x}"
    return final.with_name(f".{name}{PARTIAL}{pid}")


def _alive(pid: int) -> bool:
    if os.name != "posix":
        return True  # no cheap, harmless liveness probe: such files are left for the user
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except (PermissionError, OverflowError, ValueError):
        return True  # another user's process (or a pid we cannot ask about): leave its file alone
    return True


def remove_stale_partials(final: Path) -> list[Path]:
    """Delete temp files of ``final`` left by runs whose process is gone (or that had this run's pid); return them."""
    prefix = _partial_name(final, 0).name[: -1]
    pattern = re.compile(re.escape(prefix) + r"(\d+)")
    removed = []
    with contextlib.suppress(OSError):
        for entry in os.scandir(final.parent):
            m = pattern.fullmatch(entry.name)
            if m and (int(m.group(1)) == os.getpid() or not _alive(int(m.group(1)))) and entry.is_file(
                    follow_symlinks=False):
                with contextlib.suppress(OSError):
                    os.unlink(entry.path)
                    removed.append(Path(entry.path))
    return removed


def _stage(target: _Target, data: bytes) -> Path:
    """Write ``data`` whole to a fresh temp file beside the target: umask-honouring mode, or the old file's mode."""
    tmp = _partial_name(target.final, os.getpid())
    fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_NOFOLLOW", 0), 0o666)
    try:
        if target.mode is not None:
            with contextlib.suppress(OSError, AttributeError):  # keep owner and group where allowed (POSIX)
                old = os.stat(target.final)
                os.chown(tmp, old.st_uid, old.st_gid)
            os.chmod(tmp, target.mode)  # after chown, which may clear set-id bits
        with os.fdopen(fd, "wb", closefd=False) as handle:
            handle.write(data)
            handle.flush()
            os.fsync(handle.fileno())
    except BaseException:
        os.close(fd)
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        raise
    os.close(fd)
    return tmp


def write_outputs(outputs: Sequence[tuple[str | Path, str]], inputs: Iterable[str | Path] = ()) -> None:
    """Write each (path, text) as UTF-8: all temp files first, then devices and pipes, then every rename.

    Raises OutputError (usage error) for a directory, an input file, a path named twice, or a failed write.
    """
    check_outputs([p for p, _ in outputs], inputs)
    planned = [(_target(str(p)), text.encode("utf-8")) for p, text in outputs]
    staged: list[tuple[Path, _Target]] = []
    current = ""
    for target, _ in planned:
        if not target.direct:
            remove_stale_partials(target.final)
    try:
        for target, data in planned:
            current = target.given
            if not target.direct:
                staged.append((_stage(target, data), target))
        for target, data in planned:
            current = target.given
            if target.direct:
                with open(target.final, "wb") as handle:
                    handle.write(data)
        for tmp, target in staged:
            current = target.given
            os.replace(tmp, target.final)
    except OSError as exc:
        raise OutputError(f"cannot write {current}: {exc.strerror or exc}") from None
    finally:
        for tmp, _ in staged:
            with contextlib.suppress(OSError):
                os.unlink(tmp)


def write_text_atomic(path: str | Path, text: str) -> None:
    """Write one output (see :func:`write_outputs`)."""
    write_outputs([(path, text)])


_READS: contextvars.ContextVar[list[str] | None] = contextvars.ContextVar("afecheck_reads", default=None)
_hooked = False


def _note_open(event: str, args: tuple) -> None:
    """Audit hook: while recording, note every file opened for reading (never raises: that would fail the open)."""
    if event != "open":
        return
    reads = _READS.get()
    if reads is None:
        return
    try:
        path, mode, flags = args
        if isinstance(path, int) or path is None:
            return
        writing = any(c in mode for c in "wax+") if mode else (flags or 0) & os.O_ACCMODE != os.O_RDONLY
        if not writing:
            reads.append(os.fsdecode(path))
    except Exception:  # noqa: BLE001 - an audit hook must not break the open it watches
        return


@contextlib.contextmanager
def recording_reads() -> Iterator[list[str]]:
    """Collect the path of every file this thread opens for reading inside the block (design, intent, part
    libraries, config, rule sets, waivers, baseline, whoever reads them), so no output can overwrite one."""
    global _hooked
    if not _hooked:
        sys.addaudithook(_note_open)
        _hooked = True
    reads: list[str] = []
    token = _READS.set(reads)
    try:
        yield reads
    finally:
        _READS.reset(token)


def note_reads(paths: list[str]) -> None:
    """Add files another process read on this run's behalf (a worker of ``check --jobs``) to the recording."""
    reads = _READS.get()
    if reads is not None:
        reads.extend(paths)
