"""Values in the trade's notation: SI prefixes, unit symbols and IEC 60062 letter-and-digit codes.

Every quantity in a design file passes through :func:`parse_quantity`, which knows the unit the
field expects, so ``10k`` on a resistor is 10 000 Ω and ``10m`` on a resistor is refused as
ambiguous (milli or a miswritten mega?) unless the unit is spelt out (``10 mΩ``, ``10 Mohm``).
"""

from __future__ import annotations

import math
import re

__all__ = [
    "UnitError",
    "parse_quantity",
    "parse_tolerance",
    "parse_temperature_c",
    "format_si",
    "UNITS",
]


class UnitError(ValueError):
    """A value string that cannot be read as the expected quantity; the message says what is accepted."""


PREFIXES: dict[str, float] = {
    "f": 1e-15,
    "p": 1e-12,
    "n": 1e-9,
    "u": 1e-6,
    "µ": 1e-6,
    "μ": 1e-6,
    "m": 1e-3,
    "": 1.0,
    "k": 1e3,
    "K": 1e3,
    "M": 1e6,
    "G": 1e9,
    "T": 1e12,
}

# unit key -> (spellings accepted after the prefix, human name)
UNITS: dict[str, tuple[tuple[str, ...], str]] = {
    "ohm": (("Ω", "ω", "ohm", "ohms", "Ohm", "Ohms", "R"), "ohms"),
    "F": (("F",), "farads"),
    "V": (("V",), "volts"),
    "A": (("A",), "amperes"),
    "Hz": (("Hz", "hz"), "hertz"),
    "s": (("s",), "seconds"),
    "W": (("W",), "watts"),
    "K": (("K",), "kelvin"),
    "V/s": (("V/s",), "volts per second"),
    "V/K": (("V/K",), "volts per kelvin"),
    "V/rtHz": (("V/rtHz", "V/√Hz", "V/sqrtHz"), "volts per root hertz"),
    "A/rtHz": (("A/rtHz", "A/√Hz", "A/sqrtHz"), "amperes per root hertz"),
    "W/K": (("W/K",), "watts per kelvin"),
    "1": ((), "a plain number"),
}

# IEC 60062 letter-and-digit (RKM) multipliers per unit: the letter stands where the decimal point goes.
_RKM_LETTERS: dict[str, dict[str, float]] = {
    "ohm": {"L": 1e-3, "R": 1.0, "r": 1.0, "k": 1e3, "K": 1e3, "M": 1e6, "G": 1e9, "T": 1e12},
    "F": {"p": 1e-12, "n": 1e-9, "u": 1e-6, "µ": 1e-6, "μ": 1e-6, "m": 1e-3, "F": 1.0},
}
_RKM_RE = re.compile(r"^(\d*)([A-Za-zµμ])(\d+)$")
_NUMBER_RE = re.compile(r"^([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(.*)$")
_PER_US = {"V/us": 1e6, "V/µs": 1e6, "V/μs": 1e6, "V/ms": 1e3}
_TOL_LETTERS = {"B": 0.001, "C": 0.0025, "D": 0.005, "F": 0.01, "G": 0.02, "J": 0.05, "K": 0.10, "M": 0.20}


def _accepted(unit: str) -> str:
    spellings, name = UNITS[unit]
    shown = ", ".join(spellings[:3]) if spellings else "no unit"
    rkm = " or an IEC 60062 code such as 4k7, 2R2, R47" if unit == "ohm" else ""
    rkm = " or an IEC 60062 code such as 4n7, 1u0, 10p" if unit == "F" else rkm
    return f"a number with an optional SI prefix (p n u µ m k M G) and unit ({shown}) in {name}{rkm}"


def _check_finite(value: float, text: str, unit: str) -> float:
    if not math.isfinite(value):
        raise UnitError(f"read {text!r} as {value}, which is not a finite number; expected {_accepted(unit)}")
    return value


def _strip_unit(rest: str, unit: str) -> tuple[str, bool]:
    """Split ``rest`` into (prefix, had_unit) by removing a trailing unit spelling."""
    for spelling in sorted(UNITS[unit][0], key=len, reverse=True):
        if rest.endswith(spelling) and not (unit == "ohm" and spelling == "R" and rest != "R"):
            return rest[: -len(spelling)].strip(), True
    return rest.strip(), False


def _parse_rkm(text: str, unit: str) -> float | None:
    letters = _RKM_LETTERS.get(unit)
    if not letters:
        return None
    body = text
    if unit == "ohm":
        for spelling in ("Ω", "ohms", "ohm"):
            if body.endswith(spelling):
                body = body[: -len(spelling)].strip()
                break
    elif body.endswith("F") and len(body) > 1 and body[-2] in letters:
        body = body[:-1]
    m = _RKM_RE.match(body)
    if not m or m.group(2) not in letters:
        return None
    whole, letter, frac = m.groups()
    if unit == "F" and letter == "F":
        mult = 1.0
    else:
        mult = letters[letter]
    return float(f"{whole or '0'}.{frac}") * mult


def parse_quantity(value: object, unit: str) -> float:
    """Read ``value`` (number or string) as a quantity in ``unit``; return SI float or raise UnitError."""
    if unit not in UNITS:
        raise ValueError(f"unknown unit key {unit!r}")
    if isinstance(value, bool) or value is None:
        raise UnitError(f"read {value!r}; expected {_accepted(unit)}")
    if isinstance(value, (int, float)):
        return _check_finite(float(value), repr(value), unit)
    if not isinstance(value, str):
        raise UnitError(f"read a {type(value).__name__}; expected {_accepted(unit)}")
    text = value.strip()
    if not text:
        raise UnitError(f"read an empty string; expected {_accepted(unit)}")
    if unit == "1" and text.lower().endswith("db"):
        db = parse_quantity(text[:-2].strip(), "1")
        return _check_finite(10 ** (db / 20.0), text, unit)
    if unit == "V/s":
        for suffix, mult in _PER_US.items():
            if text.endswith(suffix):
                return _check_finite(parse_quantity(text[: -len(suffix)].strip(), "1") * mult, text, unit)
    rkm = _parse_rkm(text, unit)
    if rkm is not None:
        return rkm
    m = _NUMBER_RE.match(text)
    if not m:
        raise UnitError(f"read {text!r}; expected {_accepted(unit)}")
    number = float(m.group(1))
    rest = m.group(2).strip()
    prefix, had_unit = _strip_unit(rest, unit)
    if prefix not in PREFIXES:
        raise UnitError(f"read {text!r}: {prefix!r} is not an SI prefix or a unit here; expected {_accepted(unit)}")
    if unit == "ohm" and prefix == "m" and not had_unit:
        raise UnitError(
            f"read {text!r}: a bare 'm' on a resistance is ambiguous (milli or a miswritten mega); "
            "write '10 mΩ' for milliohms or '10M' for megohms"
        )
    if prefix == "K" and unit != "ohm":
        raise UnitError(f"read {text!r}: 'K' is kelvin or a tolerance letter, not a prefix here; use lowercase 'k'")
    return _check_finite(number * PREFIXES[prefix], text, unit)


def parse_tolerance(value: object) -> float:
    """Read a tolerance (``1%``, ``50 ppm``, ``0.01``, IEC 60062 letter ``F``) as a fraction."""
    if isinstance(value, bool) or value is None:
        raise UnitError(f"read {value!r}; expected a tolerance such as 1%, 0.1 %, 50 ppm or a letter B C D F G J K M")
    if isinstance(value, (int, float)):
        frac = float(value)
    elif isinstance(value, str):
        text = value.strip()
        if text in _TOL_LETTERS:
            return _TOL_LETTERS[text]
        m = _NUMBER_RE.match(text)
        if not m:
            raise UnitError(f"read {text!r}; expected a tolerance such as 1%, 0.1 %, 50 ppm or a letter B C D F G J K M")
        rest = m.group(2).strip().lstrip("±")
        scale = {"%": 1e-2, "ppm": 1e-6, "": 1.0}.get(rest)
        if scale is None:
            raise UnitError(f"read {text!r}: {rest!r} is not % or ppm")
        frac = float(m.group(1)) * scale
    else:
        raise UnitError(f"read a {type(value).__name__}; expected a tolerance such as 1% or 50 ppm")
    if not math.isfinite(frac) or frac < 0 or frac >= 1:
        raise UnitError(f"read {value!r}: a tolerance must lie between 0 and 100 %")
    return frac


def parse_temperature_c(value: object) -> float:
    """Read a temperature in °C (``25``, ``25 C``, ``25 °C``, ``298.15 K``)."""
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        t = float(value)
    elif isinstance(value, str):
        text = value.strip()
        m = _NUMBER_RE.match(text)
        rest = m.group(2).strip() if m else None
        if m is None or rest not in ("", "C", "°C", "degC", "K"):
            raise UnitError(f"read {text!r}; expected a temperature such as 25, 25 °C or 298.15 K")
        t = float(m.group(1)) - (273.15 if rest == "K" else 0.0)
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
    for scale, prefix in _FORMAT_PREFIXES:
        if mag >= scale * 0.9999995:
            break
    scaled = value / scale
    decimals = max(digits - 1 - int(math.floor(math.log10(abs(scaled)))), 0)
    return f"{scaled:.{decimals}f} {prefix}{unit}".rstrip()
