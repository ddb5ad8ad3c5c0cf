"""Quantity and tolerance texts are remembered once read (a design repeats a few values over its channels): a
remembered text reads as a fresh parse does, a refused text is refused every time, and the memory stays bounded."""

from __future__ import annotations

import pytest

from afecheck.model import units
from afecheck.model.units import UnitError, parse_quantity, parse_tolerance


def test_a_remembered_text_reads_as_a_fresh_parse() -> None:
    units._quantities.clear()
    first = parse_quantity("4k7", "ohm")
    assert ("4k7", "ohm") in units._quantities
    assert parse_quantity("4k7", "ohm") == first == 4700.0  # IEC 60062: 4k7 is 4.7 kΩ
    assert parse_quantity("4k7", "ohm") == units._parse_quantity("4k7", "ohm")
    assert parse_quantity("100 dB", "1") == pytest.approx(1e5)  # the same text, another unit: its own entry
    units._tolerances.clear()
    assert parse_tolerance("1%") == 0.01 and parse_tolerance("1%") == 0.01 and "1%" in units._tolerances


@pytest.mark.parametrize("text, unit", [("4m7", "ohm"), ("10 kV", "ohm"), ("", "V")])
def test_a_refused_text_is_refused_every_time(text: str, unit: str) -> None:
    for _ in range(2):
        with pytest.raises(UnitError):
            parse_quantity(text, unit)
    assert (text, unit) not in units._quantities


def test_the_memory_is_bounded(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(units, "_MEMO_SIZE", 3)
    units._quantities.clear()
    for i in range(10):
        assert parse_quantity(f"{i} k", "ohm") == i * 1e3
    assert len(units._quantities) <= 3
