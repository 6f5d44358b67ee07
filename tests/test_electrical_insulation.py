"""Insulation-resistance rules against the published tables in SOURCES.md."""

from __future__ import annotations

from datetime import date

import pytest
from hypothesis import given
from hypothesis import strategies as st

from workpack.electrical import (
    DatedReading,
    TrendStatus,
    correct_to_reference,
    correction_instruction,
    dc_test_voltage,
    default_code_set,
    insulation_trend,
    judge_insulation,
    judge_polarization_index,
    load_code_set,
    minimum_insulation_resistance,
    polarization_index,
)

IEEE = load_code_set("ieee43-2013")
IEEE2000 = load_code_set("ieee43-2000")
NETA = load_code_set("neta-mts-2019")
OIL = load_code_set("neta-mts-2019/oil")
SOLID = load_code_set("neta-mts-2019/solid")
IEC = load_code_set("iec60364-6")
MEG = 1e6


@pytest.mark.parametrize(
    ("rated", "low", "high"),
    [(440, 500, 500), (999, 500, 500), (1000, 500, 1000), (2500, 500, 1000),
     (4160, 1000, 2500), (6600, 2500, 5000), (12000, 2500, 5000), (13800, 5000, 10000)],
)
def test_ieee43_dc_test_voltage(rated: float, low: float, high: float) -> None:
    """IEEE Std 43-2013 test-voltage guideline table (SOURCES.md): <1000 V → 500 V;
    1000–2500 → 500–1000; 2501–5000 → 1000–2500; 5001–12 000 → 2500–5000;
    >12 000 → 5000–10 000."""
    tv = dc_test_voltage(IEEE, rated)
    assert (tv.min_v, tv.max_v) == (low, high)
    assert tv.citation.document == "IEEE Std 43"


def test_ieee43_minimum_ir() -> None:
    """IEEE Std 43 clause 12.3 (SOURCES.md): kV + 1 MΩ; 100 MΩ form-wound after ~1970;
    5 MΩ random-wound; 5 MΩ form-wound below 1 kV (from memory); DC armatures 5 MΩ in
    2013 and 100 MΩ in 2000 (SOURCES.md: 'since 2013 also DC armatures')."""
    assert minimum_insulation_resistance(IEEE, 4160, "kv_plus_1").minimum_ohm == pytest.approx(
        5.16 * MEG
    )
    assert minimum_insulation_resistance(IEEE, 6600, "form_wound").minimum_ohm == 100 * MEG
    assert minimum_insulation_resistance(IEEE, 440, "random_wound").minimum_ohm == 5 * MEG
    low = minimum_insulation_resistance(IEEE, 690, "form_wound")
    assert low.minimum_ohm == 5 * MEG and low.citation.strength == "from memory"
    assert minimum_insulation_resistance(IEEE, 250, "dc_armature").minimum_ohm == 5 * MEG
    assert minimum_insulation_resistance(IEEE2000, 250, "dc_armature").minimum_ohm == 100 * MEG
    assert minimum_insulation_resistance(IEEE, 440, "random_wound").reference_c == 40
    with pytest.raises(ValueError, match="random_wound"):
        minimum_insulation_resistance(IEEE, 440, "random_wond")


@pytest.mark.parametrize(
    ("rated", "test_v", "min_mohm"),
    [(120, 500, 25), (250, 500, 25), (440, 1000, 100), (600, 1000, 100), (1000, 1000, 100),
     (2400, 1000, 500), (4160, 2500, 1500), (8000, 2500, 2500), (13800, 2500, 5000),
     (25000, 5000, 10000), (34500, 5000, 100000)],
)
def test_neta_table_100_1(rated: float, test_v: float, min_mohm: float) -> None:
    """ANSI/NETA MTS-2019 Table 100.1 (SOURCES.md); a rating between rows takes the next
    row up (e.g. 440 V → the 600 V row; common practice)."""
    assert dc_test_voltage(NETA, rated).min_v == test_v
    assert minimum_insulation_resistance(NETA, rated).minimum_ohm == min_mohm * MEG


@pytest.mark.parametrize(
    ("rated", "kind", "test_v", "min_mohm"),
    [(230, None, 500, 1.0), (400, None, 500, 1.0), (500, None, 500, 1.0),
     (690, None, 1000, 1.0), (24, "selv_pelv", 250, 0.5)],
)
def test_iec60364_6_table(rated: float, kind: str | None, test_v: float, min_mohm: float) -> None:
    """IEC 60364-6 style (SOURCES.md): 50–500 V → 500 V DC, 1.0 MΩ; 500–1000 V → 1000 V,
    1.0 MΩ; SELV/PELV → 250 V, 0.5 MΩ."""
    assert dc_test_voltage(IEC, rated, kind).min_v == test_v
    minimum = minimum_insulation_resistance(IEC, rated, circuit_kind=kind)
    assert minimum.minimum_ohm == pytest.approx(min_mohm * MEG)


def test_ratings_outside_a_table_are_refused() -> None:
    """Above the IEC table (1000 V) or below its start (50 V): ValueError, not a guess."""
    with pytest.raises(ValueError, match="above the iec60364-6 table"):
        dc_test_voltage(IEC, 3300)
    with pytest.raises(ValueError, match="below the iec60364-6 table"):
        dc_test_voltage(IEC, 24)


@pytest.mark.parametrize(("reading", "temp", "expected"),
                         [(400, 20, 100), (100, 40, 100), (3, 60, 12), (80, 10, 10)])
def test_ieee43_halving_rule(reading: float, temp: float, expected: float) -> None:
    """R40 = R_T·0.5^((40 − T)/10): 400 MΩ at 20 °C → 100 MΩ (IEEE Std 43, SOURCES.md
    worked example); 3 MΩ at 60 °C → 12 MΩ and 80 MΩ at 10 °C → 10 MΩ (derived from the
    same formula at the ends of the range it is used in)."""
    c = correct_to_reference(IEEE, reading * MEG, temp)
    assert c.corrected_ohm == pytest.approx(expected * MEG, rel=1e-12)
    assert c.reference_c == 40


@pytest.mark.parametrize("temp", [70.0, 61.0, 9.5, -5.0])
def test_ieee43_halving_is_not_used_far_from_40_c(temp: float) -> None:
    """Outside 10–60 °C the halving rule is not applied: the reading cannot be judged and a
    retest nearer 40 °C is asked for (range: common practice, our bound; SOURCES.md's
    example of 3 MΩ at 70 °C → 24 MΩ is the formula, not a reading we judge)."""
    with pytest.raises(ValueError, match="nearer 40 °C"):
        correct_to_reference(IEEE, 3 * MEG, temp)
    with pytest.raises(ValueError, match="nearer 40 °C"):
        judge_insulation(IEEE, 3 * MEG, temp, 440.0, winding="random_wound")
    rule = IEEE.temperature_correction
    assert rule is not None and rule.valid_range_c == (10.0, 60.0)
    assert rule.range_citation is not None
    assert rule.range_citation.strength == "common practice"


def test_the_printed_correction_states_the_range_and_the_retest() -> None:
    """What the package prints about the correction comes from the same tables."""
    text = correction_instruction(IEEE)
    assert text == ("correct to 40 °C by halving per 10 °C rise (IEEE Std 43 (2013)), for "
                    "readings at 10–60 °C only (common practice); outside that, test again "
                    "nearer 40 °C")
    solid = correction_instruction(SOLID)
    assert solid == ("correct to 20 °C with Table 100.14, solid insulation column (ANSI/NETA "
                     "MTS (2019)), for readings at 0–75 °C only; outside that, test again "
                     "nearer 20 °C")


def test_neta_correction_worked_example() -> None:
    """1200 MΩ at 35 °C × 2.80 = 3360 MΩ at 20 °C (SOURCES.md worked example, oil column
    of ANSI/NETA MTS-2019 Table 100.14, checked against a publicly available copy of the table)."""
    c = correct_to_reference(OIL, 1200 * MEG, 35.0)
    assert c.corrected_ohm == pytest.approx(3360 * MEG, rel=1e-12)
    assert c.reference_c == 20
    assert c.citation.clause == "Table 100.14"
    assert c.citation.strength == "published"


OIL_FACTORS = [(0, 0.25), (5, 0.36), (10, 0.50), (15, 0.75), (20, 1.00), (25, 1.40),
               (30, 1.98), (35, 2.80), (40, 3.95), (45, 5.60), (50, 7.85), (55, 11.20),
               (60, 15.85), (65, 22.40), (70, 31.75), (75, 44.70)]
SOLID_FACTORS = [(0, 0.40), (5, 0.50), (10, 0.63), (15, 0.81), (20, 1.00), (25, 1.25),
                 (30, 1.58), (35, 2.00), (40, 2.50), (45, 3.15), (50, 3.98), (55, 5.00),
                 (60, 6.30), (65, 7.90), (70, 10.0), (75, 12.6)]


@pytest.mark.parametrize(("temp", "factor"), OIL_FACTORS)
def test_neta_oil_factors_at_table_points(temp: float, factor: float) -> None:
    """ANSI/NETA MTS-2019 Table 100.14, oil-immersed column, at every point (SOURCES.md,
    checked against a publicly available copy of the table); 15 °C is 0.75, not 0.74."""
    assert correct_to_reference(OIL, 1 * MEG, temp).factor == pytest.approx(factor, rel=1e-12)


@pytest.mark.parametrize(("temp", "factor"), SOLID_FACTORS)
def test_neta_solid_factors_at_table_points(temp: float, factor: float) -> None:
    """ANSI/NETA MTS-2019 Table 100.14, solid-insulation column, at every point
    (SOURCES.md, checked against a publicly available copy of the table)."""
    assert correct_to_reference(SOLID, 1 * MEG, temp).factor == pytest.approx(factor,
                                                                              rel=1e-12)


def test_30_megohm_at_40_c_passes_the_oil_column_and_fails_the_solid_one() -> None:
    """The issue's case: 30 MΩ at 40 °C against a 100 MΩ minimum (ANSI/NETA MTS-2019
    Table 100.1, 600 V row). Oil column: 30 × 3.95 = 118.5 MΩ at 20 °C, passes; solid
    column: 30 × 2.50 = 75 MΩ, fails (Table 100.14, checked against a publicly available
    copy of the table). Switchgear is solid insulation."""
    oil = judge_insulation(OIL, 30 * MEG, 40.0, 440.0)
    solid = judge_insulation(SOLID, 30 * MEG, 40.0, 440.0)
    assert oil.minimum.minimum_ohm == solid.minimum.minimum_ohm == 100 * MEG
    assert oil.value_ohm == pytest.approx(118.5 * MEG) and oil.passes
    assert solid.value_ohm == pytest.approx(75 * MEG) and not solid.passes


def test_the_bare_neta_name_names_no_column_and_corrects_nothing() -> None:
    """Which column applies depends on the equipment: the bare code set refuses to guess."""
    with pytest.raises(ValueError, match="neta-mts-2019/oil"):
        correct_to_reference(NETA, 1 * MEG, 30.0)
    with pytest.raises(ValueError, match="no correction column 'soild'.*did you mean 'solid'"):
        load_code_set("neta-mts-2019/soild")


@pytest.mark.parametrize(
    ("winding_v", "kind", "test_v", "min_mohm"),
    [(115, "liquid_filled", 1000, 100), (440, "dry_type", 1000, 500),
     (600, "dry_type", 1000, 500), (690, "liquid_filled", 2500, 1000),
     (4160, "dry_type", 2500, 5000), (5000, "liquid_filled", 2500, 1000),
     (6600, "liquid_filled", 5000, 5000), (11000, "dry_type", 5000, 25000)],
)
def test_neta_transformer_winding_table(winding_v: float, kind: str, test_v: float,
                                        min_mohm: float) -> None:
    """ANSI/NETA Table 100.5 (SOURCES.md, checked against a publicly available copy of the ATS
    edition's table): ≤600 V 1000 V DC, 100 MΩ liquid-filled / 500 MΩ dry-type; 601–5000 V
    2500 V DC, 1000 / 5000 MΩ; above 5000 V 5000 V DC, 5000 / 25 000 MΩ; at 20 °C."""
    for code_set in (OIL, SOLID):
        tv = dc_test_voltage(code_set, winding_v, transformer=kind)
        assert (tv.min_v, tv.max_v) == (test_v, test_v)
        minimum = minimum_insulation_resistance(code_set, winding_v, transformer=kind)
        assert minimum.minimum_ohm == pytest.approx(min_mohm * MEG)
        assert minimum.reference_c == 20
        assert minimum.citation.clause == "Table 100.5"
    # The general Table 100.1 gives a dry-type 440 V winding only 100 MΩ: not used for it.
    assert minimum_insulation_resistance(SOLID, 440).minimum_ohm == 100 * MEG
    with pytest.raises(ValueError, match="liquid_filled, dry_type"):
        minimum_insulation_resistance(SOLID, 440, transformer="oil")


@given(st.floats(0.0, 75.0))
def test_neta_interpolation_stays_between_neighbouring_points(temp: float) -> None:
    """Between table points the factor lies between its neighbours and rises with
    temperature (our geometric interpolation; the table itself is monotone)."""
    for code_set in (OIL, SOLID):
        points = code_set.temperature_correction.points  # type: ignore[union-attr]
        k = correct_to_reference(code_set, 1 * MEG, temp).factor
        below = max(f for t, f in points if t <= temp)
        above = min(f for t, f in points if t >= temp)
        assert below * (1 - 1e-12) <= k <= above * (1 + 1e-12)


def test_neta_correction_outside_the_table_is_refused() -> None:
    """No extrapolation beyond 0–75 °C (the span of Table 100.14)."""
    with pytest.raises(ValueError, match="outside 0–75 °C.*nearer 20 °C"):
        correct_to_reference(SOLID, 1 * MEG, 80.0)


def test_polarization_index_minimum_by_class() -> None:
    """Minimum PI: class A 1.5; B, F, H 2.0 (IEEE Std 43, SOURCES.md)."""
    assert polarization_index(100 * MEG, 180 * MEG) == pytest.approx(1.8)
    assert judge_polarization_index(IEEE, 100 * MEG, 180 * MEG, "A").passes is True
    assert judge_polarization_index(IEEE, 100 * MEG, 180 * MEG, "F").passes is False
    assert judge_polarization_index(IEEE, 100 * MEG, 200 * MEG, "h").passes is True
    with pytest.raises(ValueError, match="thermal class"):
        judge_polarization_index(IEEE, 1 * MEG, 2 * MEG, "E")


def test_polarization_index_waived_above_5000_megohm() -> None:
    """PI may be disregarded above 5000 MΩ at 40 °C (IEEE Std 43; weakly confirmed, so
    marked from memory)."""
    j = judge_polarization_index(IEEE, 6000 * MEG, 6600 * MEG, "F", 6000 * MEG)
    assert j.waived and j.passes is None
    assert j.citation.strength == "from memory"


def test_judge_insulation_corrects_before_comparing() -> None:
    """A 440 V random-wound motor reading 12 MΩ at 20 °C is 3 MΩ at 40 °C, below the
    5 MΩ minimum (IEEE Std 43 halving rule and clause 12.3; derived: 12 × 0.25 = 3)."""
    j = judge_insulation(IEEE, 12 * MEG, 20.0, 440.0, winding="random_wound")
    assert j.value_ohm == pytest.approx(3 * MEG)
    assert not j.passes
    assert judge_insulation(IEC, 2 * MEG, None, 400.0).passes


def test_trend_flags_a_large_drop() -> None:
    """Corrected values falling by more than half from the best earlier value are
    flagged (threshold: common practice)."""
    readings = [
        DatedReading(date(2023, 1, 10), 800 * MEG, 20.0),
        DatedReading(date(2023, 7, 10), 780 * MEG, 20.0),
        DatedReading(date(2024, 1, 10), 300 * MEG, 20.0),
    ]
    t = insulation_trend(IEEE, readings, minimum_ohm=5 * MEG, horizon_months=1)
    assert t.status is TrendStatus.FALLING
    assert t.drop_fraction == pytest.approx(1 - 300 / 800)
    assert t.citation.strength == "common practice"


def test_trend_projects_the_date_the_minimum_is_reached() -> None:
    """An exponential decline fitted to readings halving each year reaches 5 MΩ (from
    20 MΩ corrected) in two years (derived: 20 → 10 → 5)."""
    readings = [
        DatedReading(date(2022, 1, 1), 80 * MEG, 40.0),
        DatedReading(date(2023, 1, 1), 40 * MEG, 40.0),
        DatedReading(date(2024, 1, 1), 20 * MEG, 40.0),
    ]
    t = insulation_trend(IEEE, readings, minimum_ohm=5 * MEG, horizon_months=30)
    assert t.status is TrendStatus.REACHES_MINIMUM_SOON
    assert t.rate_per_year == pytest.approx(-0.5, abs=1e-3)
    assert t.projected_minimum_on is not None
    assert abs((t.projected_minimum_on - date(2026, 1, 1)).days) <= 2
    steady = insulation_trend(IEEE, readings, minimum_ohm=5 * MEG, horizon_months=12)
    assert steady.status is TrendStatus.FALLING  # 75 % below the best, beyond half


def test_trend_compares_corrected_values() -> None:
    """The same insulation read warm and cold is steady once corrected (IEEE Std 43
    halving rule: 100 MΩ at 40 °C = 400 MΩ at 20 °C)."""
    readings = [
        DatedReading(date(2023, 1, 1), 400 * MEG, 20.0),
        DatedReading(date(2023, 6, 1), 100 * MEG, 40.0),
    ]
    t = insulation_trend(IEEE, readings, minimum_ohm=5 * MEG)
    assert t.status is TrendStatus.STEADY
    assert t.corrected_ohm == pytest.approx((100 * MEG, 100 * MEG))


def test_trend_leaves_out_readings_it_cannot_correct() -> None:
    """A reading outside the halving rule's 10–60 °C (common practice) is left out of the
    trend, as the judging of a package leaves it unjudged; none left is no trend, not an
    error (planning reads trends of every item)."""
    readings = [
        DatedReading(date(2023, 1, 1), 400 * MEG, 20.0),
        DatedReading(date(2023, 6, 1), 1 * MEG, 75.0),
        DatedReading(date(2024, 1, 1), 100 * MEG, 40.0),
    ]
    t = insulation_trend(IEEE, readings, minimum_ohm=5 * MEG)
    assert t.dates == (date(2023, 1, 1), date(2024, 1, 1))
    assert t.status is TrendStatus.STEADY
    assert len(t.left_out) == 1 and "75 °C" in t.left_out[0]
    none = insulation_trend(NETA, readings, minimum_ohm=5 * MEG)
    assert none.status is TrendStatus.INSUFFICIENT and none.latest_ohm is None
    assert len(none.left_out) == 3


def test_trend_below_minimum_and_single_reading() -> None:
    """Latest below the minimum is flagged first; one reading is not a trend."""
    one = insulation_trend(IEEE, [DatedReading(date(2024, 1, 1), 50 * MEG, 40.0)], 5 * MEG)
    assert one.status is TrendStatus.INSUFFICIENT
    low = insulation_trend(IEEE, [DatedReading(date(2024, 1, 1), 4 * MEG, 40.0)], 5 * MEG)
    assert low.status is TrendStatus.BELOW_MINIMUM


def test_default_code_sets_by_kind() -> None:
    """Machines → IEEE 43; installations → IEC 60364-6; other apparatus → NETA MTS."""
    assert default_code_set("rotating_machine") == "ieee43-2013"
    assert default_code_set("installation_circuit") == "iec60364-6"
    assert default_code_set("transformer") == "neta-mts-2019"
    with pytest.raises(ValueError, match="did you mean 'cable'"):
        default_code_set("cabel")


def test_impossible_insulation_inputs_are_refused() -> None:
    """Zero or negative resistances, and missing temperatures, raise ValueError."""
    with pytest.raises(ValueError, match="insulation resistance"):
        correct_to_reference(IEEE, -1.0, 20.0)
    with pytest.raises(ValueError, match="10-minute"):
        polarization_index(1 * MEG, 0.0)
    with pytest.raises(ValueError, match="give the winding"):
        judge_insulation(IEEE, 10 * MEG, None, 440.0, winding="random_wound")
