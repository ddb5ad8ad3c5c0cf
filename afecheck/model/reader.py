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
from dataclasses import dataclass, field
from itertools import accumulate
from pathlib import Path
from typing import Any

import yaml

from afecheck.errors import InputError, Problem

PathKey = tuple[str | int, ...]
"""Mapping keys appear as strings (``"1"`` for a YAML ``1:`` key), list positions as ints."""
Position = tuple[int, int]

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


def _plain_tag(value: str, implicit: tuple[bool, bool]) -> str:
    """Tag of an untagged scalar: the YAML resolver's answer, narrowed to what YAML 1.2 also reads."""
    tag = _RESOLVER.resolve(yaml.ScalarNode, value, implicit)
    if tag in _YAML12 and not _YAML12[tag].match(value):
        return f"{_YAML}str"
    if tag == f"{_YAML}int" and _OCTAL_LOOKING.match(value):
        return _DECIMAL
    return tag


@dataclass(frozen=True)
class Document:
    """Data read from one file with the 1-based (line, column) of each key and each value by key path."""

    file: str
    data: Any
    keys: dict[PathKey, Position]
    values: dict[PathKey, Position]
    texts: dict[PathKey, str] = field(default_factory=dict)
    """Source text of each YAML scalar value, for fields whose spelling matters (``0123`` is not 123)."""
    origins: dict[PathKey, str] = field(default_factory=dict)
    """File of a key path that lies in another file than ``file`` (a netlist's includes, its map file)."""
    defaults: frozenset[PathKey] = frozenset()
    """Intent entries (section, net) that an intent file may refine rather than conflict with."""
    notes: tuple[str, ...] = ()
    """What reading skipped on purpose (a netlist's analysis lines), for the user to see."""

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
    _refuse_lone_surrogates(doc)
    return doc


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
    """A mapping or sequence being built."""

    __slots__ = ("value", "path", "key", "anchor", "seen", "size", "log")

    def __init__(self, value: dict | list, path: PathKey, anchor: str | None):
        self.value = value
        self.path = path
        self.key: Any = _NO_KEY
        self.anchor = anchor
        self.seen: dict[str, int] = {}
        self.size = 1
        self.log: list[tuple[bool, PathKey, Position]] = []


class _YamlBuilder:
    """Builds plain data from parser events without recursion, enforcing the limits and refusing tags."""

    def __init__(self, file: str):
        self.file = file
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

    def feed(self, event: yaml.Event) -> None:
        if isinstance(event, yaml.DocumentStartEvent):
            self.documents += 1
            if self.documents > 1:
                raise _FatalError(_mark(self.file, event.start_mark, "more than one YAML document; expected one"))
        elif isinstance(event, yaml.ScalarEvent):
            self._scalar(event)
        elif isinstance(event, yaml.AliasEvent):
            self._alias(event)
        elif isinstance(event, (yaml.MappingStartEvent, yaml.SequenceStartEvent)):
            self._start(event)
        elif isinstance(event, (yaml.MappingEndEvent, yaml.SequenceEndEvent)):
            self._end()

    def _record(self, is_key: bool, path: PathKey, pos: Position) -> None:
        """Store a key's or value's position, and log it in every open anchored container (for its aliases)."""
        (self.keys if is_key else self.values)[path] = pos
        for frame in self.recording:
            frame.log.append((is_key, path[len(frame.path):], pos))

    def _path_for_child(self, mark: Any) -> PathKey | None:
        """Path of the node starting now, or None when it is a mapping key."""
        if not self.stack:
            return ()
        frame = self.stack[-1]
        if isinstance(frame.value, list):
            return frame.path + (len(frame.value),)
        if frame.key is _NO_KEY:
            return None
        return frame.path + (_path_key(frame.key),)

    def _attach(self, value: Any, path: PathKey, mark: Any, size: int) -> None:
        self._record(False, path, (mark.line + 1, mark.column + 1))
        if not self.stack:
            self.root = value
            return
        frame = self.stack[-1]
        frame.size += size
        if isinstance(frame.value, list):
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
        path = frame.path + (_path_key(value),)
        if text in frame.seen:
            self.problems.append(_mark(
                self.file, mark, f"duplicate key {text!r} (first at line {frame.seen[text]}); each name once",
                path))
            frame.key = _DUPLICATE
            return
        frame.seen[text] = mark.line + 1
        frame.key = value
        self._record(True, path, (mark.line + 1, mark.column + 1))

    def _scalar(self, event: yaml.ScalarEvent) -> None:
        tag = event.tag
        if tag is None:
            tag = _plain_tag(event.value, event.implicit)
        elif tag == "!":
            tag = f"{_YAML}str"
        elif tag not in _SCALAR_TAGS:
            self.problems.append(_mark(self.file, event.start_mark, _tag_refused(tag),
                                       self._path_for_child(event.start_mark) or ()))
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
        path = self._path_for_child(event.start_mark)
        if path is not None:
            self.texts[path] = event.value
        self._node(value, event.anchor, event.start_mark, 1)

    def _node(self, value: Any, anchor: str | None, mark: Any, size: int) -> None:
        path = self._path_for_child(mark)
        if path is None:
            self._take_key(value, mark)
            return
        if anchor is not None:
            self.anchors[anchor] = (value, size, [])
        self._attach(value, path, mark, size)

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
        path = self._path_for_child(event.start_mark)
        if path is None:
            self._take_key(value, event.start_mark)
            return
        self._attach(value, path, event.start_mark, size)
        for is_key, relative, pos in log:
            self._record(is_key, path + relative, pos)

    def _start(self, event: yaml.CollectionStartEvent) -> None:
        is_map = isinstance(event, yaml.MappingStartEvent)
        allowed = (None, "!", f"{_YAML}map" if is_map else f"{_YAML}seq")
        path = self._path_for_child(event.start_mark)
        if path is None:
            raise _FatalError(_mark(self.file, event.start_mark, "a mapping key must be a plain string or number",
                              self.stack[-1].path))
        if event.tag not in allowed:
            self.problems.append(_mark(self.file, event.start_mark, _tag_refused(event.tag), path))
        if len(self.stack) >= MAX_DEPTH:
            raise _FatalError(_mark(self.file, event.start_mark, f"nesting deeper than {MAX_DEPTH} levels"))
        value: dict | list = {} if is_map else []
        self._record(False, path, (event.start_mark.line + 1, event.start_mark.column + 1))
        frame = _Frame(value, path, event.anchor)
        self.stack.append(frame)
        if event.anchor is not None:
            self.recording.append(frame)

    def _end(self) -> None:
        frame = self.stack.pop()
        if frame.anchor is not None:
            self.recording.pop()
            self.anchors[frame.anchor] = (frame.value, frame.size, frame.log)
        if not self.stack:
            self.root = frame.value
            return
        parent = self.stack[-1]
        parent.size += frame.size
        if isinstance(parent.value, list):
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
    builder = _YamlBuilder(file)
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
    return Document(file, builder.root, builder.keys, builder.values, builder.texts)


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
    """Parse strictly (no NaN/Infinity), then walk the text once more to record positions and duplicates."""
    try:
        data = json.loads(text, parse_constant=_refuse_constant, parse_int=_json_int, parse_float=_json_float)
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
    keys, values, problems = _json_positions(text, file)
    if problems:
        raise InputError(problems)
    return Document(file, data, keys, values)


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
