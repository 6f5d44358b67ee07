"""Hazard figures and NFPA 70E approach boundaries."""

from __future__ import annotations

import math

import pytest

from workpack.electrical import (
    LEADING_PHASE_MAX_PER_UNIT,
    approach_boundary,
    ground_hazards,
    load_code_set,
    single_ground,
    worst_voltage_to_earth,
)

NFPA = load_code_set("nfpa70e-2021")
GUIDES = load_code_set("it-system-guides")


@pytest.mark.parametrize(
    ("volts", "label", "restricted"),
    [(120.0, "50–150 V", None), (150.0, "50–150 V", None), (208.0, "151–750 V", 0.3),
     (440.0, "151–750 V", 0.3), (690.0, "151–750 V", 0.3), (4160.0, "751 V–15 kV", 0.7)],
)
def test_approach_boundary_rows(volts: float, label: str, restricted: float | None) -> None:
    """NFPA 70E-2021 Table 130.4(E)(a) (SOURCES.md): rows by phase-to-phase voltage."""
    row = approach_boundary(NFPA, volts)
    assert row is not None
    assert row.label == label
    assert row.restricted_m == restricted
    assert row.limited_movable_m == 3.0


def test_below_50_v_no_row_and_above_15_kv_refused() -> None:
    """The table starts at 50 V and ends at 15 kV (SOURCES.md)."""
    assert approach_boundary(NFPA, 24.0) is None
    with pytest.raises(ValueError, match="above the nfpa70e-2021 table"):
        approach_boundary(NFPA, 33000.0)


def test_grounded_insulated_system_enters_the_table_at_the_higher_voltage() -> None:
    """With a ground present a healthy phase stands at line voltage or above to earth:
    enter the table accordingly (SOURCES.md). A 150 V system with a phase lifted to
    158 V to earth moves from the 50–150 V row to the 151–750 V row."""
    row_line = approach_boundary(NFPA, 150.0)
    assert row_line is not None and row_line.label == "50–150 V"
    row = approach_boundary(NFPA, 150.0, highest_phase_to_earth_v=158.0)
    assert row is not None and row.label == "151–750 V"


def test_bolted_ground_hazards() -> None:
    """Bolted ground on 440 V: healthy phases at line voltage (Mitolo eqs. 9.11-9.13),
    current 3ωC0·V_LN (eq. 9.15), a WARNING and the second-ground DANGER."""
    sol = single_ground(440.0, 60.0, 2.2e-6, "A", 0.0)
    h = ground_hazards(440.0, sol.phase_to_earth_magnitude_v, abs(sol.ground_current_a))
    assert h.highest_phase_to_earth_v == pytest.approx(440.0)
    assert h.highest_per_unit == pytest.approx(math.sqrt(3))
    assert h.ground_current_a == pytest.approx(3 * 2 * math.pi * 60 * 2.2e-6 * 440 / math.sqrt(3))
    words = [n.signal_word for n in h.notes]
    assert "WARNING" in words and "DANGER" in words


def test_resistive_ground_can_lift_a_phase_above_line_voltage() -> None:
    """At 3ωC0·Rf ≈ 0.373 the leading phase reaches (1+√7)/2·V_LN ≈ 1.823, above line
    voltage (derived, SOURCES.md)."""
    x = math.tan(0.5 * math.atan(math.sqrt(3) / 2))
    rf = x / (3 * 2 * math.pi * 60 * 2.2e-6)
    mags = single_ground(440.0, 60.0, 2.2e-6, "B", rf).phase_to_earth_magnitude_v
    h = ground_hazards(440.0, mags)
    assert h.highest_phase == "A"  # ABC: A leads B
    assert h.highest_per_unit == pytest.approx(LEADING_PHASE_MAX_PER_UNIT, rel=1e-9)
    assert h.above_line_voltage
    assert h.approach_entry_v > 440.0


def test_intermittent_ground_gets_the_overvoltage_danger() -> None:
    """Intermittent grounds: 5.5 per unit theory example, insulation fails at 6–7 per
    unit (a grounding application guide, SOURCES.md)."""
    h = ground_hazards(440.0, {"A": 254.0, "B": 254.0, "C": 254.0}, intermittent=True,
                       guides=GUIDES)
    danger = [n.text for n in h.notes if n.signal_word == "DANGER"]
    assert danger and "5.5 per unit" in danger[0] and "6–7 per unit" in danger[0]


def test_healthy_system_has_no_ground_warning() -> None:
    """Balanced readings: no ground warning."""
    h = ground_hazards(440.0, {"A": 254.0, "B": 253.0, "C": 255.0})
    assert h.notes == ()
    with pytest.raises(ValueError, match="three phase-to-earth"):
        ground_hazards(440.0, {"A": 254.0})


def test_one_worst_case_voltage_to_earth_per_system() -> None:
    """440 V insulated: (1+√7)/2 × 254 V = 463 V to earth (derived from the single-ground
    locus, SOURCES.md), above the line voltage, so 463 V enters the approach table and the
    glove class too. 400 V solidly grounded: 231 V to earth (V_LL/√3, SOURCES.md), 400 V
    phase to phase for the table. A reading above the bound is taken as it is."""
    it = worst_voltage_to_earth(440.0, insulated=True)
    assert it.worst_v == pytest.approx((1 + math.sqrt(7)) / 2 * 440 / math.sqrt(3))
    assert round(it.worst_v) == 463 and it.exposure_v == it.worst_v
    assert "463 V" in it.why() and "trips nothing" in it.why()
    assert "solid ground puts the healthy phases at line voltage" in it.why(True)
    tn = worst_voltage_to_earth(400.0, insulated=False)
    assert tn.worst_v == pytest.approx(400 / math.sqrt(3)) and tn.exposure_v == 400.0
    odd = worst_voltage_to_earth(440.0, insulated=True, measured_highest_v=480.0)
    assert odd.worst_v == 480.0 and "measured 480 V" in odd.why()


def test_ground_caution_and_table_entry_use_the_same_figure() -> None:
    """The caution's 'treat every conductor as up to … V' and the approach table entry are
    the one worst-case figure (the issue: one page said 440 V, another 463 V)."""
    h = ground_hazards(440.0, {"A": 348.0, "B": 236.0, "C": 209.0})
    figure = f"{h.worst_v:.0f} V"
    assert figure == "463 V"
    assert any(f"treat every conductor as up to {figure} to earth" in n.text for n in h.notes)
    assert h.approach_entry_v == pytest.approx(h.worst_v)


def test_150_v_insulated_system_enters_the_next_row() -> None:
    """150 V insulated: 1.823 × 86.6 V = 158 V to earth (derived) moves the entry from the
    50–150 V row to the 151–750 V row of NFPA 70E-2021 Table 130.4(E)(a)."""
    worst = worst_voltage_to_earth(150.0, insulated=True)
    row = approach_boundary(NFPA, 150.0, worst.exposure_v)
    assert row is not None and row.label == "151–750 V"
