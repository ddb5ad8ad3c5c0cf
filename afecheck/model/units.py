"""Values in the trade's notation: SI prefixes, unit symbols and IEC 60062 letter-and-digit codes.

Every quantity in a design file passes through :func:`parse_quantity`, which knows the unit the
field expects, so ``10k`` on a resistor is 10 000 Ω and ``10m`` on a resistor is refused as
ambiguous (milli or a miswritten mega?) unless the unit is spelt out (``10 mΩ``, ``10 Mohm``).
Numbers are scaled in decimal, so ``4n7`` is exactly the float nearest 4.7e-9.
"""

from __future__ import annotations

import math
import re
from decimal import Decimal, InvalidOperation

__all__ = [
    "UnitError",
    "parse_quantity",
    "parse_tolerance",
    "parse_temperature_c",
    "split_tolerance_code",
    "format_si",
    "UNITS",
    "PREFIXES",
    "TOLERANCE_LETTERS",
]


class UnitError(ValueError):
    """A value string that cannot be read as the expected quantity; the message says what is accepted."""


# SI prefix -> power of ten. "K" (kilo) is accepted on resistances only; "meg" is the SPICE spelling of mega.
PREFIXES: dict[str, int] = {
    "f": -15,
    "p": -12,
    "n": -9,
    "u": -6,
    "µ": -6,
    "μ": -6,
    "m": -3,
    "": 0,
    "k": 3,
    "K": 3,
    "meg": 6,
    "Meg": 6,
    "MEG": 6,
    "M": 6,
    "G": 9,
    "T": 12,
}

# unit key -> (spellings accepted after the prefix, human name)
UNITS: dict[str, tuple[tuple[str, ...], str]] = {
    "ohm": (("\u03a9", "\u2126", "ohm", "ohms", "Ohm", "Ohms", "R"), "ohms"),
    "F": (("F",), "farads"),
    "H": (("H",), "henries"),
    "V": (("V",), "volts"),
    "A": (("A",), "amperes"),
    "C": (("C",), "coulombs"),
    "Hz": (("Hz", "hz"), "hertz"),
    "s": (("s",), "seconds"),
    "W": (("W",), "watts"),
    "K": (("K",), "kelvin"),
    "V/s": (("V/s",), "volts per second"),
    "V/K": (("V/K", "V/°C"), "volts per kelvin"),
    "V/rtHz": (("V/rtHz", "V/√Hz", "V/sqrtHz", "V/sqrt(Hz)"), "volts per root hertz"),
    "A/rtHz": (("A/rtHz", "A/√Hz", "A/sqrtHz", "A/sqrt(Hz)"), "amperes per root hertz"),
    "W/K": (("W/K",), "watts per kelvin"),
    "1": (("V/V",), "a plain number (or dB for gains)"),
}

# IEC 60062 letter-and-digit (RKM) code: the letter stands where the decimal point goes and gives the multiplier.
_RKM_LETTERS: dict[str, dict[str, int]] = {
    "ohm": {"L": -3, "R": 0, "r": 0, "k": 3, "K": 3, "M": 6, "G": 9, "T": 12},
    "F": {"p": -12, "n": -9, "u": -6, "µ": -6, "μ": -6, "m": -3, "F": 0},
}
_RKM_RE = re.compile(r"^(\d*)([A-Za-zµμ])(\d*)$")
_NUMBER_RE = re.compile(r"^([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(.*)$")
_PER_TIME = {"V/us": 6, "V/µs": 6, "V/μs": 6, "V/ms": 3, "V/ns": 9}

# IEC 60062 tolerance letters (symmetric ones only) as fractions.
TOLERANCE_LETTERS: dict[str, float] = {
    "B": 0.001,
    "C": 0.0025,
    "D": 0.005,
    "F": 0.01,
    "G": 0.02,
    "J": 0.05,
    "K": 0.10,
    "M": 0.20,
}
_TOLERANCE_HELP = "a tolerance such as 1%, ±0.1 %, 50 ppm, a fraction such as 0.01, or a letter B C D F G J K M"


def _accepted(unit: str) -> str:
    spellings, name = UNITS[unit]
    shown = ", ".join(spellings[:3]) if spellings else "no unit"
    extra = ""
    if unit == "ohm":
        extra = " or an IEC 60062 code such as 4k7, 2R2, R47, 470R"
    elif unit == "F":
        extra = " or an IEC 60062 code such as 4n7, 1u0, 10p"
    elif unit == "1":
        extra = " or a gain in dB such as '100 dB'"
    elif unit == "V/s":
        extra = " or per microsecond such as '0.5 V/us'"
    return f"a number with an optional SI prefix (p n u µ m k M G) and unit ({shown}) in {name}{extra}"


def _scaled(number: str, exponent: int, text: str, unit: str) -> float:
    """``number`` × 10**``exponent`` computed in decimal, as the nearest float; refuse inf and nan."""
    try:
        value = float(Decimal(number).scaleb(exponent))
    except (InvalidOperation, ValueError, ArithmeticError):  # decimal.Overflow on an exponent like e45678901234
        raise UnitError(f"read {text!r}; expected {_accepted(unit)}") from None
    if not math.isfinite(value):
        raise UnitError(f"read {text!r}, which is not a finite number; expected {_accepted(unit)}")
    return value


def _strip_unit(rest: str, unit: str) -> tuple[str, bool]:
    """Split ``rest`` into (prefix, had_unit) by removing a trailing unit spelling."""
    for spelling in sorted(UNITS[unit][0], key=len, reverse=True):
        if rest.endswith(spelling):
            if unit == "ohm" and spelling == "R" and rest != "R":
                continue
            return rest[: -len(spelling)].strip(), True
    return rest.strip(), False


def _parse_rkm(text: str, unit: str) -> float | None:
    """Read an IEC 60062 code (``4k7``, ``R47``, ``4n7``, ``1µ0``); None if ``text`` is not one."""
    letters = _RKM_LETTERS.get(unit)
    if not letters:
        return None
    body = text
    if unit == "ohm":
        for spelling in ("\u03a9", "\u2126", "ohms", "ohm"):
            if body.endswith(spelling):
                body = body[: -len(spelling)].strip()
                break
    elif len(body) > 2 and body.endswith("F") and body[-2].isdigit() and not body[:-1].isdigit():
        body = body[:-1]
    m = _RKM_RE.match(body)
    if not m:
        return None
    whole, letter, frac = m.groups()
    if not frac:
        return None
    if unit == "ohm" and letter == "m":
        raise UnitError(
            f"read {text!r}: 'm' inside a resistance code is ambiguous (milli or a miswritten mega); "
            "write 'L' for milliohms (4L7), 'M' for megohms (4M7) or spell out the unit (4.7 mΩ)"
        )
    if letter not in letters:
        return None
    return _scaled(f"{whole or '0'}.{frac}", letters[letter], text, unit)


def split_tolerance_code(text: str, unit: str) -> tuple[str, float] | None:
    """Split an IEC 60062 code with a trailing tolerance letter (``4K7J``) into (``4K7``, 0.05); else None.

    The letter counts as a tolerance only after a complete code that already holds its multiplier
    letter, so ``47K`` stays 47 kΩ while ``47KJ`` is 47 kΩ ±5 %. On capacitors a trailing ``F`` is
    the farad symbol (``10nF``), never the ±1 % letter.
    """
    letters = _RKM_LETTERS.get(unit)
    text = text.strip()
    if not letters or len(text) < 3 or text[-1] not in TOLERANCE_LETTERS:
        return None
    if unit == "F" and text[-1] == "F":
        return None
    code = text[:-1]
    m = _RKM_RE.match(code)
    if not m or m.group(2) not in letters or not (m.group(1) or m.group(3)):
        return None
    return code, TOLERANCE_LETTERS[text[-1]]


_MEMO_SIZE = 4096
"""Texts remembered per reader (a design repeats the same few values across its channels); cleared when full."""
_quantities: dict[tuple[str, str], float] = {}
_tolerances: dict[str, float] = {}


def parse_quantity(value: object, unit: str) -> float:
    """Read ``value`` (number or string) as a quantity in ``unit``; return an SI float or raise UnitError."""
    if type(value) is not str:
        return _parse_quantity(value, unit)
    known = _quantities.get((value, unit))
    if known is None:
        known = _parse_quantity(value, unit)  # a text that is refused raises here, and is never remembered
        if len(_quantities) >= _MEMO_SIZE:
            _quantities.clear()
        _quantities[(value, unit)] = known
    return known


def _parse_quantity(value: object, unit: str) -> float:
    if unit not in UNITS:
        raise ValueError(f"unknown unit key {unit!r}")
    if isinstance(value, bool) or value is None:
        raise UnitError(f"read {value!r}; expected {_accepted(unit)}")
    if isinstance(value, int):
        return _scaled(str(value), 0, repr(value), unit)
    if isinstance(value, float):
        if not math.isfinite(value):
            raise UnitError(f"read {value!r}, which is not a finite number; expected {_accepted(unit)}")
        return value
    if not isinstance(value, str):
        raise UnitError(f"read a {type(value).__name__}; expected {_accepted(unit)}")
    text = value.strip()
    if not text:
        raise UnitError(f"read an empty string; expected {_accepted(unit)}")
    if len(text) > 100:
        raise UnitError(f"read a {len(text)}-character string; expected {_accepted(unit)}")
    if unit == "1" and text.lower().endswith("db"):
        db = parse_quantity(text[:-2].strip(), "1")
        gain = 10 ** (db / 20.0) if db < 6000 else math.inf
        if not math.isfinite(gain):
            raise UnitError(f"read {text!r}: too large a gain; expected {_accepted(unit)}")
        return gain
    if unit == "V/s":
        for suffix, exponent in _PER_TIME.items():
            if text.endswith(suffix):
                m = _NUMBER_RE.match(text[: -len(suffix)].strip())
                if not m or m.group(2):
                    raise UnitError(f"read {text!r}; expected {_accepted(unit)}")
                return _scaled(m.group(1), exponent, text, unit)
    rkm = _parse_rkm(text, unit)
    if rkm is not None:
        return rkm
    m = _NUMBER_RE.match(text)
    if not m:
        raise UnitError(f"read {text!r}; expected {_accepted(unit)}")
    rest = m.group(2).strip()
    prefix, had_unit = _strip_unit(rest, unit)
    if prefix not in PREFIXES:
        if split_tolerance_code(text, unit) is not None:
            raise UnitError(f"read {text!r}: a tolerance letter after a code is accepted only in a component's value")
        raise UnitError(f"read {text!r}: {prefix!r} is not an SI prefix or a unit here; expected {_accepted(unit)}")
    if unit == "ohm" and prefix == "m" and not had_unit:
        raise UnitError(
            f"read {text!r}: a bare 'm' on a resistance is ambiguous (milli or a miswritten mega); "
            "write '10 mΩ' for milliohms or '10M' for megohms"
        )
    if prefix == "K" and unit != "ohm":
        raise UnitError(f"read {text!r}: 'K' is kelvin or a tolerance letter, not a prefix here; use lowercase 'k'")
    return _scaled(m.group(1), PREFIXES[prefix], text, unit)


def parse_tolerance(value: object) -> float:
    """Read a tolerance (``1%``, ``±0.1 %``, ``50 ppm``, ``0.01``, IEC 60062 letter ``F``) as a fraction."""
    if type(value) is not str:
        return _parse_tolerance(value)
    known = _tolerances.get(value)
    if known is None:
        known = _parse_tolerance(value)
        if len(_tolerances) >= _MEMO_SIZE:
            _tolerances.clear()
        _tolerances[value] = known
    return known


def _parse_tolerance(value: object) -> float:
    if isinstance(value, bool) or value is None:
        raise UnitError(f"read {value!r}; expected {_TOLERANCE_HELP}")
    if isinstance(value, int):
        frac = _scaled(str(value), 0, repr(value), "1")
    elif isinstance(value, float):
        frac = value
    elif isinstance(value, str):
        text = value.strip()
        if text in TOLERANCE_LETTERS:
            return TOLERANCE_LETTERS[text]
        for sign in ("±", "+/-", "+-"):
            if text.startswith(sign):
                text = text[len(sign):].strip()
                break
        m = _NUMBER_RE.match(text)
        if not m or m.group(1).startswith(("+", "-")):
            raise UnitError(f"read {value!r}; expected {_TOLERANCE_HELP}")
        rest = m.group(2).strip()
        exponent = {"%": -2, "ppm": -6, "": 0}.get(rest)
        if exponent is None:
            raise UnitError(f"read {value!r}: {rest!r} is not % or ppm; expected {_TOLERANCE_HELP}")
        frac = _scaled(m.group(1), exponent, text, "1")
    else:
        raise UnitError(f"read a {type(value).__name__}; expected {_TOLERANCE_HELP}")
    if not math.isfinite(frac) or frac < 0 or frac >= 1:
        raise UnitError(f"read {value!r}: a tolerance must lie from 0 up to (not including) 100 % (a bare number "
                        "is a fraction: write 1% rather than 1)")
    return frac


def parse_temperature_c(value: object) -> float:
    """Read a temperature in °C (``25``, ``25 C``, ``25 °C``, ``298.15 K``)."""
    if isinstance(value, int) and not isinstance(value, bool):
        t = _scaled(str(value), 0, repr(value), "1")
    elif isinstance(value, float):
        t = value
    elif isinstance(value, str):
        text = value.strip()
        m = _NUMBER_RE.match(text)
        rest = m.group(2).strip() if m else None
        if m is None or rest not in ("", "C", "°C", "℃", "degC", "K"):
            raise UnitError(f"read {text!r}; expected a temperature such as 25, 25 °C or 298.15 K")
        t = _scaled(m.group(1), 0, text, "1") - (273.15 if rest == "K" else 0.0)
    else:
        raise UnitError(f"read {value!r}; expected a temperature such as 25 °C")
    if not math.isfinite(t) or t < -273.15:
        raise UnitError(f"read {value!r}: below absolute zero or not finite")
    return t


_FORMAT_PREFIXES = ((1e12, "T"), (1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m"), (1e-6, "µ"),
                    (1e-9, "n"), (1e-12, "p"), (1e-15, "f"))


def format_si(value: float, unit: str = "", digits: int = 4) -> str:
    """Format ``value`` with an SI prefix and ``digits`` significant figures (``4.700 kΩ``)."""
    if value == 0 or not math.isfinite(value):
        return f"{value:g} {unit}".strip()
    mag = abs(value)
    scale, prefix = next((sp for sp in _FORMAT_PREFIXES if mag >= sp[0] * 0.9999995), _FORMAT_PREFIXES[-1])
    scaled = value / scale
    decimals = max(digits - 1 - int(math.floor(math.log10(abs(scaled)))), 0)
    return f"{scaled:.{decimals}f} {prefix}{unit}".rstrip()
