"""SPICE numbers and parameter expressions: ``4.7k``, ``10Meg``, ``{2*RB + 1k}``, read by our own small parser.

Numbers follow SPICE 3: an optional scale factor (``f p n u m k meg g t``, ``mil``; any case, so ``M`` is
milli) and any unit letters after it, which are ignored. Expressions are parsed by recursive descent:
numbers, parameter names, ``+ - * /``, ``^`` or ``**`` (power, left to right as in ngspice), unary signs, parentheses
and the functions in :data:`FUNCTIONS`. Nothing is ever handed to Python's ``eval``.
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable

SCALE = {"t": 1e12, "g": 1e9, "meg": 1e6, "k": 1e3, "mil": 25.4e-6, "m": 1e-3, "u": 1e-6, "n": 1e-9,
         "p": 1e-12, "f": 1e-15}
"""SPICE 3 scale factors (case-insensitive); ``meg`` and ``mil`` are tried before ``m``."""

MAX_EXPRESSION_CHARS = 2000
"""Longest expression read; a schematic's parameter is a few dozen characters."""
MAX_NESTING = 50
"""Deepest nesting of parentheses and function calls in one expression."""

_NUMBER = re.compile(r"[0-9]+(?:\.[0-9]*)?(?:[eE][-+]?[0-9]+)?|\.[0-9]+(?:[eE][-+]?[0-9]+)?")
_SUFFIX = re.compile(r"(meg|mil|[tgkmunpf])?([a-z]*)", re.I)
_NAME = re.compile(r"[A-Za-z_][A-Za-z0-9_.]*")


class ExpressionError(ValueError):
    """An expression or number that cannot be read; the message says what and where."""


def _finite(fn: Callable[..., float]) -> Callable[..., float]:
    def call(*args: float) -> float:
        try:
            return float(fn(*args))
        except (ValueError, OverflowError, ZeroDivisionError) as exc:
            raise ExpressionError(f"{exc}") from None
    return call


FUNCTIONS: dict[str, tuple[int, Callable[..., float]]] = {
    "sqrt": (1, _finite(math.sqrt)),
    "abs": (1, _finite(abs)),
    "exp": (1, _finite(math.exp)),
    "ln": (1, _finite(math.log)),
    "log": (1, _finite(math.log)),
    "log10": (1, _finite(math.log10)),
    "sin": (1, _finite(math.sin)),
    "cos": (1, _finite(math.cos)),
    "tan": (1, _finite(math.tan)),
    "atan": (1, _finite(math.atan)),
    "floor": (1, _finite(math.floor)),
    "ceil": (1, _finite(math.ceil)),
    "int": (1, _finite(math.trunc)),
    "min": (2, _finite(min)),
    "max": (2, _finite(max)),
    "pow": (2, _finite(math.pow)),
}
"""Functions an expression may call: name -> (number of arguments, function). ``log`` is natural, as in ngspice."""


def parse_number(text: str) -> float:
    """A SPICE number with optional scale factor and ignored unit letters: ``10k``, ``1uF``, ``2.2Meg``, ``1e-3``.

    Raises ExpressionError for anything else, and for digits after a scale factor (``4k7``), which SPICE
    would read as ``4k`` while the writer almost surely meant 4.7k.
    """
    value, rest = _number_prefix(text.strip())
    if rest:
        raise ExpressionError(f"{text!r} is not a number (expected e.g. 10k, 4.7u, 2.2Meg, 1e-3)")
    return value


def _number_prefix(text: str) -> tuple[float, str]:
    """(value, what follows) for the number at the start of ``text``, sign included."""
    sign = 1.0
    body = text
    if body[:1] in "+-" and body:
        sign = -1.0 if body[0] == "-" else 1.0
        body = body[1:]
    m = _NUMBER.match(body)
    if not m:
        raise ExpressionError(f"{text!r} is not a number (expected e.g. 10k, 4.7u, 2.2Meg, 1e-3)")
    digits = m.group()
    s = _SUFFIX.match(body, m.end())
    scale_word, unit = (s.group(1) or "").lower(), s.group(2)
    rest = body[s.end():]
    if rest[:1].isdigit() or rest[:1] == ".":
        raise ExpressionError(
            f"{text!r}: digits after the scale factor are ignored by SPICE (it reads {digits}{scale_word}); "
            f"write the value with a decimal point, e.g. {_hint(digits, scale_word, rest)}")
    value = sign * float(digits) * SCALE.get(scale_word, 1.0)
    if not math.isfinite(value):
        raise ExpressionError(f"{text!r} is out of range")
    _ = unit
    return value, rest


def _hint(digits: str, scale: str, rest: str) -> str:
    more = re.match(r"[0-9]+", rest)
    return f"{digits}.{more.group() if more else ''}{scale}" if "." not in digits else f"{digits}{scale}"


class _Parser:
    """Recursive descent over one expression; ``lookup(name)`` gives a parameter's value."""

    def __init__(self, text: str, lookup: Callable[[str], float]):
        self.text = text
        self.pos = 0
        self.lookup = lookup
        self.depth = 0

    def fail(self, what: str) -> ExpressionError:
        return ExpressionError(f"in {{{self.text}}} at character {self.pos + 1}: {what}")

    def skip(self) -> None:
        while self.pos < len(self.text) and self.text[self.pos] in " \t":
            self.pos += 1

    def peek(self, token: str) -> bool:
        self.skip()
        return self.text.startswith(token, self.pos)

    def take(self, token: str) -> bool:
        if self.peek(token):
            self.pos += len(token)
            return True
        return False

    def parse(self) -> float:
        value = self.sum()
        self.skip()
        if self.pos != len(self.text):
            raise self.fail(f"unexpected {self.text[self.pos]!r}")
        return value

    def sum(self) -> float:
        value = self.product()
        while True:
            if self.take("+"):
                value = self.checked(value + self.product())
            elif self.take("-"):
                value = self.checked(value - self.product())
            else:
                return value

    def product(self) -> float:
        value = self.unary()
        while True:
            if self.peek("**"):
                return value
            if self.take("*"):
                value = self.checked(value * self.unary())
            elif self.take("/"):
                divisor = self.unary()
                if divisor == 0:
                    raise self.fail("division by zero")
                value = self.checked(value / divisor)
            else:
                return value

    def unary(self) -> float:
        if self.take("-"):
            return -self.unary()
        if self.take("+"):
            return self.unary()
        return self.power()

    def power(self) -> float:
        """``a ^ b ^ c`` is ``(a ^ b) ^ c``, left to right, as ngspice evaluates it; an exponent may carry a sign."""
        base = self.atom()
        while self.take("^") or self.take("**"):
            sign = 1.0
            while True:
                if self.take("-"):
                    sign = -sign
                elif not self.take("+"):
                    break
            exponent = sign * self.atom()
            try:
                base = self.checked(math.pow(base, exponent))
            except OverflowError:
                raise self.fail(f"{base:g} ^ {exponent:g}: the result is out of range") from None
            except ValueError:
                raise self.fail(f"{base:g} ^ {exponent:g} has no real value") from None
        return base

    def checked(self, value: float) -> float:
        if not math.isfinite(value):
            raise self.fail("the result is out of range")
        return value

    def atom(self) -> float:
        self.skip()
        if self.pos >= len(self.text):
            raise self.fail("the expression ends too early")
        if self.take("("):
            self.enter()
            value = self.sum()
            if not self.take(")"):
                raise self.fail("')' expected")
            self.depth -= 1
            return value
        c = self.text[self.pos]
        if c.isdigit() or c == ".":
            m = _NUMBER.match(self.text, self.pos)
            if not m:
                raise self.fail(f"unexpected {c!r}")
            end = _SUFFIX.match(self.text, m.end()).end()
            try:
                value, rest = _number_prefix(self.text[self.pos:end])
            except ExpressionError as exc:
                raise self.fail(str(exc)) from None
            self.pos = end - len(rest)
            if self.pos < len(self.text) and self.text[self.pos].isdigit():
                raise self.fail("digits after a scale factor")
            return value
        m = _NAME.match(self.text, self.pos)
        if not m:
            raise self.fail(f"unexpected {c!r}")
        name = m.group().lower()
        self.pos = m.end()
        if self.take("("):
            return self.call(name)
        return self.lookup(name)

    def call(self, name: str) -> float:
        if name not in FUNCTIONS:
            raise self.fail(f"unknown function {name!r}; known: {', '.join(sorted(FUNCTIONS))}")
        arity, fn = FUNCTIONS[name]
        self.enter()
        args = [self.sum()]
        while self.take(","):
            args.append(self.sum())
        if not self.take(")"):
            raise self.fail("')' expected")
        self.depth -= 1
        if len(args) != arity:
            raise self.fail(f"{name}() takes {arity} argument{'s' if arity > 1 else ''}, got {len(args)}")
        try:
            return self.checked(fn(*args))
        except ExpressionError as exc:
            raise self.fail(f"{name}(): {exc}") from None

    def enter(self) -> None:
        self.depth += 1
        if self.depth > MAX_NESTING:
            raise self.fail(f"nested deeper than {MAX_NESTING} levels")


def evaluate(text: str, lookup: Callable[[str], float]) -> float:
    """The value of expression ``text`` (without its braces); ``lookup`` resolves lower-cased parameter names."""
    if len(text) > MAX_EXPRESSION_CHARS:
        raise ExpressionError(f"expression longer than {MAX_EXPRESSION_CHARS} characters")
    if not text.strip():
        raise ExpressionError("empty expression {}")
    return _Parser(text, lookup).parse()
