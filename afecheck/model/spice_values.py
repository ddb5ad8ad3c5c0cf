"""Values on SPICE cards: parameter scopes, numbers and expressions, ``NAME=VALUE`` tails, V source specs.

Problems are raised as :class:`CardError` (the card is skipped, reading goes on) or :class:`NetlistStop`
(reading cannot go on: a parameter that depends on itself, a limit), each carrying its file:line problem.
"""

from __future__ import annotations

import re

from afecheck.errors import Problem
from afecheck.model.expr import ExpressionError, evaluate, parse_number
from afecheck.model.spice_cards import Token

_TRANSIENT = ("sin", "pulse", "pwl", "exp", "sffm", "am", "trnoise", "trrandom")


class NetlistStop(Exception):  # noqa: N818 - reading stops; not a fault of the program
    """Reading cannot go on (a limit, a loop); carries the problem."""

    def __init__(self, problem: Problem):
        super().__init__(str(problem))
        self.problem = problem


class CardError(NetlistStop):
    """One card cannot be read; reading goes on with the next card."""


class Params:
    """Parameter scope: lazily evaluated expressions with loop detection, then the enclosing scope."""

    def __init__(self, parent: Params | None, where: str):
        self.parent = parent
        self.where = where
        self.exprs: dict[str, tuple[Token, Params]] = {}
        self.values: dict[str, float] = {}
        self.busy: list[str] = []

    def define(self, name: Token, value: Token, scope: Params | None = None) -> None:
        self.exprs[name.low] = (value, scope or self)
        self.values.pop(name.low, None)

    def lookup(self, name: str) -> float:
        scope: Params | None = self
        while scope is not None:
            if name in scope.exprs:
                return scope.value(name)
            scope = scope.parent
        raise ExpressionError(f"unknown parameter {name!r}")

    def value(self, name: str) -> float:
        if name in self.values:
            return self.values[name]
        token, scope = self.exprs[name]
        if name in self.busy:
            chain = " -> ".join(self.busy[self.busy.index(name):] + [name])
            raise NetlistStop(Problem(token.file, token.line, token.column, "",
                                f"parameter {name!r} depends on itself ({chain})"))
        self.busy.append(name)
        try:
            v = number(token, scope, bare_expression=True)
        finally:
            self.busy.pop()
        self.values[name] = v
        return v


def number(token: Token, scope: Params, bare_expression: bool = False) -> float:
    """A value token: a SPICE number, ``{expr}``, ``'expr'`` (or, in ``.param``, a bare expression)."""
    text = token.text
    try:
        if text[:1] in "{'":
            return evaluate(text[1:-1], scope.lookup)
        try:
            return parse_number(text)
        except ExpressionError:
            if bare_expression:
                return evaluate(text, scope.lookup)
            if re.fullmatch(r"[A-Za-z_][A-Za-z0-9_]*", text):
                raise ExpressionError(f"{text!r} is not a number; to use parameter {text} write {{{text}}}") from None
            raise
    except ExpressionError as exc:
        raise CardError(Problem(token.file, token.line, token.column, "", str(exc))) from None


def split_params(tokens: list[Token] | tuple[Token, ...], params_only: bool = False
                  ) -> tuple[list[Token], list[tuple[Token, Token]] | None]:
    """(leading plain tokens, NAME=VALUE pairs) of a card tail; ``params:`` is skipped; None on a bad pair."""
    toks = [t for t in tokens if t.low != "params:"]
    plain: list[Token] = []
    pairs: list[tuple[Token, Token]] = []
    i = 0
    while i < len(toks):
        if i + 1 < len(toks) and toks[i + 1].text == "=":
            if i + 2 >= len(toks) or toks[i + 2].text in ("=", "(", ")", ","):
                return plain, None
            pairs.append((toks[i], toks[i + 2]))
            i += 3
            continue
        if pairs or (params_only and toks[i].text != ","):
            return plain, None
        if toks[i].text != ",":
            plain.append(toks[i])
        i += 1
    return plain, pairs


def source_spec(toks: list[Token], params: Params
                ) -> tuple[float, float, tuple[float, float, float] | None, list[str]]:
    """(DC value, AC magnitude, SIN (offset, amplitude, frequency) or None, notes) of a V card's tail."""
    notes: list[str] = []
    dc: float | None = None
    ac = 0.0
    sine: tuple[float, float, float] | None = None
    i = 3
    name = toks[0].text
    while i < len(toks):
        t = toks[i]
        low = t.low
        if low == "dc":
            if i + 1 >= len(toks):
                raise CardError(_at(t, f"{name}: DC needs a value"))
            dc = number(toks[i + 1], params)
            i += 2
        elif low == "ac":
            i += 1
            ac = 1.0
            if i < len(toks) and is_value(toks[i]):
                ac = abs(number(toks[i], params))
                i += 1
                if i < len(toks) and is_value(toks[i]):
                    i += 1
        elif low in _TRANSIENT or low.startswith(tuple(w + "(" for w in _TRANSIENT)):
            args, i = function_args(toks, i + 1)
            values = [number(a, params) for a in args]
            if low == "sin":
                if len(values) < 2:
                    raise CardError(_at(t, f"{name}: SIN needs at least an offset and an amplitude"))
                sine = (values[0], abs(values[1]), values[2] if len(values) > 2 else 0.0)
            else:
                notes.append(f"{t.file}:{t.line}: {name}: the {t.text.upper()} waveform is ignored; its DC value is "
                             "used")
        elif low in ("distof1", "distof2"):
            _, i = function_args(toks, i + 1)
        elif dc is None and i == 3 and is_value(t):
            dc = number(t, params)
            i += 1
        else:
            raise CardError(_at(t, f"{name}: unexpected {t.text!r}; expected DC value, AC magnitude or SIN(...)"))
    if dc is None:
        dc = sine[0] if sine is not None else 0.0
    return dc, ac, sine, notes


def _at(token: Token, message: str) -> Problem:
    return Problem(token.file, token.line, token.column, "", message)


def is_value(t: Token) -> bool:
    return t.text[:1] in "{'" or bool(re.match(r"[-+]?[0-9.]", t.text))


def function_args(toks: list[Token], i: int) -> tuple[list[Token], int]:
    """Arguments of ``SIN(...)`` or of ``SIN a b c`` (values up to the next keyword)."""
    args: list[Token] = []
    if i < len(toks) and toks[i].text == "(":
        i += 1
        while i < len(toks) and toks[i].text != ")":
            if toks[i].text != ",":
                args.append(toks[i])
            i += 1
        return args, i + 1
    while i < len(toks) and is_value(toks[i]):
        args.append(toks[i])
        i += 1
    return args, i
