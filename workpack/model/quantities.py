"""Annotated field types that accept a number or a string with a unit, stored in SI."""

from __future__ import annotations

from typing import Annotated, Any

from pydantic import AfterValidator, BeforeValidator, WithJsonSchema

from workpack.units import KINDS, UnitProblem, to_si


def _reader(kind: str) -> Any:
    def read(value: Any) -> float:
        try:
            return to_si(value, kind)
        except UnitProblem as problem:
            raise ValueError(str(problem)) from None

    return BeforeValidator(read)


def _schema(kind: str, example: str) -> WithJsonSchema:
    return WithJsonSchema({
        "anyOf": [{"type": "number"}, {"type": "string", "pattern": r"^\s*[-+]?[0-9.]"}],
        "description": f"{KINDS[kind].name}: a number in {KINDS[kind].si}, "
                       f"or a string with a unit, e.g. '{example}'",
    })


def _within(low: float, high: float, what: str, kind: str, example: str) -> AfterValidator:
    unit = KINDS[kind].si

    def check(value: float) -> float:
        if value <= 0 < low:
            raise ValueError(f"must be greater than zero (got {value:g} {unit})")
        if not low <= value <= high:
            raise ValueError(f"{value:g} {unit} is not a plausible {what} (expected {low:g} "
                             f"to {high:g} {unit}); a bare number is read in {unit}: write "
                             f"the unit, e.g. '{value:g} {example.split()[-1]}'")
        return value

    return AfterValidator(check)


def _bounded(kind: str, low: float, high: float, what: str, example: str) -> Any:
    """A float field of ``kind`` that must lie in [low, high] (SI)."""
    return Annotated[float, _reader(kind), _within(low, high, what, kind, example),
                     _schema(kind, example)]


# Bounds reject impossible values and slipped units (2.2 for 2.2 µF), not rare ones.
Volts = _bounded("voltage", 1.0, 1.0e6, "voltage", "440 V")
# A measured voltage may be zero: a solidly grounded phase reads 0 V to earth.
MeasuredVolts = _bounded("voltage", 0.0, 1.0e6, "measured voltage", "0 V")
Farads = _bounded("capacitance", 0.0, 1.0e-2, "capacitance", "2.2 uF")
FaradsPerMetre = _bounded("capacitance_per_length", 0.0, 1.0e-8, "capacitance per metre",
                          "150 pF/m")
Metres = _bounded("length", 0.0, 1.0e6, "length", "150 m")
SquareMetres = _bounded("area", 1.0e-8, 1.0e-2, "conductor area", "2.5 mm2")
Hertz = _bounded("frequency", 1.0, 1000.0, "frequency", "60 Hz")
Celsius = _bounded("temperature", -60.0, 250.0, "temperature", "20 °C")
# Upper bounds far above any low-voltage plant; they keep later arithmetic finite.
Amperes = _bounded("current", 1.0e-6, 1.0e6, "current", "63 A")
Ohms = _bounded("resistance", 0.0, 1.0e16, "resistance", "22 kΩ")
# kW, kVA and kvar are different kinds: a field declares which it holds, and a value
# written in another is refused (rated_kw: 7.5 kVA is a slip, not a conversion).
Watts = _bounded("real_power", 1.0e-3, 1.0e10, "real power", "7.5 kW")
VoltAmperes = _bounded("apparent_power", 1.0e-3, 1.0e10, "apparent power", "25 kVA")
Seconds = _bounded("time", 1.0e-3, 7 * 86400.0, "duration", "10 min")
