"""Three-phase relations and transformer banks against SOURCES.md values."""

from __future__ import annotations

import math

import pytest

from workpack.electrical import (
    PhaseSequence,
    VectorGroup,
    delta_quantities,
    line_current,
    line_to_line,
    line_to_neutral,
    open_delta,
    source_phasors,
    transformer_bank,
    wye_quantities,
)


@pytest.mark.parametrize(
    ("v_ll", "v_ln"),
    [(440.0, 254.0), (480.0, 277.1), (400.0, 230.9), (690.0, 398.4)],
)
def test_line_to_neutral_matches_published_values(v_ll: float, v_ln: float) -> None:
    """V_LN = V_LL/√3: 440 → 254.0, 480 → 277.1, 400 → 230.9, 690 → 398.4 V
    (SOURCES.md, three-phase relations; values given to 0.1 V)."""
    assert line_to_neutral(v_ll) == pytest.approx(v_ln, abs=0.05)


def test_115_v_system_reads_66_v_to_earth() -> None:
    """Healthy 115 V insulated system: 66 V per phase to earth (DOMAIN primer, to 1 V)."""
    assert round(line_to_neutral(115.0)) == 66


@pytest.mark.parametrize(("winding", "line"), [(120.0, 208.0), (110.0, 190.5)])
def test_wye_from_windings(winding: float, line: float) -> None:
    """Wye from 120 V windings: 208 V; from 110 V windings: 190.5 V (SOURCES.md)."""
    assert line_to_line(winding) == pytest.approx(line, abs=0.5 if line == 208.0 else 0.05)


def test_delta_line_current_is_root3_winding_current() -> None:
    """Delta: 100 A winding → 173 A line (SOURCES.md, three-phase relations)."""
    q = delta_quantities(440.0, 173.2)
    assert q.phase_current_a == pytest.approx(100.0, abs=0.05)
    assert round(100.0 * math.sqrt(3)) == 173
    assert q.phase_voltage_v == 440.0
    w = wye_quantities(440.0, 173.2)
    assert w.phase_current_a == 173.2
    assert w.apparent_power_va == q.apparent_power_va


def test_line_current_of_a_balanced_load() -> None:
    """I = S/(√3·V_LL) (derived: S = √3·V_LL·I)."""
    assert line_current(100e3, 440.0) == pytest.approx(100e3 / (math.sqrt(3) * 440.0))


def test_phase_sequences_parse_and_place_phasors() -> None:
    """ABC: B lags A by 120°; ACB: C lags A (definition of positive sequence)."""
    abc = source_phasors(400.0, "ABC")
    acb = source_phasors(400.0, "A-C-B")
    assert math.degrees(math.atan2(abc["B"].imag, abc["B"].real)) == pytest.approx(-120.0)
    assert math.degrees(math.atan2(acb["C"].imag, acb["C"].real)) == pytest.approx(-120.0)
    assert PhaseSequence.parse("L1 L2 L3").order == ("L1", "L2", "L3")
    assert PhaseSequence.parse("L1L3L2").follows_label_order is False
    assert PhaseSequence.parse("BCA").follows_label_order is True
    assert PhaseSequence.parse("ABC").lagging("A") == "B"
    assert PhaseSequence.parse("ABC").leading("A") == "C"
    with pytest.raises(ValueError, match="three different phases"):
        PhaseSequence.parse("AAB")
    with pytest.raises(ValueError, match="three phase labels"):
        PhaseSequence.parse("A?B?C")


@pytest.mark.parametrize(
    ("group", "angle"),
    [("Dd0", 0.0), ("Dyn11", 30.0), ("Dy1", -30.0), ("YNd5", -150.0), ("Dyn1", -30.0),
     ("Yd1", -30.0), ("Yd11", 30.0), ("Yy0", 0.0)],
)
def test_vector_group_clock_gives_lv_angle(group: str, angle: float) -> None:
    """Clock number × 30° = lag of LV behind HV (IEC 60076-1, as in SOURCES.md: Dd0 0°,
    Dyn11 LV leads 30°, Dy1 LV lags 30°, YNd5 lags 150°; the rest derived from the rule)."""
    vg = VectorGroup.parse(group)
    assert vg.lv_angle_deg("ABC") == pytest.approx(angle)
    assert str(vg) == group


def test_vector_group_angle_mirrors_for_the_opposite_rotation() -> None:
    """With the opposite phase rotation the displacement is mirrored (derived)."""
    assert VectorGroup.parse("Dyn11").lv_angle_deg("ACB") == pytest.approx(-30.0)


@pytest.mark.parametrize(
    ("text", "message"),
    [("Dy0", "odd clock number"), ("Dd1", "even clock number"), ("Dyn13", "0-11"),
     ("DNy1", "no neutral"), ("Xy1", "HV letter"), ("dyn11", "HV letter")],
)
def test_invalid_vector_groups_are_refused(text: str, message: str) -> None:
    """Impossible groups say why (a wye against a delta shifts an odd multiple of 30°)."""
    with pytest.raises(ValueError, match=message):
        VectorGroup.parse(text)


def test_delta_delta_4_to_1_gives_110_v() -> None:
    """Dd0, 440 V, turns ratio 4:1 → 110 V, no phase shift (DOMAIN primer; derived:
    each winding sees line voltage)."""
    bank = transformer_bank(440.0, 4.0, "Dd0", load_va=30e3, unit_rating_va=15e3)
    assert bank.secondary_line_v == pytest.approx(110.0)
    assert bank.lv_angle_deg == 0.0
    assert bank.secondary_line_a == pytest.approx(math.sqrt(3) * bank.secondary_winding_a)
    assert bank.unit_load_va == pytest.approx(10e3)
    assert bank.unit_loading_fraction == pytest.approx(10e3 / 15e3)


def test_delta_wye_from_110_v_windings_gives_190_5_v() -> None:
    """Dyn11 with 110 V secondary windings: 190.5 V line-to-line, LV leads 30°
    (SOURCES.md: wye from 110 V windings; IEC 60076-1 clock rule)."""
    bank = transformer_bank(440.0, 4.0, "Dyn11")
    assert bank.secondary_winding_v == pytest.approx(110.0)
    assert bank.secondary_line_v == pytest.approx(190.5, abs=0.05)
    assert bank.lv_angle_deg == pytest.approx(30.0)


def test_bank_currents_conserve_power() -> None:
    """Ideal bank: √3·V1·I1 = √3·V2·I2 = S (derived)."""
    bank = transformer_bank(480.0, 480 / 120 * math.sqrt(3), "Yd1", load_va=45e3)
    assert bank.primary_winding_v == pytest.approx(480.0 / math.sqrt(3))
    s1 = math.sqrt(3) * bank.primary_line_v * bank.primary_line_a
    s2 = math.sqrt(3) * bank.secondary_line_v * bank.secondary_line_a
    assert s1 == pytest.approx(45e3) and s2 == pytest.approx(45e3)


def test_open_delta_capacity() -> None:
    """Three 10 kVA units → 17.32 kVA open delta, 57.7 % of the bank, 86.6 % of the
    two units (SOURCES.md, open delta)."""
    check = open_delta([10e3, 10e3, 10e3], failed_unit=1, load_va=15e3)
    assert check.open_delta_capacity_va == pytest.approx(17.32e3, abs=5)
    assert check.fraction_of_closed_bank == pytest.approx(0.577, abs=5e-4)
    assert check.fraction_of_remaining_units == pytest.approx(0.866, abs=5e-4)
    assert check.load_fits
    assert check.unit_load_va[0] == pytest.approx(15e3 / math.sqrt(3))  # derived: S/√3


def test_open_delta_overload_reports_load_to_shed() -> None:
    """25 kVA on two 10 kVA units (17.32 kVA) does not fit: shed 7.68 kVA (derived)."""
    check = open_delta([10e3, 10e3, 10e3], failed_unit=0, load_va=25e3)
    assert not check.load_fits
    assert check.load_to_shed_va == pytest.approx(25e3 - 10e3 * math.sqrt(3))
    assert check.unit_loading_fraction[0] > 1.0


def test_open_delta_refused_for_a_bank_with_a_wye_side() -> None:
    """Delta-wye has no open-delta fall-back (DOMAIN primer)."""
    with pytest.raises(ValueError, match="no open-delta fall-back"):
        open_delta([10e3] * 3, 0, 5e3, vector_group="Dyn11")


def test_unequal_units_limit_open_delta_to_the_smaller() -> None:
    """Each remaining unit carries S/√3, so the smaller unit sets √3 × its rating (derived)."""
    check = open_delta([10e3, 15e3, 25e3], failed_unit=2)
    assert check.open_delta_capacity_va == pytest.approx(math.sqrt(3) * 10e3)


def test_impossible_bank_inputs_are_refused() -> None:
    """Negative ratio, load or rating: ValueError naming the quantity."""
    with pytest.raises(ValueError, match="turns ratio"):
        transformer_bank(440.0, -4.0, "Dd0")
    with pytest.raises(ValueError, match="load"):
        transformer_bank(440.0, 4.0, "Dd0", load_va=-1.0)
    with pytest.raises(ValueError, match="failed unit"):
        open_delta([10e3] * 3, 3)
