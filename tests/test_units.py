"""Hand-written quantities become SI numbers; anything but a number and a unit is refused."""

import math
import time
from fractions import Fraction

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from workpack.units import MAX_LENGTH, SI_PREFIXES, UNITS, UnitProblem, parse_quantity, to_si

# BIPM, The International System of Units (SI), 9th edition (2019), Table 7:
# prefix name, symbol, factor. Written out here, not derived from the code's table.
SI_BROCHURE_TABLE_7 = [
    ("yotta", "Y", Fraction(10) ** 24), ("zetta", "Z", Fraction(10) ** 21),
    ("exa", "E", Fraction(10) ** 18), ("peta", "P", Fraction(10) ** 15),
    ("tera", "T", Fraction(10) ** 12), ("giga", "G", Fraction(10) ** 9),
    ("mega", "M", Fraction(10) ** 6), ("kilo", "k", Fraction(1000)),
    ("hecto", "h", Fraction(100)), ("deca", "da", Fraction(10)),
    ("deci", "d", Fraction(1, 10)), ("centi", "c", Fraction(1, 100)),
    ("milli", "m", Fraction(1, 1000)), ("micro", "µ", Fraction(1, 10**6)),
    ("nano", "n", Fraction(1, 10**9)), ("pico", "p", Fraction(1, 10**12)),
    ("femto", "f", Fraction(1, 10**15)), ("atto", "a", Fraction(1, 10**18)),
    ("zepto", "z", Fraction(1, 10**21)), ("yocto", "y", Fraction(1, 10**24)),
]


@pytest.mark.parametrize(("name", "symbol", "factor"), SI_BROCHURE_TABLE_7)
@pytest.mark.parametrize("unit", ["V", "A", "F", "Hz", "m", "W", "VA", "s", "Ω"])
def test_every_si_prefix_scales_by_its_table_7_factor(name, symbol, factor, unit) -> None:
    """One of each prefix on each prefixable unit is the factor of SI Brochure Table 7."""
    kind = UNITS[unit].kind
    assert to_si(f"1 {symbol}{unit}", kind) == float(factor), name
    assert to_si(f"3.7{symbol}{unit}", kind) == float(Fraction("3.7") * factor), name


def test_the_prefix_table_is_exactly_table_7_plus_the_typed_u() -> None:
    brochure = {symbol: factor for _, symbol, factor in SI_BROCHURE_TABLE_7}
    brochure["μ"] = brochure.pop("µ")  # NFKC: the micro sign is the Greek mu
    ours = {symbol: Fraction(10) ** power for symbol, power in SI_PREFIXES.items()
            if symbol not in ("", "u")}
    assert ours == brochure
    assert SI_PREFIXES["u"] == SI_PREFIXES["μ"]


@pytest.mark.parametrize(("text", "kind", "expected"), [
    # The usual spellings, each against its SI definition (Table 7 factors).
    ("2.2 uF", "capacitance", 2.2e-6),
    ("2.2uF", "capacitance", 2.2e-6),
    ("2.2 µF", "capacitance", 2.2e-6),  # U+00B5 micro sign
    ("2.2 μF", "capacitance", 2.2e-6),  # U+03BC Greek mu
    ("47 nF", "capacitance", 47e-9),
    ("150 pF/m", "capacitance_per_length", 150e-12),
    ("0.15 uF/km", "capacitance_per_length", 150e-12),
    ("150 nF/km", "capacitance_per_length", 150e-12),
    ("22 kΩ", "resistance", 22e3),
    ("22 kΩ", "resistance", 22e3),  # U+2126 ohm sign
    ("22 kohm", "resistance", 22e3),
    ("22 kohms", "resistance", 22e3),
    ("10 MΩ", "resistance", 10e6),
    ("10 Mohm", "resistance", 10e6),
    ("10 megohms", "resistance", 10e6),
    ("470 ohms", "resistance", 470.0),
    ("25 kVA", "apparent_power", 25e3),
    ("1.5 MVA", "apparent_power", 1.5e6),
    ("7.5 kW", "real_power", 7.5e3),
    ("50 kvar", "reactive_power", 50e3),
    ("440 V", "voltage", 440.0),
    ("6.6 kV", "voltage", 6600.0),
    ("30 mA", "current", 0.030),
    ("150 m", "length", 150.0),
    ("1.2 km", "length", 1200.0),
    ("2.5 mm2", "area", 2.5e-6),
    ("2.5 mm²", "area", 2.5e-6),
    ("60 Hz", "frequency", 60.0),
    ("10 min", "time", 600.0),
    ("1 h", "time", 3600.0),
    ("35 °C", "temperature", 35.0),
    ("35 degC", "temperature", 35.0),
    ("  -1.5e+2 V ", "voltage", -150.0),
    ("440\u00a0V", "voltage", 440.0),  # a no-break space from a word processor
    (".5 A", "current", 0.5),
    ("5. A", "current", 5.0),
    (440, "voltage", 440.0),
    ("440", "voltage", 440.0),
])
def test_written_values_become_si(text, kind, expected) -> None:
    assert to_si(text, kind) == expected


def test_temperatures_convert_with_their_offsets() -> None:
    # 104 °F = 40 °C: (104 − 32) × 5/9, the Fahrenheit scale's definition (NIST SP 811,
    # 2008 edition; clause B.9 from memory). 313.15 K = 40 °C: t/°C = T/K − 273.15 (SI
    # Brochure, 9th ed., 2019, the definition of the Celsius temperature; section 2.3.1
    # from memory).
    assert to_si("104 degF", "temperature") == pytest.approx(40.0, abs=1e-12)
    assert to_si("313.15 K", "temperature") == pytest.approx(40.0, abs=1e-12)


@pytest.mark.parametrize(("text", "kind", "fragment"), [
    ("440 A", "voltage", "'A' is not a unit of voltage: it is a unit of current"),
    ("7.5 kVA", "real_power", "'kVA' is not a unit of real power: it is a unit of apparent "
                              "power"),
    ("7.5 kW", "apparent_power", "'kW' is not a unit of apparent power"),
    ("50 kvar", "apparent_power", "it is a unit of reactive power"),
    ("3 zorks", "length", "unknown unit 'zorks'"),
    ("3 kVa", "apparent_power", "unknown unit 'kVa' \\(did you mean 'kVA'"),
    ("lots", "voltage", "expected a number with a unit"),
    ("", "voltage", "expected a number with a unit"),
    ("V", "voltage", "expected a number with a unit"),
    ("1,5 V", "voltage", "unknown unit ',5 V'"),
    ("60 Hz*(kHz/Hz)**200", "frequency", "is not a unit symbol: .* no arithmetic"),
    ("60 9**(9**9)", "frequency", "is not a unit symbol: .* no arithmetic"),
    ("1e999 V", "voltage", "out of any range"),
    ("1e300 TV", "voltage", "out of any range"),
    ("1" * 70 + " V", "voltage", "too long for a quantity"),
    (True, "voltage", "expected a voltage"),
    (float("nan"), "voltage", "not a number a measurement can have"),
    (float("inf"), "voltage", "not a number a measurement can have"),
    (10 ** 400, "voltage", "out of any range"),
    ([440], "voltage", "expected a voltage such as '440 V', got list"),
])
def test_anything_but_a_number_and_a_unit_is_refused(text, kind, fragment) -> None:
    with pytest.raises(UnitProblem, match=fragment):
        to_si(text, kind)


def test_every_symbol_has_one_meaning() -> None:
    """The table is built by prefixing; a symbol two ways (say 'min') would be ambiguous."""
    assert UNITS["min"].kind == "time" and UNITS["mm"].kind == "length"
    assert UNITS["h"].kind == "time" and UNITS["hm"].kind == "length"
    assert UNITS["Mohm"].scale == 10**6 and UNITS["mohm"].scale == Fraction(1, 1000)


def test_parsing_time_does_not_grow_with_the_input() -> None:
    """A megabyte of text is refused by its length alone, in far less than a second."""
    started = time.perf_counter()
    for text in ("9" * 1_000_000, "60 " + "(" * 1_000_000, "1 " + "kHz/" * 250_000):
        with pytest.raises(UnitProblem):
            to_si(text, "frequency")
    assert time.perf_counter() - started < 0.5


@settings(max_examples=300, deadline=None)
@given(st.text(max_size=2 * MAX_LENGTH))
def test_any_text_is_read_or_refused_cleanly(text) -> None:
    try:
        value = to_si(text, "voltage")
    except UnitProblem:
        return
    assert math.isfinite(value)


@settings(max_examples=300, deadline=None)
@given(st.floats(allow_nan=False, allow_infinity=False, min_value=-1e30, max_value=1e30),
       st.sampled_from(sorted(s for s, u in UNITS.items() if u.offset == 0)))
def test_a_written_number_is_scaled_by_its_unit(number, symbol) -> None:
    unit = UNITS[symbol]
    value, parsed = parse_quantity(f"{number!r} {symbol}")
    assert parsed == symbol and value == Fraction(repr(number))
    assert to_si(f"{number!r}{symbol}", unit.kind) == float(Fraction(repr(number)) * unit.scale)
