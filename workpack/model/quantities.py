"""Annotated field types that accept a number or a string with a unit, stored in SI."""

from __future__ import annotations

from typing import Annotated, Any

from pydantic import AfterValidator, BeforeValidator, WithJsonSchema

from workpack.units import DIMENSIONS, UnitProblem, to_si


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
        "description": f"{kind.replace('_', ' ')}: a number in {DIMENSIONS[kind][0]}, "
                       f"or a string with a unit, e.g. '{example}'",
    })


def _positive(value: float) -> float:
    if value <= 0:
        raise ValueError(f"must be greater than zero (got {value:g})")
    return value


def _not_negative(value: float) -> float:
    if value < 0:
        raise ValueError(f"cannot be negative (got {value:g})")
    return value


def _within(low: float, high: float, what: str) -> AfterValidator:
    def check(value: float) -> float:
        if not low <= value <= high:
            raise ValueError(f"{value:g} is not a plausible {what} "
                             f"(expected {low:g} to {high:g} in SI units)")
        return value

    return AfterValidator(check)


# Bounds reject impossible values and slipped units (2.2 for 2.2 µF), not rare ones.
Volts = Annotated[float, _reader("voltage"), _within(1.0, 1.0e6, "voltage"),
                  _schema("voltage", "440 V")]
Amperes = Annotated[float, _reader("current"), AfterValidator(_positive),
                    _schema("current", "63 A")]
Ohms = Annotated[float, _reader("resistance"), AfterValidator(_not_negative),
                 _schema("resistance", "22 kΩ")]
Farads = Annotated[float, _reader("capacitance"), _within(0.0, 1.0e-2, "capacitance"),
                   _schema("capacitance", "47 nF")]
FaradsPerMetre = Annotated[float, _reader("capacitance_per_length"),
                           _within(0.0, 1.0e-8, "capacitance per metre"),
                           _schema("capacitance_per_length", "150 pF/m")]
Metres = Annotated[float, _reader("length"), _within(0.0, 1.0e6, "length"),
                   _schema("length", "150 m")]
SquareMetres = Annotated[float, _reader("area"), _within(1.0e-8, 1.0e-2, "conductor area"),
                         _schema("area", "2.5 mm2")]
Hertz = Annotated[float, _reader("frequency"), _within(1.0, 1000.0, "frequency"),
                  _schema("frequency", "60 Hz")]
Watts = Annotated[float, _reader("power"), AfterValidator(_positive),
                  _schema("power", "25 kVA")]
Seconds = Annotated[float, _reader("time"), AfterValidator(_positive),
                    _schema("time", "10 min")]
Celsius = Annotated[float, _reader("temperature"), _within(-60.0, 250.0, "temperature"),
                    _schema("temperature", "20 °C")]
