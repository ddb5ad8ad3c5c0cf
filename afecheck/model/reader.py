"""Read a YAML or JSON file into plain Python data plus the line and column of every key and value.

Safe by construction: only the plain YAML types (mapping, sequence, string, number, boolean, null)
are built, so object tags are refused rather than executed; duplicate keys are errors (YAML and
JSON alike); and hostile input is stopped early by the limits below, which docs/FORMAT.md states.
Every problem is an :class:`~afecheck.errors.InputError` carrying ``file:line:column``.
"""

from __future__ import annotations

import bisect
import errno
import json
import math
import os
import re
import stat
import zlib
from collections.abc import Callable
from functools import lru_cache, partial
from itertools import accumulate
from pathlib import Path
from typing import Any

import yaml

from afecheck.errors import InputError, Problem

PathKey = tuple[str | int, ...]
"""Mapping keys appear as strings (``"1"`` for a YAML ``1:`` key), list positions as ints."""
Position = tuple[int, int]
PositionIndex = tuple[dict[PathKey, Position], dict[PathKey, Position], dict[PathKey, str]]
"""Positions of the keys, positions of the values, and the source text of YAML scalars."""

MAX_FILE_BYTES = 20 * 1024 * 1024
"""Largest input file read (20 MiB); a schematic export is far smaller."""
MAX_ALIASES = 100
"""Most YAML alias uses (``*name``) in one file."""
MAX_ALIAS_NODES = 10_000
"""Most values that alias uses may add in total once expanded (defeats "billion laughs")."""
MAX_DEPTH = 64
"""Deepest nesting of mappings and sequences."""
MAX_DIGITS = 400
"""Longest integer read, in characters: far beyond any float, well inside Python's 4300-digit conversion limit."""

_YAML = "tag:yaml.org,2002:"
_SCALAR_TAGS = {f"{_YAML}{t}" for t in ("str", "int", "float", "bool", "null")}
_RESOLVER = yaml.resolver.Resolver()
_CONSTRUCTOR = yaml.constructor.SafeConstructor()
_BUILD = {
    f"{_YAML}int": _CONSTRUCTOR.construct_yaml_int,
    f"{_YAML}float": _CONSTRUCTOR.construct_yaml_float,
    f"{_YAML}bool": _CONSTRUCTOR.construct_yaml_bool,
    f"{_YAML}null": _CONSTRUCTOR.construct_yaml_null,
}


class _PurePythonParser(yaml.reader.Reader, yaml.scanner.Scanner, yaml.parser.Parser):
    """PyYAML's pure-Python parser: the same events as libyaml's, with no nesting limit of its own."""

    def __init__(self, stream: str):
        yaml.reader.Reader.__init__(self, stream)
        yaml.scanner.Scanner.__init__(self)
        yaml.parser.Parser.__init__(self)


try:
    from yaml._yaml import CParser as _Parser
except ImportError:  # PyYAML built without libyaml: the pure-Python parser gives the same events
    _Parser = _PurePythonParser  # type: ignore[misc,assignment]


# YAML 1.1 reads yes/no/on/off as booleans, 1:30 as base 60 and 010 as octal; a net called ON must stay a
# name, so plain scalars keep a non-string meaning only in the spellings YAML 1.2 also gives them.
_YAML12 = {
    f"{_YAML}bool": re.compile(r"^(?:true|True|TRUE|false|False|FALSE)$"),
    f"{_YAML}int": re.compile(r"^[-+]?(?:[0-9][0-9_]*|0x[0-9a-fA-F_]+|0o[0-7_]+)$"),
    f"{_YAML}float": re.compile(r"^[-+]?(?:[0-9][0-9_]*)?\.?[0-9_]*(?:[eE][-+]?[0-9]+)?$|^[-+]?\.(?:inf|Inf|INF)$|"
                                r"^\.(?:nan|NaN|NAN)$"),
}
_OCTAL_LOOKING = re.compile(r"^[-+]?0[0-9_]+$")
_DECIMAL = "decimal"


def _not_finite(text: str) -> str:
    shown = text if len(text) <= 40 else text[:37] + "..."
    return f"{shown!r} is not a finite number (too large for a float, infinite or not a number); give a real value"


def _too_many_digits(count: int) -> str:
    return f"an integer written with {count} characters; at most {MAX_DIGITS} are read (no value needs more)"


def _short(tag: str) -> str:
    """A tag as written in YAML shorthand (``!!python/object``)."""
    return "!!" + tag[len(_YAML):] if tag.startswith(_YAML) else tag


def _tag_refused(tag: str) -> str:
    return f"tag {_short(tag)!r} is not allowed: only plain values, mappings and lists are read"


@lru_cache(maxsize=4096)
def _plain_tag(value: str, implicit: tuple[bool, bool]) -> str:
    """Tag of an untagged scalar: the YAML resolver's answer, narrowed to what YAML 1.2 also reads."""
    tag = _RESOLVER.resolve(yaml.ScalarNode, value, implicit)
    if tag in _YAML12 and not _YAML12[tag].match(value):
        return f"{_YAML}str"
    if tag == f"{_YAML}int" and _OCTAL_LOOKING.match(value):
        return _DECIMAL
    return tag


class _LazyIndex:
    """The positions of one file, built by ``build`` when first needed (or given built)."""

    __slots__ = ("build", "index")

    def __init__(self, source: Callable[[], PositionIndex] | PositionIndex):
        self.build, self.index = (source, None) if callable(source) else (None, source)

    @property
    def built(self) -> bool:
        return self.index is not None

    def get(self) -> PositionIndex:
        if self.index is None:
            assert self.build is not None
            self.index, self.build = self.build(), None
        return self.index


class Document:
    """Data read from one file with the 1-based (line, column) of each key and each value by key path.

    The positions are found when first asked for (a problem to place, a finding's location), by reading the
    text once more: a clean file checked without findings never builds them (docs/BENCHMARK.md, memory).
    """

    def __init__(self, file: str, data: Any, keys: dict[PathKey, Position] | None = None,
                 values: dict[PathKey, Position] | None = None, texts: dict[PathKey, str] | None = None,
                 origins: dict[PathKey, str] | None = None, defaults: frozenset[PathKey] = frozenset(),
                 notes: tuple[str, ...] = (), index: Callable[[], PositionIndex] | None = None):
        self.file = file
        self.data = data
        self.origins = origins or {}
        """File of a key path that lies in another file than ``file`` (a netlist's includes, its map file)."""
        self.defaults = defaults
        """Intent entries (section, net) that an intent file may refine rather than conflict with."""
        self.notes = notes
        """What reading skipped on purpose (a netlist's analysis lines), for the user to see."""
        self._index = _LazyIndex(index if index is not None else (keys or {}, values or {}, texts or {}))

    def _positions(self) -> PositionIndex:
        return self._index.get()

    @property
    def indexed(self) -> bool:
        """True once the positions have been built (tests check that a clean load never builds them)."""
        return self._index.built

    def positions_only(self) -> Document:
        """This document without its data, sharing its positions (built once for both): what a loaded design
        keeps, so the data read from the file is freed once it has been validated."""
        kept = Document(self.file, None, origins=self.origins, defaults=self.defaults, notes=self.notes)
        kept._index = self._index
        return kept

    @property
    def keys(self) -> dict[PathKey, Position]:
        """Position of each mapping key by key path."""
        return self._positions()[0]

    @property
    def values(self) -> dict[PathKey, Position]:
        """Position of each value (scalar, mapping or list) by key path."""
        return self._positions()[1]

    @property
    def texts(self) -> dict[PathKey, str]:
        """Source text of each YAML scalar value, for fields whose spelling matters (``0123`` is not 123)."""
        return self._positions()[2]

    def file_of(self, path: PathKey) -> str:
        """The file holding ``path`` (or its deepest known parent)."""
        key = tuple(path)
        while key:
            if key in self.origins:
                return self.origins[key]
            key = key[:-1]
        return self.file

    def where(self, path: PathKey) -> Position | None:
        """Position of the deepest known part of ``path``: a container's key line, else the value itself."""
        key = tuple(path)
        while True:
            if key in self.keys:
                return self.keys[key]
            if key in self.values:
                return self.values[key]
            if not key:
                return None
            key = key[:-1]

    def problem(self, path: PathKey, message: str) -> Problem:
        """A Problem at ``path`` in this file."""
        pos = self.where(path)
        line, column = pos if pos else (1, None)
        return Problem(self.file_of(path), line, column, ".".join(str(p) for p in path), message)


def read_file(path: Path, display: str | None = None) -> Document:
    """Read ``path`` as JSON (``.json``) or YAML (anything else) within the limits; raise InputError.

    Only regular files are read: the type is checked with ``os.stat`` before opening and again on the open
    descriptor (opened non-blocking, so a FIFO swapped in meanwhile cannot hang the run), and at most
    MAX_FILE_BYTES + 1 bytes are read, so a device that never ends is never read for ever.
    """
    name = display or str(path)
    raw = read_capped(path, name)
    return read_bytes(raw, name, as_json=path.suffix.lower() == ".json")


def read_capped(path: Path, name: str) -> bytes:
    """The bytes of the regular file ``path`` (at most MAX_FILE_BYTES); every refusal an InputError at ``name``."""
    def refuse(message: str, line: int | None = None) -> InputError:
        return InputError([Problem(name, line, None, "", message)])

    try:
        kind = _file_kind(os.stat(path).st_mode)
        if kind:
            raise refuse(f"{kind}, not a regular file: only regular files are read")
        fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOCTTY", 0))
        with os.fdopen(fd, "rb") as stream:
            info = os.fstat(stream.fileno())
            kind = _file_kind(info.st_mode)
            if kind:
                raise refuse(f"{kind}, not a regular file: only regular files are read")
            if info.st_size > MAX_FILE_BYTES:
                raise refuse(f"file is {info.st_size} bytes; the limit is {MAX_FILE_BYTES}", 1)
            raw = stream.read(MAX_FILE_BYTES + 1)  # the file may have grown since fstat()
    except FileNotFoundError:
        raise refuse("no such file") from None
    except ValueError:
        raise refuse("the file name holds a NUL byte") from None
    except OSError as exc:
        if exc.errno == errno.ENAMETOOLONG:
            raise refuse("the file name is too long for the file system") from None
        raise refuse(f"cannot read the file: {exc.strerror or exc}") from None
    if len(raw) > MAX_FILE_BYTES:
        raise refuse(f"file is over {MAX_FILE_BYTES} bytes; the limit is {MAX_FILE_BYTES}", 1)
    return raw


def _file_kind(mode: int) -> str:
    """'' for a regular file, else what it is, in words."""
    if stat.S_ISREG(mode):
        return ""
    for test, word in ((stat.S_ISDIR, "a folder"), (stat.S_ISFIFO, "a FIFO (named pipe)"),
                       (stat.S_ISCHR, "a character device"), (stat.S_ISBLK, "a block device"),
                       (stat.S_ISSOCK, "a socket")):
        if test(mode):
            return word
    return "a special file"


def read_bytes(raw: bytes, file: str, as_json: bool = False) -> Document:
    """Decode and parse ``raw`` (UTF-8 text) as JSON or YAML; raise InputError with positions."""
    if len(raw) > MAX_FILE_BYTES:
        raise InputError([Problem(file, 1, None, "", f"input is {len(raw)} bytes; the limit is {MAX_FILE_BYTES}")])
    if b"\x00" in raw:
        line = raw[: raw.index(b"\x00")].count(b"\n") + 1
        raise InputError([Problem(file, line, None, "", "binary content (NUL byte): expected a UTF-8 text file")])
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        raise InputError(
            [Problem(file, line, None, "", f"not UTF-8 text (byte 0x{raw[exc.start]:02x} at offset {exc.start})")]
        ) from None
    text = text.removeprefix("\ufeff")
    if not text.strip() or (not as_json and _only_comments(text)):
        raise InputError([Problem(file, 1, None, "", "empty file: expected a mapping with the format version")])
    doc = _read_json(text, file) if as_json else _read_yaml(text, file)
    if _SURROGATE_ESCAPE.search(text):  # the only way a lone surrogate gets into text decoded from UTF-8
        _refuse_lone_surrogates(doc)
    return doc


_SURROGATE_ESCAPE = re.compile(r"\\(?:u[dD][89a-fA-F]|U0000[dD][89a-fA-F])")


def _refuse_lone_surrogates(doc: Document) -> None:
    """A ``\\ud800`` escape read alone is no character: no report could be written with it, so refuse it here."""
    problems: list[Problem] = []
    stack: list[tuple[PathKey, Any]] = [((), doc.data)]
    while stack:
        path, node = stack.pop()
        if isinstance(node, dict):
            for k, v in node.items():
                sub = path + (str(k),)
                if isinstance(k, str) and _unencodable(k):
                    problems.append(doc.problem(sub, "the key holds a lone surrogate escape (\\ud800-\\udfff), "
                                                     "which is not a character"))
                stack.append((sub, v))
        elif isinstance(node, list):
            stack.extend((path + (i,), v) for i, v in enumerate(node))
        elif isinstance(node, str) and _unencodable(node):
            problems.append(doc.problem(path, "the text holds a lone surrogate escape (\\ud800-\\udfff), which is "
                                              "not a character"))
    if problems:
        raise InputError(problems)


def _unencodable(text: str) -> bool:
    if text.isascii():
        return False
    try:
        text.encode("utf-8")
    except UnicodeEncodeError:
        return True
    return False


def _only_comments(text: str) -> bool:
    return all(not line.strip() or line.lstrip().startswith("#") or line.strip() in ("---", "...")
               for line in text.splitlines())


class _FatalError(Exception):
    """Reading cannot go on; carries the problem that stopped it."""

    def __init__(self, problem: Problem):
        super().__init__(str(problem))
        self.problem = problem


class _Marker:
    """A sentinel that prints as its name inside key paths."""

    def __init__(self, name: str):
        self.name = name

    def __repr__(self) -> str:
        return self.name

    __str__ = __repr__


_NO_KEY = _Marker("(no key)")
_DUPLICATE = _Marker("(duplicate)")


def _path_key(key: Any) -> str | _Marker:
    """A mapping key as it stands in a key path: its text (YAML reads ``1:`` as an int; paths say ``"1"``)."""
    return key if isinstance(key, _Marker) else str(key)


def _mark(file: str, mark: Any, message: str, path: PathKey = ()) -> Problem:
    line = mark.line + 1 if mark is not None else 1
    column = mark.column + 1 if mark is not None else None
    return Problem(file, line, column, ".".join(str(p) for p in path), message)


class _Frame:
    """A mapping or sequence being built; its key path is worked out only when something needs it."""

    __slots__ = ("value", "is_map", "parent", "slot", "_path", "key", "anchor", "seen", "size", "log")

    def __init__(self, value: dict | list, parent: _Frame | None, slot: str | int | _Marker | None,
                 anchor: str | None):
        self.value = value
        self.is_map = isinstance(value, dict)
        self.parent = parent
        self.slot = slot
        self._path: PathKey | None = () if parent is None else None
        self.key: Any = _NO_KEY
        self.anchor = anchor
        self.seen: dict[str, int] = {}
        self.size = 1
        self.log: list[tuple[bool, PathKey, Position]] = []

    @property
    def path(self) -> PathKey:
        if self._path is None:
            assert self.parent is not None
            self._path = self.parent.path + (self.slot,)
        return self._path

    def next_slot(self) -> str | int | _Marker:
        """Key or index, in a key path, of the value that starts now in this container."""
        return _path_key(self.key) if self.is_map else len(self.value)


class _YamlBuilder:
    """Builds plain data from parser events without recursion, enforcing the limits and refusing tags.

    With ``record`` it also stores every key's and value's position and each scalar's text (the second,
    on-demand reading of a file); without it, key paths are made only for the problems it reports.
    """

    def __init__(self, file: str, record: bool = False):
        self.file = file
        self.record = record
        self.keys: dict[PathKey, Position] = {}
        self.values: dict[PathKey, Position] = {}
        self.texts: dict[PathKey, str] = {}
        self.problems: list[Problem] = []
        self.anchors: dict[str, tuple[Any, int, list[tuple[bool, PathKey, Position]]]] = {}
        self.recording: list[_Frame] = []
        self.aliases = 0
        self.alias_nodes = 0
        self.stack: list[_Frame] = []
        self.root: Any = None
        self.documents = 0
        self._handlers = {
            yaml.ScalarEvent: self._scalar, yaml.AliasEvent: self._alias, yaml.DocumentStartEvent: self._document,
            yaml.MappingStartEvent: self._start, yaml.SequenceStartEvent: self._start,
            yaml.MappingEndEvent: self._end, yaml.SequenceEndEvent: self._end,
        }

    def feed(self, event: yaml.Event) -> None:
        handler = self._handlers.get(type(event))
        if handler is None:
            for kind, known in self._handlers.items():  # a subclass of an event type (another parser)
                if isinstance(event, kind):
                    handler = known
                    break
        if handler is not None:
            handler(event)

    def _document(self, event: yaml.DocumentStartEvent) -> None:
        self.documents += 1
        if self.documents > 1:
            raise _FatalError(_mark(self.file, event.start_mark, "more than one YAML document; expected one"))

    def _record(self, is_key: bool, path: PathKey, pos: Position) -> None:
        """Store a key's or value's position, and log it in every open anchored container (for its aliases)."""
        (self.keys if is_key else self.values)[path] = pos
        for frame in self.recording:
            frame.log.append((is_key, path[len(frame.path):], pos))

    def _awaits_key(self) -> bool:
        """True when the node starting now is a mapping key."""
        return bool(self.stack) and self.stack[-1].is_map and self.stack[-1].key is _NO_KEY

    def _path_for_child(self) -> PathKey | None:
        """Path of the node starting now, or None when it is a mapping key."""
        if not self.stack:
            return ()
        if self._awaits_key():
            return None
        frame = self.stack[-1]
        return frame.path + (frame.next_slot(),)

    def _attach(self, value: Any, mark: Any, size: int) -> None:
        if not self.stack:
            if self.record:
                self._record(False, (), (mark.line + 1, mark.column + 1))
            self.root = value
            return
        frame = self.stack[-1]
        if self.record:
            self._record(False, frame.path + (frame.next_slot(),), (mark.line + 1, mark.column + 1))
        frame.size += size
        if not frame.is_map:
            frame.value.append(value)
            return
        key = frame.key
        frame.key = _NO_KEY
        if key is _DUPLICATE:
            return
        frame.value[key] = value

    def _take_key(self, value: Any, mark: Any) -> None:
        frame = self.stack[-1]
        try:
            hash(value)
        except TypeError:
            raise _FatalError(
                _mark(self.file, mark, "a mapping key must be a plain string or number", frame.path)) from None
        text = str(value)
        if text in frame.seen:
            self.problems.append(_mark(
                self.file, mark, f"duplicate key {text!r} (first at line {frame.seen[text]}); each name once",
                frame.path + (_path_key(value),)))
            frame.key = _DUPLICATE
            return
        frame.seen[text] = mark.line + 1
        frame.key = value
        if self.record:
            self._record(True, frame.path + (_path_key(value),), (mark.line + 1, mark.column + 1))

    def _scalar(self, event: yaml.ScalarEvent) -> None:
        tag = event.tag
        if tag is None:
            tag = _plain_tag(event.value, event.implicit)
        elif tag == "!":
            tag = f"{_YAML}str"
        elif tag not in _SCALAR_TAGS:
            self.problems.append(_mark(self.file, event.start_mark, _tag_refused(tag), self._path_for_child() or ()))
            tag = f"{_YAML}null"
        if tag == f"{_YAML}merge":
            self.problems.append(_mark(self.file, event.start_mark,
                                       "merge keys ('<<') are not supported; write the keys out"))
        value: Any = event.value
        if tag in (_DECIMAL, f"{_YAML}int") and len(event.value) > MAX_DIGITS:
            self.problems.append(_mark(self.file, event.start_mark, _too_many_digits(len(event.value))))
            tag, value = f"{_YAML}null", None
        if tag == _DECIMAL:
            value = int(event.value.replace("_", ""), 10)
        elif tag in _BUILD:
            try:
                value = _BUILD[tag](yaml.ScalarNode(tag, event.value))
            except (ValueError, yaml.YAMLError):
                self.problems.append(_mark(self.file, event.start_mark, f"cannot read {event.value!r} as {tag[18:]}"))
                value = None
        if isinstance(value, float) and not math.isfinite(value):
            self.problems.append(_mark(self.file, event.start_mark, _not_finite(event.value)))
            value = None
        if self._awaits_key():
            self._take_key(value, event.start_mark)
            return
        if self.record:
            path = self._path_for_child()
            assert path is not None
            self.texts[path] = event.value
        if event.anchor is not None:
            self.anchors[event.anchor] = (value, 1, [])
        self._attach(value, event.start_mark, 1)

    def _alias(self, event: yaml.AliasEvent) -> None:
        self.aliases += 1
        if self.aliases > MAX_ALIASES:
            raise _FatalError(_mark(self.file, event.start_mark, f"more than {MAX_ALIASES} alias uses (*name)"))
        if event.anchor not in self.anchors:
            raise _FatalError(_mark(self.file, event.start_mark,
                              f"alias *{event.anchor} refers to no complete anchor &{event.anchor} before it"))
        value, size, log = self.anchors[event.anchor]
        self.alias_nodes += size
        if self.alias_nodes > MAX_ALIAS_NODES:
            raise _FatalError(_mark(self.file, event.start_mark,
                              f"aliases expand to more than {MAX_ALIAS_NODES} values; write the data out"))
        if self._awaits_key():
            self._take_key(value, event.start_mark)
            return
        path = self._path_for_child() if self.record else None
        self._attach(value, event.start_mark, size)
        if path is not None:
            for is_key, relative, pos in log:
                self._record(is_key, path + relative, pos)

    def _start(self, event: yaml.CollectionStartEvent) -> None:
        is_map = isinstance(event, yaml.MappingStartEvent)
        allowed = (None, "!", f"{_YAML}map" if is_map else f"{_YAML}seq")
        if self._awaits_key():
            raise _FatalError(_mark(self.file, event.start_mark, "a mapping key must be a plain string or number",
                              self.stack[-1].path))
        parent = self.stack[-1] if self.stack else None
        value: dict | list = {} if is_map else []
        frame = _Frame(value, parent, parent.next_slot() if parent is not None else None, event.anchor)
        if event.tag not in allowed:
            self.problems.append(_mark(self.file, event.start_mark, _tag_refused(event.tag), frame.path))
        if len(self.stack) >= MAX_DEPTH:
            raise _FatalError(_mark(self.file, event.start_mark, f"nesting deeper than {MAX_DEPTH} levels"))
        if self.record:
            self._record(False, frame.path, (event.start_mark.line + 1, event.start_mark.column + 1))
        self.stack.append(frame)
        if event.anchor is not None and self.record:
            self.recording.append(frame)

    def _end(self, event: yaml.CollectionEndEvent) -> None:
        frame = self.stack.pop()
        if frame.anchor is not None:
            if self.record:
                self.recording.pop()
            self.anchors[frame.anchor] = (frame.value, frame.size, frame.log)
        if not self.stack:
            self.root = frame.value
            return
        parent = self.stack[-1]
        parent.size += frame.size
        if not parent.is_map:
            parent.value.append(frame.value)
        else:
            key = parent.key
            parent.key = _NO_KEY
            if key is not _DUPLICATE:
                parent.value[key] = frame.value


_OPENERS_ON_ONE_LINE = re.compile(r"^(?:[^\n\[{]*+[\[{]){" + str(MAX_DEPTH + 1) + "}", re.M)
_BRACKET_STEP = {"[": 1, "{": 1, "]": -1, "}": -1}
_NOT_BRACKETS = str.maketrans("", "", "".join(chr(c) for c in range(128) if chr(c) not in "[]{}"))


def _flow_nesting_beyond_limit_on_one_line(text: str) -> bool:
    """True when some line opens more than MAX_DEPTH flow collections ('[', '{') deeper than it closes.

    libyaml scans up to a line (or 1024 characters) ahead of the events we build from, and since 0.2.5 its
    scanner refuses a flow level over 1000 with a message of its own. Only such a line can reach that limit
    before our builder sees MAX_DEPTH + 1 collections, so a file with one is parsed by the pure-Python parser,
    which has no limit: our refusal then always comes first, at the exact spot, and a file that only looks
    deep (brackets inside quotes or comments) is still read correctly.
    """
    for match in _OPENERS_ON_ONE_LINE.finditer(text):
        end = text.find("\n", match.end())
        brackets = text[match.start(): len(text) if end < 0 else end].translate(_NOT_BRACKETS)
        if any(depth > MAX_DEPTH for depth in accumulate(_BRACKET_STEP.get(c, 0) for c in brackets)):
            return True
    return False


def _read_yaml(text: str, file: str) -> Document:
    """The data of YAML ``text``; its positions are found by reading it again when first asked for."""
    builder = _parse_yaml(text, file, record=False)
    return Document(file, builder.root, index=partial(_index_later, _yaml_index, _packed(text), file))


def _packed(text: str) -> bytes:
    """The text kept for finding positions later, compressed (a design file shrinks about tenfold, in about 3 ms
    a MiB): it stays alive as long as the loaded design, through the whole analysis (docs/BENCHMARK.md, memory)."""
    return zlib.compress(text.encode("utf-8"), 1)


def _index_later(build: Callable[[str, str], PositionIndex], packed: bytes, file: str) -> PositionIndex:
    return build(zlib.decompress(packed).decode("utf-8"), file)


def _yaml_index(text: str, file: str) -> PositionIndex:
    builder = _parse_yaml(text, file, record=True)
    return builder.keys, builder.values, builder.texts


def _parse_yaml(text: str, file: str, record: bool) -> _YamlBuilder:
    """Run the parser over ``text`` into a builder; every problem an InputError (all of them when it can go on)."""
    builder = _YamlBuilder(file, record)
    parser = None
    try:
        parser = (_PurePythonParser if _flow_nesting_beyond_limit_on_one_line(text) else _Parser)(text)
        while parser.check_event():
            builder.feed(parser.get_event())
    except _FatalError as stop:
        raise InputError(builder.problems + [stop.problem]) from None
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        message = " ".join(m for m in (exc.context, exc.problem) if m)
        raise InputError(builder.problems + [_mark(file, mark, f"not valid YAML: {message}")]) from None
    except yaml.reader.ReaderError as exc:
        line = text.count("\n", 0, exc.position) + 1 if isinstance(exc.position, int) else 1
        message = f"character #x{exc.character:04x} is not allowed in YAML text" if isinstance(
            exc.character, int) else str(exc)
        raise InputError(builder.problems + [Problem(file, line, None, "", message)]) from None
    except yaml.YAMLError as exc:
        raise InputError(builder.problems + [Problem(file, 1, None, "", f"not valid YAML: {exc}")]) from None
    finally:
        dispose = getattr(parser, "dispose", None) if parser is not None else None
        if dispose is not None:
            dispose()
    if builder.problems:
        raise InputError(builder.problems)
    return builder


_JSON_TOKEN = re.compile(r'"(?:[^"\\]|\\.)*"(?:\s*:)?|[{}\[\]]|[^\s{}\[\]:,"]+')
_NEWLINE = re.compile(r"\n")
_JSON_CONSTANT = re.compile(r"(?<![\"\w])(?:-?Infinity|NaN)(?![\"\w])")


class _BadNumberError(ValueError):
    """A JSON number afecheck will not read: its text and why."""

    def __init__(self, text: str, message: str):
        super().__init__(message)
        self.text = text
        self.message = message


def _json_int(text: str) -> int:
    if len(text) > MAX_DIGITS:
        raise _BadNumberError(text, _too_many_digits(len(text)))
    return int(text)


def _json_float(text: str) -> float:
    value = float(text)
    if not math.isfinite(value):
        raise _BadNumberError(text, _not_finite(text))
    return value


def _refuse_constant(name: str) -> None:
    raise ValueError(f"{name} is not a JSON number")


def _read_json(text: str, file: str) -> Document:
    """Parse strictly (no NaN/Infinity); positions are found by walking the text again when first asked for.

    Duplicate keys and nesting past MAX_DEPTH are noticed while parsing (cheaply) and then placed by that walk.
    """
    repeated: list[bool] = []

    def pairs(items: list[tuple[str, Any]]) -> dict[str, Any]:
        obj = dict(items)
        if len(obj) != len(items):
            repeated.append(True)
        return obj

    try:
        data = json.loads(text, parse_constant=_refuse_constant, parse_int=_json_int, parse_float=_json_float,
                          object_pairs_hook=pairs)
    except _BadNumberError as exc:
        at = text.find(exc.text)
        line = text.count("\n", 0, at) + 1 if at >= 0 else 1
        column = at - text.rfind("\n", 0, at) if at >= 0 else None
        raise InputError([Problem(file, line, column, "", exc.message)]) from None
    except json.JSONDecodeError as exc:
        raise InputError([Problem(file, exc.lineno, exc.colno, "", f"not valid JSON: {exc.msg}")]) from None
    except RecursionError:
        raise InputError([Problem(file, 1, None, "", f"nesting deeper than {MAX_DEPTH} levels")]) from None
    except ValueError as exc:
        m = _JSON_CONSTANT.search(text)
        line = text.count("\n", 0, m.start()) + 1 if m else 1
        column = m.start() - text.rfind("\n", 0, m.start()) if m else None
        raise InputError([Problem(file, line, column, "", f"not valid JSON: {exc}")]) from None
    if repeated or _deepest(data) > MAX_DEPTH:
        _, _, problems = _json_positions(text, file)
        if problems:
            raise InputError(problems)
    return Document(file, data, index=partial(_index_later, _json_index, _packed(text), file))


def _deepest(data: Any) -> int:
    """Levels of nested mappings and lists in ``data`` (0 for a plain value); stops counting past MAX_DEPTH."""
    level, depth = [data] if isinstance(data, (dict, list)) else [], 0
    while level and depth <= MAX_DEPTH:
        depth += 1
        level = [c for node in level for c in (node.values() if isinstance(node, dict) else node)
                 if isinstance(c, (dict, list))]
    return depth


def _json_index(text: str, file: str) -> PositionIndex:
    keys, values, _ = _json_positions(text, file)
    return keys, values, {}


def _json_positions(text: str, file: str) -> tuple[dict[PathKey, Position], dict[PathKey, Position], list[Problem]]:
    """Positions of keys and values in valid JSON ``text``; duplicate keys and over-deep nesting as problems.

    Walks the tokens of text that ``json.loads`` has already accepted, so it only has to follow the structure:
    a key is a string token carrying its colon, and commas never need a token since array items are counted.
    """
    starts = [0] + [m.end() for m in _NEWLINE.finditer(text)]
    ends = starts[1:] + [len(text) + 1]
    line, line_start, line_end = 1, 0, ends[0]  # the line of the last token; bisect only when a token leaves it
    keys: dict[PathKey, Position] = {}
    values: dict[PathKey, Position] = {}
    problems: list[Problem] = []
    # one frame per open container: [path, is_object, next index (arrays) or seen keys (objects)]
    stack: list[list[Any]] = []
    frame: list[Any] = [(), False, 0]
    here: PathKey = ()
    for token in _JSON_TOKEN.finditer(text):
        t = token.group()
        c = t[0]
        if c == "}" or c == "]":
            stack.pop()
            frame = stack[-1] if stack else frame
            continue
        i = token.start()
        if i >= line_end:
            line = bisect.bisect_right(starts, i, line)
            line_start, line_end = starts[line - 1], ends[line - 1]
        column = i - line_start + 1
        if c == '"' and t[-1] == ":":
            t = t[:t.rindex('"') + 1]
            key = json.loads(t) if "\\" in t else t[1:-1]
            here = frame[0] + (key,)
            if key in frame[2]:
                problems.append(Problem(file, line, column, ".".join(map(str, here)),
                                        f"duplicate key {key!r} (first at line {frame[2][key]}); each name once"))
            else:
                frame[2][key] = line
                keys[here] = (line, column)
            continue
        if stack and not frame[1]:
            here = frame[0] + (frame[2],)
            frame[2] += 1
        values[here] = (line, column)
        if c == "{" or c == "[":
            if len(stack) >= MAX_DEPTH:
                problems.append(Problem(file, line, column, "", f"nesting deeper than {MAX_DEPTH} levels"))
                return keys, values, problems
            is_object = c == "{"
            frame = [here, is_object, {} if is_object else 0]
            stack.append(frame)
    return keys, values, problems
