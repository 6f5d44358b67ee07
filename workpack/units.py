"""Quantities written by hand ("2.2 uF", "150 m", "440 V") to SI numbers.

A quantity is a number, optional space, and one unit symbol from a fixed
table: the SI units workpack's fields use, each with the SI prefixes (BIPM,
The International System of Units, 9th ed., 2019, Table 7), and the usual
spellings people write on boards and data sheets (ohm, kohm, uF, degC, kVA).
Nothing is evaluated: "60 Hz*(kHz/Hz)**200" is not a unit, it is refused. The
text is capped at ``MAX_LENGTH`` characters and read in one pass, so no input
can make parsing slow. A bare number is taken in the field's SI unit.

Each unit belongs to one kind. A field declares its kind, and a unit of
another kind is refused: for our purposes kW (real power), kVA (apparent
power) and kvar (reactive power) are three different kinds. Pure.
"""

from __future__ import annotations

import difflib
import math
import re
import unicodedata
from dataclasses import dataclass
from fractions import Fraction
from functools import lru_cache
from typing import Any

# Longer than any honest quantity ("0.000150 uF/km" is 14); refuses pasted text early.
MAX_LENGTH = 64
# Beyond this a written exponent cannot give a finite double anyway (DBL_MAX ≈ 1.8e308).
MAX_EXPONENT = 400


@dataclass(frozen=True)
class Kind:
    """What a field measures: its SI unit and an example people recognise."""

    name: str  # as shown in messages: "apparent power"
    si: str  # the unit a bare number is read in
    example: str


KINDS: dict[str, Kind] = {
    "voltage": Kind("voltage", "V", "440 V"),
    "current": Kind("current", "A", "63 A"),
    "resistance": Kind("resistance", "Ω", "22 kΩ"),
    "capacitance": Kind("capacitance", "F", "2.2 uF"),
    "capacitance_per_length": Kind("capacitance per length", "F/m", "150 pF/m"),
    "length": Kind("length", "m", "150 m"),
    "area": Kind("area", "m²", "2.5 mm2"),
    "frequency": Kind("frequency", "Hz", "60 Hz"),
    "real_power": Kind("real power", "W", "7.5 kW"),
    "apparent_power": Kind("apparent power", "VA", "25 kVA"),
    "reactive_power": Kind("reactive power", "var", "50 kvar"),
    "time": Kind("time", "s", "10 min"),
    "temperature": Kind("temperature", "°C", "20 °C"),
}

# BIPM, The International System of Units (SI), 9th edition (2019), Table 7: SI prefixes.
# "u" is the usual typed stand-in for µ (ISO 2955 and most instrument keyboards).
SI_PREFIXES: dict[str, int] = {
    "Y": 24, "Z": 21, "E": 18, "P": 15, "T": 12, "G": 9, "M": 6, "k": 3, "h": 2, "da": 1,
    "": 0,
    "d": -1, "c": -2, "m": -3, "μ": -6, "u": -6, "n": -9, "p": -12, "f": -15, "a": -18,
    "z": -21, "y": -24,
}


@dataclass(frozen=True)
class Unit:
    kind: str
    scale: Fraction  # SI value = number × scale + offset
    offset: Fraction = Fraction(0)


def _build_table() -> dict[str, Unit]:
    table: dict[str, Unit] = {}

    def add(symbol: str, unit: Unit) -> None:
        symbol = unicodedata.normalize("NFKC", symbol)
        if symbol in table and table[symbol] != unit:
            raise AssertionError(f"unit symbol {symbol!r} is ambiguous")
        table[symbol] = unit

    prefixable = {
        "voltage": ("V",), "current": ("A",), "capacitance": ("F",), "frequency": ("Hz",),
        "length": ("m",), "real_power": ("W",), "apparent_power": ("VA",),
        "reactive_power": ("var",), "time": ("s",),
        "resistance": ("Ω", "ohm", "ohms", "Ohm", "Ohms"),
    }
    for kind, symbols in prefixable.items():
        for symbol in symbols:
            for prefix, power in SI_PREFIXES.items():
                add(prefix + symbol, Unit(kind, Fraction(10) ** power))
    for prefix, power in SI_PREFIXES.items():
        add(f"{prefix}m2", Unit("area", Fraction(10) ** (2 * power)))
        add(f"{prefix}m²", Unit("area", Fraction(10) ** (2 * power)))
        for per in ("", "k", "m"):
            add(f"{prefix}F/{per}m", Unit("capacitance_per_length",
                                          Fraction(10) ** (power - SI_PREFIXES[per])))
    spellings = {
        "kilohm": 3, "kilohms": 3, "megohm": 6, "megohms": 6, "gigohm": 9, "gigohms": 9,
    }
    for symbol, power in spellings.items():
        add(symbol, Unit("resistance", Fraction(10) ** power))
    for symbol in ("kVAr", "kVAR"):
        add(symbol, Unit("reactive_power", Fraction(1000)))
    add("min", Unit("time", Fraction(60)))
    add("h", Unit("time", Fraction(3600)))
    for symbol in ("°C", "degC", "C", "ºC"):  # º: the ordinal sign typed for a degree
        add(symbol, Unit("temperature", Fraction(1)))
    add("K", Unit("temperature", Fraction(1), Fraction(-27315, 100)))
    # Degree Fahrenheit: t/°C = (t/°F − 32) × 5/9, the scale's definition (NIST SP 811,
    # 2008 edition; the clause number from memory: B.9).
    for symbol in ("°F", "degF"):
        add(symbol, Unit("temperature", Fraction(5, 9), Fraction(-160, 9)))
    return table


UNITS: dict[str, Unit] = _build_table()

_NUMBER = re.compile(r"[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?")
# Spaces a person or a word processor puts between a number and its unit.
_SPACES = " \t\u00a0\u202f\u2009"


class UnitProblem(ValueError):
    """A value whose unit is missing, unknown or of the wrong kind."""


# What an instrument on a low-voltage plant can read, per kind (SI): far wider than any
# real reading, narrow enough that the arithmetic on it stays finite. A winding or
# equipment temperature during a test lies well inside −60 to 250 °C (the same bounds
# as a temperature in the findings).
PLAUSIBLE: dict[str, tuple[float, float]] = {
    "voltage": (-1.0e6, 1.0e6),
    "current": (-1.0e6, 1.0e6),
    "resistance": (0.0, 1.0e16),
    "capacitance": (0.0, 1.0),
    "frequency": (0.0, 1.0e4),
    "real_power": (-1.0e10, 1.0e10),
    "apparent_power": (0.0, 1.0e10),
    "reactive_power": (-1.0e10, 1.0e10),
    "time": (0.0, 1.0e7),
    "temperature": (-60.0, 250.0),
    "length": (0.0, 1.0e6),
}


def plausible(value: float, kind: str) -> float:
    """``value`` (SI) when an instrument could have read it as a ``kind``; else UnitProblem."""
    low, high = PLAUSIBLE.get(kind, (-1.0e12, 1.0e12))
    if not (math.isfinite(value) and low <= value <= high):
        shown = KINDS[kind]
        raise UnitProblem(f"{value:g} {shown.si} is not a reading an instrument gives "
                          f"(expected {low:g} to {high:g} {shown.si})")
    return value


def _kind(kind: str) -> Kind:
    return KINDS[kind]


def parse_quantity(text: str) -> tuple[Fraction, str]:
    """The number (exact) and the unit symbol of ``text``; the unit is '' when bare.

    Refuses anything that is not a number followed by a single known unit symbol.
    """
    number, unit = _split(text)
    if unit and unit not in UNITS:
        raise UnitProblem(_unknown_unit(text, unit, None))
    return number, unit


def _split(text: str, example: str = "440 V") -> tuple[Fraction, str]:
    """A number at the start of ``text``, and what follows it (normalised, not checked)."""
    if len(text) > MAX_LENGTH:
        raise UnitProblem(f"{len(text)} characters is too long for a quantity (at most "
                          f"{MAX_LENGTH}): write a number and a unit, e.g. '{example}'")
    stripped = text.strip(_SPACES)
    match = _NUMBER.match(stripped)
    if match is None:
        raise UnitProblem(f"expected a number with a unit, such as '{example}', got "
                          f"{text!r}")
    number_text = match.group(0)
    _, _, exponent = number_text.lower().partition("e")
    if exponent and abs(int(exponent)) > MAX_EXPONENT:
        raise UnitProblem(f"{number_text} is out of any range a measurement has")
    unit = unicodedata.normalize("NFKC", stripped[match.end():].lstrip(_SPACES))
    return Fraction(number_text), unit


def _unknown_unit(text: str, unit: str, kind: str | None) -> str:
    if any(char in unit for char in "*^()+"):
        return (f"{unit!r} in {text!r} is not a unit symbol: write one unit, such as "
                "'kV' or 'uF/km'; no arithmetic")
    known = sorted(symbol for symbol, known in UNITS.items() if kind in (None, known.kind))
    close = [symbol for symbol in known if symbol.lower() == unit.lower()] or \
        difflib.get_close_matches(unit, known, n=3, cutoff=0.7)
    hint = (" (did you mean " + " or ".join(repr(c) for c in close) + "?)") if close else ""
    return f"unknown unit {unit!r}{hint}"


def to_si(value: Any, kind: str) -> float:
    """Read ``value`` (a number, or a string with a unit) as a quantity of ``kind`` in SI.

    >>> to_si("2.2 uF", "capacitance")
    2.2e-06
    """
    expected = _kind(kind)
    if isinstance(value, bool):
        raise UnitProblem(f"expected a {expected.name}, got {value!r}")
    if isinstance(value, int):
        try:
            return float(value)
        except OverflowError:
            raise UnitProblem("the number is out of any range a measurement has") from None
    if isinstance(value, float):
        if not math.isfinite(value):
            raise UnitProblem(f"{value!r} is not a number a measurement can have")
        return value
    if not isinstance(value, str):
        raise UnitProblem(f"expected a {expected.name} such as '{expected.example}', got "
                          f"{type(value).__name__}")
    return _text_to_si(value, kind)


@lru_cache(maxsize=8192)  # plant files repeat the same few quantities thousands of times
def _text_to_si(value: str, kind: str) -> float:
    expected = _kind(kind)
    number, symbol = _split(value, expected.example)
    if symbol and symbol not in UNITS:
        raise UnitProblem(_unknown_unit(value, symbol, kind))
    if not symbol:
        return _finite(_to_float(number), value)
    unit = UNITS[symbol]
    if unit.kind != kind:
        found = _kind(unit.kind)
        raise UnitProblem(f"{symbol!r} is not a unit of {expected.name}: it is a unit of "
                          f"{found.name} (expected something like "
                          f"{expected.example.split()[-1]})")
    return _finite(_to_float(number * unit.scale + unit.offset), value)


def _to_float(number: Fraction) -> float:
    try:
        return float(number)
    except OverflowError:
        return math.inf


def _finite(number: float, written: Any) -> float:
    if not math.isfinite(number):
        raise UnitProblem(f"{written!r} is out of any range a measurement has")
    return number
