"""SPICE numbers and ``{...}`` expressions: our parser against ngspice evaluating the same netlist."""

from __future__ import annotations

import math
import re
from pathlib import Path

import pytest
from ngspice_harness import needs_ngspice, parse_print, run_ngspice

from afecheck.model.expr import ExpressionError, evaluate, parse_number
from afecheck.model.load import load_design

# (text, value): SPICE 3 scale factors as the ngspice manual lists them (chapter "Expressions and values")
NUMBERS = [
    ("10k", 1e4), ("4.7u", 4.7e-6), ("2.2Meg", 2.2e6), ("2.2MEG", 2.2e6), ("1M", 1e-3), ("1m", 1e-3),
    ("3mil", 3 * 25.4e-6), ("1e-3", 1e-3), ("1.5e3k", 1.5e6), ("100pF", 100e-12), ("1F", 1e-15),
    ("10kOhm", 1e4), ("5V", 5.0), ("-2.5", -2.5), ("+3", 3.0), (".5n", 0.5e-9), ("1T", 1e12), ("2g", 2e9),
]

EXPRESSIONS = ["2*RB", "RB/3 + 1k", "(RB + 1k) * 2 - 500", "2^10", "2**3**2", "-2^2", "sqrt(16) + abs(-3)",
               "exp(1) * ln(10)", "log10(1000)", "max(RB, 5k) + min(1, 2)", "pow(2, 0.5)", "1e3 * 3",
               "int(7.9) + floor(-1.5) + ceil(1.2)", "atan(1) * 4", "1 - -1", "2^3^2", "2*-3",
               "2^-1 + 3**2", "10k / 4", "RB * 1e-3 ^ 2"]


@pytest.mark.parametrize(("text", "value"), NUMBERS)
def test_numbers(text: str, value: float) -> None:
    assert parse_number(text) == pytest.approx(value, rel=1e-15)


@pytest.mark.parametrize("text", ["4k7", "1.2.3", "k", "", "--1", "1e999", "2R2"])
def test_bad_numbers(text: str) -> None:
    with pytest.raises(ExpressionError):
        parse_number(text)


def test_expression_grammar() -> None:
    params = {"rb": 2e3}
    assert evaluate("2*RB", params.__getitem__) == 4e3
    assert evaluate("2^3^2", params.__getitem__) == 64  # (2^3)^2: ngspice 39 evaluates powers left to right
    assert evaluate("2^-1", params.__getitem__) == 0.5
    assert evaluate("-2^2", params.__getitem__) == -4
    assert evaluate("max(1, 2)", params.__getitem__) == 2
    for bad, words in [("2*", "ends too early"), ("(1", "')' expected"), ("foo(1)", "unknown function"),
                       ("max(1)", "takes 2 arguments"), ("1/0", "division by zero"), ("sqrt(-1)", "sqrt"),
                       ("1 2", "unexpected"), ("x", "KeyError")]:
        with pytest.raises((ExpressionError, KeyError), match=re.escape(words) if words != "KeyError" else None):
            evaluate(bad, params.__getitem__)


def test_never_python_eval() -> None:
    with pytest.raises(ExpressionError):
        evaluate("__import__('os').system('true')", lambda name: 1.0)
    with pytest.raises(ExpressionError):
        evaluate("[1][0]", lambda name: 1.0)


@needs_ngspice
def test_expressions_equal_ngspice(tmp_path: Path) -> None:
    """Each expression is a source voltage; ngspice prints v(e<i>), afecheck reads the rail voltage."""
    lines = ["expression check", ".param RB=2k"]
    lines += [f"V{i} e{i} 0 {{{text}}}" for i, text in enumerate(EXPRESSIONS)]
    lines += [f"R{i} e{i} 0 1k" for i in range(len(EXPRESSIONS))]
    lines += [".control", "set numdgt=15", "op"]
    lines += [f"print v(e{i})" for i in range(len(EXPRESSIONS))]
    lines += ["quit", ".endc", ".end"]
    deck = "\n".join(lines) + "\n"
    path = tmp_path / "expr.cir"
    path.write_text(deck, encoding="ascii")
    theirs = parse_print(run_ngspice(deck, tmp_path / "run" if (tmp_path / "run").mkdir() is None else None)[0])
    rails = load_design(path).design.rails
    for i, text in enumerate(EXPRESSIONS):
        assert rails[f"e{i}"].voltage == pytest.approx(theirs[f"v(e{i})"], rel=1e-12), text
    assert math.isclose(rails["e0"].voltage, 4e3)
