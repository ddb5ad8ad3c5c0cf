"""Reading values: IEC 60062 letter-and-digit codes, SI prefixes and units, tolerances, temperatures.

Check values come from RULES-REFERENCE R5h (the IEC 60062 examples, tagged [IEC60062]), the SI
prefixes and kelvin offset ([SI]) and the decibel definition for voltage gain, 20·log10 (common practice).
"""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from pydantic import ValidationError

from afecheck.model.schema import Capacitor, Resistor
from afecheck.model.units import (
    UnitError,
    format_si,
    parse_quantity,
    parse_temperature_c,
    parse_tolerance,
    split_tolerance_code,
)

# [IEC60062] RULES-REFERENCE R5h check values: the letter stands for the decimal point and the multiplier.
IEC60062_RESISTORS = [
    ("R47", 0.47),
    ("4R7", 4.7),
    ("470R", 470.0),
    ("4K7", 4.7e3),
    ("47K3", 47.3e3),
    ("4M7", 4.7e6),
    ("1R0", 1.0),
    ("2R2", 2.2),
    ("4k7", 4.7e3),
]
IEC60062_CAPACITORS = [
    ("4n7", 4.7e-9),
    ("10p", 10e-12),
    ("1µ0", 1e-6),
    ("1u0", 1e-6),
]


@pytest.mark.parametrize(("text", "ohms"), IEC60062_RESISTORS)
def test_iec60062_resistor_codes(text: str, ohms: float) -> None:
    assert parse_quantity(text, "ohm") == pytest.approx(ohms, rel=1e-15)  # [IEC60062] R5h


@pytest.mark.parametrize(("text", "farads"), IEC60062_CAPACITORS)
def test_iec60062_capacitor_codes(text: str, farads: float) -> None:
    assert parse_quantity(text, "F") == pytest.approx(farads, rel=1e-15)  # [IEC60062] R5h


def test_codes_are_scaled_in_decimal_so_they_equal_the_written_float() -> None:
    # 4.7 × 1e-9 in binary floating point is 4.700000000000001e-09; the code means the number 4.7e-9
    assert parse_quantity("4n7", "F") == 4.7e-9
    assert parse_quantity("4.7 nF", "F") == 4.7e-9
    assert parse_quantity("R47", "ohm") == 0.47


def test_milliohm_letter_is_l() -> None:
    assert parse_quantity("1L5", "ohm") == pytest.approx(1.5e-3)  # [IEC60062] R5h: L = 1e-3 on resistors


@pytest.mark.parametrize(
    ("code", "letter_fraction"),
    [("4K7B", 0.001), ("4K7C", 0.0025), ("4K7D", 0.005), ("4K7F", 0.01), ("4K7G", 0.02), ("4K7J", 0.05),
     ("4K7K", 0.10), ("4K7M", 0.20)],
)
def test_iec60062_tolerance_letters_after_a_resistor_code(code: str, letter_fraction: float) -> None:
    # [IEC60062] R5h tolerance letters B ±0.1 %, C ±0.25 %, D ±0.5 %, F ±1 %, G ±2 %, J ±5 %, K ±10 %, M ±20 %
    r = Resistor.model_validate({"kind": "resistor", "value": code, "pins": {"1": "A", "2": "B"}})
    assert r.value == pytest.approx(4.7e3)
    assert r.tolerance == pytest.approx(letter_fraction)


def test_4k7j_is_4_7_kilohm_5_percent() -> None:
    r = Resistor.model_validate({"kind": "resistor", "value": "4K7J", "pins": {"1": "A", "2": "B"}})
    assert (r.value, r.tolerance) == (pytest.approx(4700.0), pytest.approx(0.05))  # [IEC60062] R5h


def test_position_decides_between_multiplier_and_tolerance_letter() -> None:
    # [IEC60062] R5h pitfall: K and M are both multipliers and tolerance letters; position decides
    assert split_tolerance_code("47K", "ohm") is None
    assert parse_quantity("47K", "ohm") == 47e3
    assert split_tolerance_code("47KJ", "ohm") == ("47K", 0.05)
    assert split_tolerance_code("4M7M", "ohm") == ("4M7", 0.20)
    assert split_tolerance_code("4n7K", "F") == ("4n7", 0.10)
    assert split_tolerance_code("10nF", "F") is None  # F after a capacitor value is the farad


def test_capacitor_code_with_tolerance_letter() -> None:
    c = Capacitor.model_validate({"kind": "capacitor", "value": "4n7J", "pins": {"1": "A", "2": "B"}})
    assert (c.value, c.tolerance) == (pytest.approx(4.7e-9), pytest.approx(0.05))  # [IEC60062] R5h


def test_tolerance_letter_and_tolerance_key_must_agree() -> None:
    ok = Resistor.model_validate({"kind": "resistor", "value": "4K7J", "tolerance": "5%", "pins": {"1": "A", "2": "B"}})
    assert ok.tolerance == pytest.approx(0.05)
    with pytest.raises(ValidationError, match="keep one of them"):
        Resistor.model_validate({"kind": "resistor", "value": "4K7J", "tolerance": "1%", "pins": {"1": "A", "2": "B"}})


def test_tolerance_letter_outside_a_component_value_is_refused() -> None:
    with pytest.raises(UnitError, match="only in a component's value"):
        parse_quantity("4K7J", "ohm")


@pytest.mark.parametrize(
    ("text", "unit", "si"),
    [
        ("10 kΩ", "ohm", 1e4),  # [SI] k = 1e3
        ("10 k\u2126", "ohm", 1e4),  # the ohm sign U+2126 as well as Greek capital omega
        ("10kohm", "ohm", 1e4),
        ("10 Mohm", "ohm", 1e7),  # [SI] M = 1e6
        ("10M", "ohm", 1e7),
        ("1Meg", "ohm", 1e6),  # SPICE spelling of mega (common practice)
        ("10 mΩ", "ohm", 1e-2),  # [SI] m = 1e-3, unambiguous with the unit written
        ("4.7uF", "F", 4.7e-6),  # [SI] u/µ = 1e-6
        ("4.7 µF", "F", 4.7e-6),
        ("100 mV", "V", 0.1),
        ("-5 V", "V", -5.0),
        ("2.5", "V", 2.5),
        ("1 MHz", "Hz", 1e6),
        ("1.5 GHz", "Hz", 1.5e9),  # [SI] G = 1e9
        ("0.5 V/us", "V/s", 5e5),  # 1 V/µs = 1e6 V/s [SI]
        ("13 V/µs", "V/s", 13e6),
        ("20 nV/rtHz", "V/rtHz", 20e-9),
        ("1 pA/√Hz", "A/rtHz", 1e-12),
        ("2 uV/K", "V/K", 2e-6),
        ("3950 K", "K", 3950.0),
        ("100 dB", "1", 1e5),  # 20·log10(1e5) = 100 dB (voltage gain, common practice)
        ("90dB", "1", 10 ** 4.5),
        ("6 dB", "1", 10 ** 0.3),
        ("1e3", "ohm", 1e3),
    ],
)
def test_si_prefixes_and_unit_symbols(text: str, unit: str, si: float) -> None:
    assert parse_quantity(text, unit) == pytest.approx(si, rel=1e-12)


def test_numbers_pass_through_as_si() -> None:
    assert parse_quantity(4700, "ohm") == 4700.0
    assert parse_quantity(1e-9, "F") == 1e-9
    assert isinstance(parse_quantity(5, "V"), float)


@pytest.mark.parametrize(
    ("text", "unit", "says"),
    [
        ("10m", "ohm", "ambiguous"),  # R5h pitfall: milli or a miswritten mega
        ("4m7", "ohm", "ambiguous"),
        ("10 KHz", "Hz", "use lowercase 'k'"),
        ("1,5k", "ohm", "not an SI prefix"),
        ("ten ohms", "ohm", "expected"),
        ("10 V", "ohm", "not an SI prefix"),
        ("", "V", "empty"),
        ("nan", "V", "expected"),
        ("1e999", "V", "finite"),
        ("4.7 nF", "ohm", "not an SI prefix"),
        ("x" * 500, "V", "500-character"),
    ],
)
def test_unreadable_values_say_what_was_read_and_what_is_accepted(text: str, unit: str, says: str) -> None:
    with pytest.raises(UnitError) as info:
        parse_quantity(text, unit)
    message = str(info.value)
    assert says in message
    assert "read" in message


@pytest.mark.parametrize("value", [None, True, [1, 2], {"a": 1}, float("inf"), float("nan")])
def test_non_numbers_are_refused(value: object) -> None:
    with pytest.raises(UnitError):
        parse_quantity(value, "V")


def test_accepted_forms_are_listed_in_the_message() -> None:
    with pytest.raises(UnitError, match="IEC 60062 code such as 4k7"):
        parse_quantity("abc", "ohm")
    with pytest.raises(UnitError, match="4n7"):
        parse_quantity("abc", "F")


@pytest.mark.parametrize(
    ("text", "fraction"),
    [("1%", 0.01), ("±1 %", 0.01), ("+/- 0.5%", 0.005), ("0.1 %", 0.001), ("50 ppm", 50e-6), ("0.02", 0.02),
     (0.05, 0.05), ("J", 0.05), ("F", 0.01), ("B", 0.001)],
)
def test_tolerances(text: object, fraction: float) -> None:
    assert parse_tolerance(text) == pytest.approx(fraction)  # % = 1e-2, ppm = 1e-6; letters [IEC60062] R5h


@pytest.mark.parametrize("text", ["1", 1, "-1%", "150%", "5 parts", "Z", None, True])
def test_bad_tolerances_are_refused(text: object) -> None:
    with pytest.raises(UnitError):
        parse_tolerance(text)


def test_temperatures() -> None:
    assert parse_temperature_c("25 °C") == 25.0
    assert parse_temperature_c("-20 °C") == -20.0
    assert parse_temperature_c("298.15 K") == pytest.approx(25.0)  # [SI] T(K) = T(°C) + 273.15
    assert parse_temperature_c(40) == 40.0
    with pytest.raises(UnitError):
        parse_temperature_c("-300 °C")
    with pytest.raises(UnitError):
        parse_temperature_c("25 F")


def test_format_si() -> None:
    assert format_si(4700.0, "Ω") == "4.700 kΩ"
    assert format_si(4.7e-9, "F", 2) == "4.7 nF"
    assert format_si(0.0, "V") == "0 V"


@settings(max_examples=200, deadline=None)
@given(st.floats(min_value=1e-12, max_value=1e12, allow_nan=False, allow_infinity=False))
def test_format_si_reads_back(value: float) -> None:
    # property: what afecheck prints, afecheck reads back (to the printed precision)
    for unit, symbol in (("ohm", "Ω"), ("F", "F"), ("V", "V"), ("Hz", "Hz")):
        text = format_si(value, symbol, 7)
        assert math.isclose(parse_quantity(text, unit), value, rel_tol=1e-6), text


@settings(max_examples=200, deadline=None)
@given(st.text(max_size=30))
def test_any_text_gives_a_float_or_a_unit_error(text: str) -> None:
    for unit in ("ohm", "F", "V", "1", "V/s"):
        try:
            value = parse_quantity(text, unit)
        except UnitError:
            continue
        assert isinstance(value, float) and math.isfinite(value)
