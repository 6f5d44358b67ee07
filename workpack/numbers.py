"""Numbers and units as a person reads them: the one formatter for terminal text, the PDF
packages, the HTML audit and the notes of the diagnosis.

Values live in SI inside workpack; they are shown in a unit with an SI prefix (the
prefixes of the SI Brochure, 9th ed., 2019, Table 7, that people use on site: G, M, k,
m, µ, n, p), to three significant figures and never with an exponent, so a printed
page reads "6600 V" and "1.2 MΩ", not "6.6e+03 V". Pure.
"""

from __future__ import annotations

import math

# The base symbols shown with a prefix, and the prefixes used with them.
_BASES = ("V", "A", "Ω", "F", "Hz", "W", "VA", "var", "m", "s")
_PREFIXES = {"G": 1e9, "M": 1e6, "k": 1e3, "": 1.0, "m": 1e-3, "µ": 1e-6, "u": 1e-6,
             "n": 1e-9, "p": 1e-12}
# Units shown as they are: no prefix, no scale.
_PLAIN = ("", "°C", "%", "h", "min", "V/V", "×", "MΩ·min")

UNIT_SCALE: dict[str, float] = {unit: 1.0 for unit in _PLAIN}
for _base in _BASES:
    for _prefix, _scale in _PREFIXES.items():
        UNIT_SCALE.setdefault(_prefix + _base, _scale)
# Per-length capacitance as cable data sheets give it.
UNIT_SCALE.update({"pF/m": 1e-12, "nF/m": 1e-9, "nF/km": 1e-12, "µF/km": 1e-9})


def unit_scale(unit: str) -> float:
    """How many SI units one ``unit`` is: ``unit_scale("kΩ") == 1000``. An unknown unit is
    a programming error, not a value to guess."""
    try:
        return UNIT_SCALE[unit]
    except KeyError:
        raise ValueError(f"no display scale for unit {unit!r}") from None


def format_number(value: float) -> str:
    """Three significant figures without an exponent: 254.03 → "254", 25.403 → "25.4",
    0.0012345 → "0.00123", 1234.5 → "1230"; whole numbers of four or more digits stay as
    given (6600); infinity reads "∞"."""
    if value == 0:
        return "0"
    if math.isnan(value):
        return "not a number"
    if math.isinf(value):
        return "∞" if value > 0 else "−∞"
    if abs(value) >= 1000 and float(value).is_integer():
        return str(int(value))
    decimals = 2 - math.floor(math.log10(abs(value)))
    rounded = round(value, decimals)
    if decimals <= 0:
        return str(int(rounded))
    return f"{rounded:.{decimals}f}".rstrip("0").rstrip(".")


def format_quantity(value_si: float, unit: str) -> str:
    """An SI value shown in ``unit``: (5e6, "MΩ") → "5 MΩ", (254.03, "V") → "254 V",
    (6600, "V") → "6600 V"."""
    number = format_number(value_si / unit_scale(unit))
    return f"{number} {unit}" if unit else number


def best_unit(value_si: float, base: str) -> str:
    """The prefixed unit of ``base`` that shows ``value_si`` between 1 and 1000 (or the
    nearest one at either end): (5.6e3, "Ω") → "kΩ", (2.2e-6, "F") → "µF"."""
    if base not in _BASES:
        return base
    size = abs(value_si)
    ordered = [p for p in _PREFIXES if p != "u"]  # largest first
    if not math.isfinite(size) or size == 0:
        return base
    for prefix in ordered:
        if size >= _PREFIXES[prefix] * (1 - 5e-4):  # 999.96 kΩ shows as 1 MΩ, not 1000 kΩ
            return prefix + base
    return ordered[-1] + base


def format_auto(value_si: float, base: str) -> str:
    """An SI value in the prefixed unit that fits it: (5620, "Ω") → "5.62 kΩ"."""
    return format_quantity(value_si, best_unit(value_si, base))


def format_ohms(value: float) -> str:
    """Resistance in Ω, kΩ, MΩ or GΩ to three figures; an open circuit reads "∞"."""
    if math.isinf(value):
        return "∞ Ω"
    return format_auto(value, "Ω")


def format_volts(value: float | None) -> str:
    """A voltage, or that it is not known."""
    return "voltage not known" if value is None else format_quantity(value, "V")
