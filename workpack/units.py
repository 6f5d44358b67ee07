"""Quantities written by hand ("2.2 uF", "150 m", "440 V") to SI numbers.

pint does the unit algebra; this module only decides which dimension a field
expects and turns pint's complaints into one-line messages. A bare number is
taken in the field's SI unit (volts, metres, farads...). Parsing is cached:
plant files repeat the same few strings thousands of times.
"""

from __future__ import annotations

import re
from functools import cache, lru_cache
from typing import Any

# What each kind of field expects: the SI unit a bare number is read in (as
# shown to people) and the same unit spelled for pint.
DIMENSIONS: dict[str, tuple[str, str]] = {
    "voltage": ("V", "V"),
    "current": ("A", "A"),
    "resistance": ("Ω", "ohm"),
    "capacitance": ("F", "F"),
    "capacitance_per_length": ("F/m", "F/m"),
    "length": ("m", "m"),
    "area": ("m²", "m**2"),
    "frequency": ("Hz", "Hz"),
    "power": ("W", "W"),  # kW, kVA and VA alike: the field name says which
    "time": ("s", "s"),
    "temperature": ("°C", "degC"),
}

_NUMBER = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$")

# Spellings people write that pint does not know, or reads otherwise.
_ALIASES = {
    "ohm": "ohm", "ohms": "ohm", "Ω": "ohm", "kΩ": "kiloohm", "MΩ": "megaohm",
    "GΩ": "gigaohm", "kohm": "kiloohm", "Mohm": "megaohm", "°C": "degC", "C": "degC",
    "degC": "degC", "mm2": "mm**2", "mm²": "mm**2", "kVA": "kilovolt_ampere",
    "VA": "volt_ampere", "MVA": "megavolt_ampere", "kvar": "kilovolt_ampere",
    "uF/km": "microfarad/km", "µF/km": "microfarad/km", "nF/km": "nanofarad/km",
    "pF/m": "picofarad/m", "nF/m": "nanofarad/m", "min": "minute", "h": "hour",
}


class UnitProblem(ValueError):
    """A value whose unit is missing, unknown or of the wrong kind."""


@cache
def _registry() -> Any:
    import pint  # imported late: the registry takes ~0.4 s to build

    return pint.UnitRegistry()


@lru_cache(maxsize=4096)
def _unit(unit_text: str, kind: str) -> tuple[float, float]:
    """Scale and offset that take a number in ``unit_text`` to the SI unit of ``kind``."""
    registry = _registry()
    si_unit = DIMENSIONS[kind][0]
    name = _ALIASES.get(unit_text, unit_text).replace("Ω", "ohm").replace("µ", "u")
    try:
        unit = registry.Unit(name)
    except Exception as error:  # pint raises several unrelated types here
        raise UnitProblem(f"unknown unit {unit_text!r}") from error
    if unit.dimensionality != _dimensionality(kind):
        raise UnitProblem(f"{unit_text!r} is not a unit of {kind.replace('_', ' ')} "
                          f"(expected something like {si_unit})")
    if kind == "temperature":
        zero = registry.Quantity(0.0, unit).to("degC").magnitude
        one = registry.Quantity(1.0, unit).to("degC").magnitude
        return (one - zero, zero)
    return (float(registry.Quantity(1.0, unit).to_base_units().magnitude), 0.0)


@cache
def _dimensionality(kind: str) -> Any:
    return _registry().Unit(DIMENSIONS[kind][1]).dimensionality


def to_si(value: Any, kind: str) -> float:
    """Read ``value`` (a number, or a string with a unit) as a quantity of ``kind`` in SI.

    >>> to_si("2.2 uF", "capacitance")
    2.2e-06
    """
    if isinstance(value, bool):
        raise UnitProblem(f"expected a {kind.replace('_', ' ')}, got {value!r}")
    if isinstance(value, int | float):
        return float(value)
    if not isinstance(value, str):
        raise UnitProblem(f"expected a {kind.replace('_', ' ')} such as "
                          f"'440 {DIMENSIONS[kind][0]}', got {type(value).__name__}")
    match = _NUMBER.match(value)
    if not match:
        raise UnitProblem(f"expected a number with a unit such as "
                          f"'10 {DIMENSIONS[kind][0]}', got {value!r}")
    number, unit_text = float(match.group(1)), match.group(2)
    if not unit_text:
        return number
    scale, offset = _unit(unit_text, kind)
    return number * scale + offset
