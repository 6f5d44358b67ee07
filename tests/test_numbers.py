"""One formatter for every printed number: the edge cases a page must get right."""

from __future__ import annotations

import math

import pytest

from workpack.numbers import (
    best_unit,
    format_auto,
    format_number,
    format_ohms,
    format_quantity,
    format_volts,
    unit_scale,
)


@pytest.mark.parametrize(("value", "text"), [
    (254.03, "254"), (25.403, "25.4"), (0.0012345, "0.00123"), (6600, "6600"),
    (6600.0, "6600"), (1234.5, "1230"), (999.96, "1000"), (0.5, "0.5"), (1.0, "1"),
    (-230.94, "-231"), (0, "0"), (1e-12, "0.000000000001"), (math.inf, "∞"),
    (-math.inf, "−∞"), (math.nan, "not a number"),
])
def test_numbers_read_without_an_exponent(value: float, text: str) -> None:
    """Three significant figures, never "6.6e+03" (common practice on printed forms)."""
    assert format_number(value) == text


@pytest.mark.parametrize(("value", "unit", "text"), [
    (6600, "V", "6600 V"), (5e6, "MΩ", "5 MΩ"), (600e3, "MΩ", "0.6 MΩ"),
    (22e3, "kΩ", "22 kΩ"), (43.3e3, "kVA", "43.3 kVA"), (2.2e-6, "µF", "2.2 µF"),
    (150e-12, "pF/m", "150 pF/m"), (40, "°C", "40 °C"), (2.0, "", "2"),
])
def test_a_quantity_is_shown_in_the_unit_asked_for(value: float, unit: str, text: str) -> None:
    """SI prefixes as in the SI Brochure, 9th ed. (2019), Table 7."""
    assert format_quantity(value, unit) == text


def test_an_unknown_unit_is_a_programming_error_not_a_guess() -> None:
    with pytest.raises(ValueError, match="no display scale for unit 'furlong'"):
        unit_scale("furlong")


@pytest.mark.parametrize(("value", "text"), [
    (5620, "5.62 kΩ"), (5.6e6, "5.6 MΩ"), (1.2e9, "1.2 GΩ"), (470, "470 Ω"),
    (999_960, "1 MΩ"), (999.4, "999 Ω"), (math.inf, "∞ Ω"),
])
def test_ohms_take_the_prefix_that_fits(value: float, text: str) -> None:
    assert format_ohms(value) == text


def test_the_prefix_fits_small_values_too() -> None:
    assert best_unit(2.2e-6, "F") == "µF"
    assert format_auto(150e-9, "F") == "150 nF"
    assert best_unit(0.0, "F") == "F"


def test_an_unknown_voltage_is_said_in_words() -> None:
    assert format_volts(None) == "voltage not known"
    assert format_volts(440.0) == "440 V"


def test_every_renderer_uses_the_one_formatter() -> None:
    """No module keeps a unit table or an ohms formatter of its own (issue: two tables that
    disagreed printed 6.6e+03 V in one place and 6600 V in another)."""
    from pathlib import Path

    root = Path(__file__).resolve().parent.parent / "workpack"
    offenders = []
    for path in sorted(root.rglob("*.py")):
        if path.name in ("numbers.py", "units.py", "assetlist.py"):
            continue  # parsing input units and writing inventories back are their own jobs
        text = path.read_text(encoding="utf-8")
        if ":.3g}" in text or "UNIT_SCALE = " in text or "def _ohms" in text:
            offenders.append(path.name)
    assert offenders == []
