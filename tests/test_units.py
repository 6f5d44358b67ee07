"""Hand-written quantities become SI numbers; wrong units are refused with a clear reason."""

import pytest

from workpack.units import UnitProblem, to_si


@pytest.mark.parametrize(("text", "kind", "expected"), [
    # SI prefixes (BIPM, The International System of Units, 9th ed., Table 7).
    ("2.2 uF", "capacitance", 2.2e-6),
    ("2.2uF", "capacitance", 2.2e-6),
    ("2.2 µF", "capacitance", 2.2e-6),
    ("47 nF", "capacitance", 47e-9),
    ("150 pF/m", "capacitance_per_length", 150e-12),
    ("0.15 uF/km", "capacitance_per_length", 150e-12),
    ("22 kΩ", "resistance", 22e3),
    ("10 MΩ", "resistance", 10e6),
    ("25 kVA", "power", 25e3),
    ("440 V", "voltage", 440.0),
    ("150 m", "length", 150.0),
    ("60 Hz", "frequency", 60.0),
    ("10 min", "time", 600.0),
    ("35 °C", "temperature", 35.0),
    (440, "voltage", 440.0),
])
def test_written_values_become_si(text, kind, expected) -> None:
    assert to_si(text, kind) == pytest.approx(expected, rel=1e-12)


def test_fahrenheit_is_converted_with_its_offset() -> None:
    # 104 °F = 40 °C: (104 − 32) × 5/9 (definition of the Fahrenheit scale).
    assert to_si("104 degF", "temperature") == pytest.approx(40.0)


@pytest.mark.parametrize(("text", "kind", "fragment"), [
    ("440 A", "voltage", "'A' is not a unit of voltage"),
    ("3 zorks", "length", "unknown unit 'zorks'"),
    ("lots", "voltage", "expected a number with a unit"),
    (True, "voltage", "expected a voltage"),
])
def test_wrong_units_are_refused(text, kind, fragment) -> None:
    with pytest.raises(UnitProblem, match=fragment):
        to_si(text, kind)
