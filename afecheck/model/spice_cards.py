"""Read SPICE netlist files into cards: title, comments, continuation lines, ``.include``/``.lib``, ``.control``.

A card is one logical line split into tokens, each token with its file, line and column. ``{...}`` and
``'...'`` expressions are single tokens; ``( ) , =`` are tokens of their own. Included files must lie in
the top file's folder (or below), the same rule design files follow for the files they name. Limits keep
a hostile netlist from taking long: the input file size limit, at most :data:`MAX_CARDS` cards, at most
:data:`MAX_INCLUDES` included files, and cards of at most :data:`MAX_CARD_CHARS` characters.
"""

from __future__ import annotations

import re
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import NamedTuple

from afecheck.errors import InputError, Problem
from afecheck.model.reader import MAX_FILE_BYTES

MAX_CARDS = 100_000
"""Most cards (logical lines) read across a netlist and its includes; a board export has a few thousand."""
MAX_INCLUDES = 100
"""Most ``.include``/``.lib`` files read for one netlist."""
MAX_CARD_CHARS = 100_000
"""Longest card, continuation lines joined."""

_TOKEN = re.compile(r"\{[^{}]*(?:\{[^{}]*\}[^{}]*)*\}|'[^']*'|[(),=]|[^\s(),='{}]+|[{}']")
_WINDOWS_DRIVE = re.compile(r"^[A-Za-z]:")
_CARD_LIKE = re.compile(r"^[RCVXLI][A-Za-z0-9_]*\s+\S+\s+\S+\s+\S+", re.I)
_ANALYSES = (".op", ".ac", ".dc", ".tran", ".noise", ".tf", ".sens", ".pz", ".disto", ".four", ".meas",
             ".measure", ".print", ".plot", ".probe", ".save", ".option", ".options", ".opt", ".temp", ".ic",
             ".nodeset", ".width", ".csparam", ".step")


class Token(NamedTuple):
    """One token of a card and where it stands (a named tuple: a netlist has hundreds of thousands)."""

    text: str
    file: str
    line: int
    column: int
    low: str
    """The text lower-cased (SPICE names are not case-sensitive)."""


def token(text: str, file: str, line: int, column: int) -> Token:
    """A Token with its lower-cased text filled in."""
    return Token(text, file, line, column, text.lower())


@dataclass(frozen=True)
class Card:
    """One logical line of a netlist (continuations joined), as tokens."""

    tokens: tuple[Token, ...]
    key: str = ""
    """The first token, lower-cased: the element name or the dot command."""

    def __post_init__(self) -> None:
        if not self.key:
            object.__setattr__(self, "key", self.tokens[0].low)

    @property
    def file(self) -> str:
        return self.tokens[0].file

    @property
    def line(self) -> int:
        return self.tokens[0].line

    def problem(self, message: str, token: Token | None = None) -> Problem:
        t = token or self.tokens[0]
        return Problem(t.file, t.line, t.column, "", message)


@dataclass(frozen=True)
class Netlist:
    """A netlist file read into cards: its title, the cards in order, and notes on what was skipped."""

    title: str
    cards: tuple[Card, ...]
    notes: tuple[str, ...]


class _Reader:
    def __init__(self, top: Path, display: str):
        self.top_folder = top.parent.resolve()
        self.display_folder = Path(display).parent
        self.cards: list[Card] = []
        self.notes: list[str] = []
        self.skipped: dict[str, str] = {}
        self.includes = 0
        self.stack: list[Path] = []
        self.analyses: list[str] = []

    def stop(self, file: str, line: int | None, message: str) -> InputError:
        return InputError([Problem(file, line, None, "", message)])

    def read_text(self, path: Path, display: str, where: tuple[str, int] | None) -> str:
        file, line = where if where else (display, None)
        try:
            size = path.stat().st_size
            if not path.is_file():
                raise self.stop(file, line, f"{display}: not a regular file")
            if size > MAX_FILE_BYTES:
                raise self.stop(display, 1, f"file is {size} bytes; the limit is {MAX_FILE_BYTES}")
            raw = path.read_bytes()[: MAX_FILE_BYTES + 1]
        except FileNotFoundError:
            raise self.stop(file, line, f"no such file {display!r}") from None
        except OSError as exc:
            raise self.stop(file, line, f"cannot read {display!r}: {exc.strerror or exc}") from None
        if b"\x00" in raw:
            at = raw[: raw.index(b"\x00")].count(b"\n") + 1
            raise self.stop(display, at, "binary content (NUL byte): expected a SPICE netlist as text")
        try:
            return raw.decode("utf-8").removeprefix("\ufeff")
        except UnicodeDecodeError:
            return raw.decode("latin-1")

    def lines(self, text: str, display: str, title: bool) -> Iterator[tuple[int, list[tuple[int, int, str]]]]:
        """Logical lines (continuations joined) as (first line number, [(line, column offset, text)]), comments
        removed; yielded one by one, so that a limit stops reading early."""
        current: tuple[int, list[tuple[int, int, str]]] | None = None
        size = 0
        for number, raw in enumerate(text.splitlines(), start=1):
            if title and number == 1:
                continue
            stripped = raw.strip()
            if not stripped or stripped[0] == "*":
                continue
            body = _strip_comment(raw) if (";" in raw or "$" in raw) else raw
            if not body.strip():
                continue
            if stripped[0] == "+":
                if current is None:
                    raise self.stop(display, number, "a continuation line ('+') with no card before it")
                cut = body.index("+")
                current[1].append((number, cut + 1, body[cut + 1:]))
                size += len(body)
                if size > MAX_CARD_CHARS:
                    raise self.stop(display, current[0], f"card longer than {MAX_CARD_CHARS} characters")
                continue
            if current is not None:
                yield current
            current, size = (number, [(number, 0, body)]), len(body)
        if current is not None:
            yield current

    def read(self, path: Path, display: str, title: bool, where: tuple[str, int] | None = None,
             section: str | None = None) -> str:
        """Read ``path`` into cards; return its title line (empty for included files)."""
        resolved = path.resolve()
        if resolved in self.stack:
            file, line = where or (display, 1)
            chain = " -> ".join(p.name for p in self.stack)
            raise self.stop(file, line, f"{display} includes itself (through {chain})")
        self.stack.append(resolved)
        text = self.read_text(path, display, where)
        first = text.split("\n", 1)[0].strip() if title else ""
        if title and _CARD_LIKE.match(first):
            self.notes.append(f"{display}:1: line 1 of a SPICE netlist is its title, so {first[:40]!r} is not read "
                              "as a card; start the file with a title line")
        logical = self.lines(text, display, title)
        in_section = section is None
        control: int | None = None
        for number, parts in logical:
            tokens = _tokens(parts, display)
            if not tokens:
                continue
            head = tokens[0].low
            if control is not None:
                if head == ".endc":
                    control = None
                continue
            if head == ".control":
                control = number
                self.skip(".control", f"{display}:{number}: a .control block is read and ignored")
                continue
            if section is not None:
                if head == ".lib" and len(tokens) == 2 and not in_section:
                    in_section = tokens[1].low == section.lower()
                    continue
                if head == ".endl":
                    if in_section:
                        break
                    continue
                if not in_section:
                    continue
            if head == ".end":
                break
            if head in (".include", ".inc", ".lib"):
                self.include(tokens, display)
                continue
            if head in _ANALYSES:
                self.analyses.append(f"{head} ({Path(display).name}:{number})")
                continue
            if head == ".title":
                first = " ".join(t.text for t in tokens[1:])
                continue
            if len(self.cards) >= MAX_CARDS:
                raise self.stop(display, number, f"more than {MAX_CARDS} cards; a board netlist has far fewer")
            self.cards.append(Card(tuple(tokens)))
        if control is not None:
            raise self.stop(display, control, ".control block with no .endc")
        if section is not None and not in_section:
            file, line = where or (display, 1)
            raise self.stop(file, line, f"no section {section!r} (.lib {section} ... .endl) in {display}")
        self.stack.pop()
        return first

    def skip(self, kind: str, note: str) -> None:
        if kind not in self.skipped:
            self.skipped[kind] = note
            self.notes.append(note)

    def include(self, tokens: list[Token], display: str) -> None:
        head = tokens[0]
        args = [t.text.strip("'\"") for t in tokens[1:]]
        if head.low == ".lib" and len(args) != 2:
            raise self.stop(head.file, head.line, ".lib takes a file and a section name: .lib FILE SECTION")
        if head.low != ".lib" and len(args) != 1:
            raise self.stop(head.file, head.line, f"{head.text} takes one file name")
        self.includes += 1
        if self.includes > MAX_INCLUDES:
            raise self.stop(head.file, head.line, f"more than {MAX_INCLUDES} included files")
        name = args[0]
        if Path(name).is_absolute() or name.startswith(("/", "\\", "~")) or _WINDOWS_DRIVE.match(name):
            raise self.stop(head.file, head.line, f"absolute path {name!r} refused: give a path relative to the "
                                                  "netlist's folder")
        base = self.stack[-1].parent
        target = base / name
        try:
            escaped = not target.resolve().is_relative_to(self.top_folder)
        except (OSError, RuntimeError):
            escaped = True
        if escaped:
            raise self.stop(head.file, head.line, f"path {name!r} leads outside the netlist's folder; included "
                                                  "files must lie in that folder or below it")
        shown = str(Path(head.file).parent / name)
        self.read(target, shown, title=False, where=(head.file, head.line),
                  section=args[1] if head.low == ".lib" else None)


def _strip_comment(line: str) -> str:
    """The line without a ``;`` or `` $ `` inline comment (outside quotes and braces)."""
    depth, quote = 0, False
    for i, c in enumerate(line):
        if c == "'" and depth == 0:
            quote = not quote
        elif not quote and c == "{":
            depth += 1
        elif not quote and c == "}":
            depth = max(0, depth - 1)
        elif not quote and depth == 0 and (c == ";" or (c == "$" and (i == 0 or line[i - 1] in " \t"))):
            return line[:i]
    return line


def _tokens(parts: list[tuple[int, int, str]], display: str) -> list[Token]:
    tokens: list[Token] = []
    for number, offset, text in parts:
        for m in _TOKEN.finditer(text):
            t = m.group()
            if t in ("{", "}", "'"):
                raise InputError([Problem(display, number, offset + m.start() + 1, "",
                                          f"unbalanced {t!r}: an expression is written {{...}} or '...' on one line")])
            tokens.append(Token(t, display, number, offset + m.start() + 1, t.lower()))
    return tokens


def read_netlist_cards(path: Path, display: str | None = None) -> Netlist:
    """Read the netlist at ``path`` and the files it includes into cards; raise InputError with file:line."""
    shown = display or str(path)
    reader = _Reader(path, shown)
    title = reader.read(path, shown, title=True)
    notes = list(reader.notes)
    if reader.analyses:
        listed = ", ".join(reader.analyses[:8]) + (" ..." if len(reader.analyses) > 8 else "")
        notes.append(f"{shown}: analysis and output commands read and ignored (afecheck runs its own): {listed}")
    return Netlist(title=title, cards=tuple(reader.cards), notes=tuple(notes))
