"""Ground-detector lamps and insulation monitors."""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from workpack.electrical import (
    Confidence,
    LampBands,
    MonitorSeverity,
    assess_insulation_monitor,
    diagnose_lamps,
    lamp_resistance,
    load_code_set,
    single_ground,
)

GUIDE = load_code_set("it-system-guides").guide("insulation_monitor_response_per_volt").value


def test_one_dark_two_bright_is_a_solid_ground_with_high_confidence() -> None:
    """One dark and two bright: a solid ground on the dark phase (DOMAIN primer)."""
    d = diagnose_lamps({"A": "bright", "B": "dark", "C": "bright"})
    assert d.suspected_phases == ("B",)
    assert d.confidence is Confidence.HIGH


def test_equal_lamps_mean_no_ground_indicated() -> None:
    """Equal brightness: no ground (DOMAIN primer), but lamps miss high resistances."""
    d = diagnose_lamps({"A": "normal", "B": "normal", "C": "normal"})
    assert d.suspected_phases == ()
    assert "insulation monitor" in d.next_step


def test_a_lone_dim_lamp_cannot_say_which_phase() -> None:
    """One dim lamp: the grounded phase is that one or the phase it lags (the lagging
    phase reads lowest once 3ωC0·Rf > √3, DOMAIN primer); say so and say what to measure."""
    d = diagnose_lamps({"A": "dim", "B": "normal", "C": "normal"}, "ABC")
    assert set(d.suspected_phases) == {"A", "C"}  # ABC: A lags C
    assert d.confidence is Confidence.LOW
    assert "voltmeter" in d.next_step


def test_dim_and_bright_lamps_point_past_the_dim_one() -> None:
    """Dim A with B bright (ABC): B leads C, so the ground is on C at high resistance and
    A, lagging C, is the dim one; the finding says the dim lamp is not the grounded phase."""
    d = diagnose_lamps({"A": "dim", "B": "bright", "C": "normal"}, "ABC")
    assert d.suspected_phases == ("C",)
    assert "not the grounded phase" in d.finding


def test_a_dark_lamp_with_normal_neighbours_suggests_a_failed_lamp() -> None:
    """A solid ground would make the other two bright: a dark lamp alone fits no ground."""
    d = diagnose_lamps({"A": "dark", "B": "normal", "C": "normal"})
    assert d.confidence is Confidence.NONE
    assert "failed lamp" in d.finding and "test button" in d.next_step


@settings(max_examples=200, deadline=None)
@given(x=st.floats(1e-3, 30.0), phase=st.sampled_from(["A", "B", "C"]),
       seq=st.sampled_from(["ABC", "ACB"]))
def test_lamps_seen_from_the_model_always_include_the_grounded_phase(
    x: float, phase: str, seq: str
) -> None:
    """Lamp states made from forward-model voltages (with the same bands) are always
    explained with the true phase among the suspects; never a wrong certainty."""
    bands = LampBands()
    rf = x / (3 * 2 * math.pi * 60 * 1e-6)
    mags = single_ground(440, 60, 1e-6, phase, rf, seq).phase_to_earth_magnitude_v
    v_ln = 440 / math.sqrt(3)
    obs = {k: bands.classify(v / v_ln) for k, v in mags.items()}
    d = diagnose_lamps(obs, seq, bands)
    if all(s == "normal" for s in obs.values()):
        assert d.suspected_phases == ()
    else:
        assert d.exact_match
        assert phase in d.suspected_phases
        if d.confidence is Confidence.HIGH:
            assert d.suspected_phases == (phase,)


LAMP_15W_250V = 250.0**2 / 15.0  # R = V²/P


def test_lamp_resistance_is_v_squared_over_p() -> None:
    """P = V²/R (Ohm's law): a 15 W 250 V lamp is 4167 Ω; a 15 W 130 V one 1127 Ω."""
    assert lamp_resistance(15.0, 250.0) == pytest.approx(4166.67, rel=1e-5)
    assert lamp_resistance(15.0, 130.0) == pytest.approx(1126.67, rel=1e-5)
    with pytest.raises(ValueError, match="lamp power"):
        lamp_resistance(0.0, 250.0)


def test_lamps_in_the_model_tell_which_phase_a_lone_dim_lamp_is() -> None:
    """440 V, 60 Hz, C0 0.1 µF, lamps of 8 kΩ per phase to earth, 12 kΩ on B: the forward
    model with the lamps gives B dim and the others normal. Read as if the lamps were not
    in the circuit, a lone dim lamp is B or the phase it lags (the lagging phase reads
    lowest beyond 3ωC0·Rf = √3); with their burden (arg(G + jωC0) = 17° ≤ 60°) the lagging
    phase can never read lowest, so the dim lamp is the grounded one. (Which phase reads
    lowest with and without lamps is checked on lcapy's numbers in
    tests/test_electrical_ground_lcapy.py.)"""
    bands = LampBands()
    v_ln = 440 / math.sqrt(3)
    lit = single_ground(440, 60, 0.1e-6, "B", 12e3, burden_ohm=8e3).phase_to_earth_magnitude_v
    seen = {k: bands.classify(v / v_ln) for k, v in lit.items()}
    assert seen == {"A": "normal", "B": "dim", "C": "normal"}
    naive = diagnose_lamps(seen, "ABC", bands)
    assert set(naive.suspected_phases) == {"A", "B"}
    d = diagnose_lamps(seen, "ABC", bands, frequency_hz=60, capacitance_f=0.1e-6,
                       burden_ohm=8e3)
    assert d.suspected_phases == ("B",)
    assert math.isinf(d.lag_dimmest_above_ratio)
    assert "dimmest lamp is always the grounded phase" in d.finding
    low, high = d.ratio_range["B"]
    x = 3 * 2 * math.pi * 60 * 0.1e-6 * 12e3
    assert low <= x <= high


@settings(max_examples=200, deadline=None)
@given(x=st.floats(1e-3, 30.0), phase=st.sampled_from(["A", "B", "C"]),
       seq=st.sampled_from(["ABC", "ACB"]), c0=st.floats(0.01e-6, 5e-6),
       lamp=st.floats(500.0, 50e3), f=st.sampled_from([50.0, 60.0]))
def test_lamps_with_their_burden_always_include_the_grounded_phase(
    x: float, phase: str, seq: str, c0: float, lamp: float, f: float
) -> None:
    """Lamp states made from the forward model with the lamps' own resistance to earth are
    explained with the true phase among the suspects (never a wrong certainty), and the
    brightness the guidance prints for that phase holds what each lamp shows (power ∝ V²)."""
    bands = LampBands()
    rf = x / (3 * 2 * math.pi * f * c0)
    mags = single_ground(440, f, c0, phase, rf, seq, burden_ohm=lamp).phase_to_earth_magnitude_v
    v_ln = 440 / math.sqrt(3)
    obs = {k: bands.classify(v / v_ln) for k, v in mags.items()}
    d = diagnose_lamps(obs, seq, bands, frequency_hz=f, capacitance_f=c0, burden_ohm=lamp)
    if all(s == "normal" for s in obs.values()):
        assert d.suspected_phases == ()
        return
    assert d.exact_match
    assert phase in d.suspected_phases
    if d.confidence is Confidence.HIGH:
        assert d.suspected_phases == (phase,)
    low, high = d.ratio_range[phase]
    # The model's grid is 2001 points on the locus: allow one step of slack at the ends.
    if low * 0.98 <= x <= high * 1.02:
        for lbl, v in mags.items():
            lo, hi = d.brightness[phase][lbl]
            assert lo - 0.05 <= (v / v_ln) ** 2 <= hi + 0.05


def test_lamp_inputs_are_checked() -> None:
    """Unknown states and missing phases are refused; 'off' reads as dark."""
    assert diagnose_lamps({"A": "off", "B": "bright", "C": "bright"}).suspected_phases == ("A",)
    with pytest.raises(ValueError, match="must be one of"):
        diagnose_lamps({"A": "flickering", "B": "normal", "C": "normal"})
    with pytest.raises(ValueError, match="lamp observations must name"):
        diagnose_lamps({"A": "dim", "B": "normal"})
    with pytest.raises(ValueError, match="lamp bands"):
        LampBands(dark_below=0.9, dim_below=0.5)
    with pytest.raises(ValueError, match="needs the frequency and capacitance"):
        diagnose_lamps({"A": "dim", "B": "normal", "C": "normal"}, burden_ohm=4e3)


def test_monitor_response_guide_at_440_v_is_22_kilohm() -> None:
    """Response value guide 50 Ω/V: 440 V → 22 kΩ (IEC 60364-5-53 guidance as stated by
    an insulation-monitor maker, SOURCES.md)."""
    a = assess_insulation_monitor(500e3, 30e3, 440.0, GUIDE)
    assert a.guide_response_ohm == pytest.approx(22e3)
    assert a.severity is MonitorSeverity.NORMAL
    assert not a.setting_below_guide


@pytest.mark.parametrize(
    ("reading", "severity"),
    [(10e3, MonitorSeverity.ALARM), (30e3, MonitorSeverity.ALARM),
     (45e3, MonitorSeverity.PREWARNING), (61e3, MonitorSeverity.NORMAL),
     (math.inf, MonitorSeverity.NORMAL)],
)
def test_monitor_severity_against_setting(reading: float, severity: MonitorSeverity) -> None:
    """At or below the setting: alarm; within 2× (our two-stage default, common
    practice): prewarning; above: normal."""
    assert assess_insulation_monitor(reading, 30e3, 440.0, GUIDE).severity is severity


def test_monitor_setting_below_the_guide_is_noted() -> None:
    """A 10 kΩ alarm on 440 V is below the 22 kΩ guide (50 Ω/V, SOURCES.md)."""
    a = assess_insulation_monitor(100e3, 10e3, 440.0, GUIDE)
    assert a.setting_below_guide and "22 kΩ" in a.note
    with pytest.raises(ValueError, match="alarm setting"):
        assess_insulation_monitor(100e3, -1.0, 440.0, GUIDE)
