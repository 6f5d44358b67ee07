"""Forward ground model: published relations, derived extremes, and conservation laws."""

from __future__ import annotations

import cmath
import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from workpack.electrical import (
    CableRun,
    Fault,
    charging_current,
    fault_ratio,
    single_ground,
    solve_ground,
    system_capacitance,
)

SQRT3 = math.sqrt(3)


@pytest.mark.parametrize("phase", ["A", "B", "C"])
def test_bolted_ground_puts_faulted_phase_at_zero_and_others_at_line_voltage(phase: str) -> None:
    """Bolted ground: faulted phase 0 V, the others line voltage to earth.

    Source: Mitolo, Electrical Safety of Low-Voltage Systems, ch. 9, eqs. 9.11-9.13.
    """
    sol = single_ground(440.0, 60.0, 2.2e-6, phase, 0.0)
    mags = sol.phase_to_earth_magnitude_v
    assert mags[phase] == 0.0  # exact: the bolted case is its own branch, not a limit
    for other in {"A", "B", "C"} - {phase}:
        assert mags[other] == pytest.approx(440.0, rel=1e-12)
    assert sol.neutral_shift_v == pytest.approx(440.0 / SQRT3, rel=1e-12)


def test_bolted_ground_current_is_charging_current() -> None:
    """Bolted ground current = 3ωC0·V_LN (Mitolo, ch. 9, eq. 9.15 with R_G = 0)."""
    sol = single_ground(480.0, 60.0, 1.5e-6, "B", 0.0)
    expected = 3 * 2 * math.pi * 60.0 * 1.5e-6 * 480.0 / SQRT3
    assert abs(sol.fault_currents_a[0]) == pytest.approx(expected, rel=1e-12)
    assert charging_current(480.0, 60.0, 1.5e-6) == pytest.approx(expected, rel=1e-15)


@settings(max_examples=200, deadline=None)
@given(
    v_ll=st.floats(115, 690),
    freq=st.sampled_from([50.0, 60.0]),
    c0=st.floats(0.2e-6, 10e-6),
    rf=st.floats(0.0, 1e6),
    phase=st.sampled_from(["A", "B", "C"]),
    seq=st.sampled_from(["ABC", "ACB"]),
)
def test_resistive_ground_matches_published_current_and_locus(
    v_ll: float, freq: float, c0: float, rf: float, phase: str, seq: str
) -> None:
    """I_G = j3ωC0·V_LN/(1 + j3ωC0·R_G) (Mitolo, ch. 9, eqs. 9.14-9.15) and the earth
    point V_g = E_k/(1 + j3ωC0·Rf) (SOURCES.md, from KCL at the earth node)."""
    sol = single_ground(v_ll, freq, c0, phase, rf)
    x = 3 * 2 * math.pi * freq * c0 * rf
    e_k = sol.source_v[phase]
    expected_i = 1j * 3 * 2 * math.pi * freq * c0 * e_k / (1 + 1j * x)
    assert abs(sol.fault_currents_a[0] - expected_i) <= 1e-9 * abs(expected_i)
    assert abs(sol.earth_potential_v - e_k / (1 + 1j * x)) <= 1e-9 * abs(e_k)
    assert sol.neutral_to_earth_v == -sol.earth_potential_v


def test_leading_phase_peaks_at_derived_maximum() -> None:
    """The phase leading the ground peaks at (1+√7)/2·V_LN ≈ 1.823 at 3ωC0·Rf ≈ 0.373.

    Derived (SOURCES.md; no published statement found): with x = tan θ the leading
    reading squared is 2 + cos 2θ + (√3/2)·sin 2θ per unit, whose maximum is 2 + √7/2 =
    ((1+√7)/2)² at tan 2θ = √3/2, i.e. x = tan(½·arctan(√3/2)) ≈ 0.373. Checked here by a
    sweep of the forward model, independent of that closed form.
    """
    v_ll, freq, c0 = 440.0, 60.0, 2.2e-6
    omega3c = 3 * 2 * math.pi * freq * c0
    best_v, best_x = 0.0, 0.0
    for i in range(1, 20001):
        x = i * 1e-4 * 2  # 0.0002 .. 4
        sol = single_ground(v_ll, freq, c0, "B", x / omega3c)
        lead = sol.phase_to_earth_magnitude_v["A"]  # ABC: A leads B
        if lead > best_v:
            best_v, best_x = lead, x
    v_ln = v_ll / SQRT3
    assert best_v / v_ln == pytest.approx((1 + math.sqrt(7)) / 2, rel=1e-6)
    assert best_x == pytest.approx(math.tan(0.5 * math.atan(SQRT3 / 2)), abs=1e-3)
    assert best_x == pytest.approx(0.373, abs=1e-3)


def test_at_sqrt3_the_faulted_and_lagging_phases_both_read_0866() -> None:
    """At 3ωC0·Rf = √3 the faulted and the lagging healthy phase both read 0.866·V_LN
    (DOMAIN primer; derived: |jx/(1+jx)| = √3/2 at x = √3)."""
    v_ll, freq, c0 = 480.0, 60.0, 1.0e-6
    rf = SQRT3 / (3 * 2 * math.pi * freq * c0)
    mags = single_ground(v_ll, freq, c0, "A", rf).phase_to_earth_magnitude_v
    v_ln = v_ll / SQRT3
    assert mags["A"] / v_ln == pytest.approx(SQRT3 / 2, rel=1e-12)
    assert mags["B"] / v_ln == pytest.approx(SQRT3 / 2, rel=1e-12)  # ABC: B lags A
    assert mags["C"] > v_ln  # the leading phase reads high


@settings(max_examples=100, deadline=None)
@given(x=st.floats(SQRT3 * 1.01, 1e3), phase=st.sampled_from(["A", "B", "C"]),
       seq=st.sampled_from(["ABC", "ACB"]))
def test_above_sqrt3_the_lowest_reading_is_a_healthy_phase(x: float, phase: str, seq: str) -> None:
    """Once 3ωC0·Rf > √3 the lagging healthy phase reads lower than the faulted one
    (DOMAIN primer: "the lowest phase is the grounded one" holds only for low Rf)."""
    from workpack.electrical import PhaseSequence

    s = PhaseSequence.parse(seq)
    rf = x / (3 * 2 * math.pi * 60.0 * 2e-6)
    mags = single_ground(440.0, 60.0, 2e-6, phase, rf, seq).phase_to_earth_magnitude_v
    assert min(mags, key=mags.__getitem__) == s.lagging(phase)


@settings(max_examples=200, deadline=None)
@given(
    caps=st.tuples(*[st.floats(0.0, 10e-6)] * 3),
    leaks=st.tuples(*[st.one_of(st.none(), st.floats(1e3, 1e8))] * 3),
    faults=st.lists(
        st.tuples(st.sampled_from(["A", "B", "C"]), st.floats(1e-3, 1e6)), max_size=3
    ),
)
def test_currents_into_earth_sum_to_zero(
    caps: tuple[float, float, float],
    leaks: tuple[float | None, float | None, float | None],
    faults: list[tuple[str, float]],
) -> None:
    """Kirchhoff's current law at the earth node, checked branch by branch (a law, not a
    source value): capacitive + leakage + fault currents into earth sum to zero."""
    labels = ("A", "B", "C")
    if sum(caps) == 0 and all(r is None for r in leaks) and not faults:
        return
    omega = 2 * math.pi * 50.0
    sol = solve_ground(
        400.0,
        50.0,
        dict(zip(labels, caps, strict=True)),
        "ABC",
        {k: r for k, r in zip(labels, leaks, strict=True) if r is not None},
        [Fault(p, r) for p, r in faults],
    )
    total = sum(sol.fault_currents_a, 0j)
    for k, c, r in zip(labels, caps, leaks, strict=True):
        v = sol.phase_to_earth_v[k]
        total += 1j * omega * c * v + (0 if r is None else v / r)
    assert abs(total) <= 1e-9 * (1 + sum(abs(i) for i in sol.fault_currents_a))


def test_double_fault_current_flows_phase_to_phase_through_earth() -> None:
    """Two low-resistance faults on different phases: nearly all current goes from one
    fault to the other, ≈ V_LL/(R1 + R2) (DOMAIN primer: a phase-to-phase short through
    earth; derived by Ohm's law; the capacitive paths shift it by about 3ωC0·R ≈ 0.2 %)."""
    sol = solve_ground(440.0, 60.0, 2.2e-6, "ABC", None, [Fault("A", 1.0), Fault("C", 2.0)])
    i_a, i_c = sol.fault_currents_a
    assert abs(i_a) == pytest.approx(440.0 / 3.0, rel=5e-3)
    assert abs(i_a + i_c) < 1e-2 * abs(i_a)  # what goes in at A comes out at C
    # With no capacitance at all the series circuit is exact: I = (E_A − E_C)/(R1 + R2).
    bare = solve_ground(440.0, 60.0, 0.0, "ABC", None, [Fault("A", 1.0), Fault("C", 2.0)])
    e = bare.source_v
    assert abs(bare.fault_currents_a[0] - (e["A"] - e["C"]) / 3.0) < 1e-12 * 440


def test_two_bolted_faults_on_different_phases_are_refused() -> None:
    """The ideal-source model has no finite answer: refuse with the reason."""
    with pytest.raises(ValueError, match="short the source through earth"):
        solve_ground(440.0, 60.0, 2e-6, "ABC", None, [Fault("A", 0.0), Fault("B", 0.0)])


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"capacitance_f": -1e-6}, "capacitance to earth of phase A"),
        ({"capacitance_f": 0.0}, "no path to earth"),
        ({"frequency_hz": 0.0}, "frequency must be"),
        ({"line_voltage_v": -440.0}, "line voltage must be"),
        ({"leakage_ohm": 0.0}, "give a 0 Ω connection as a Fault"),
        ({"faults": [Fault("X", 10.0)]}, "fault on phase 'X'"),
        ({"capacitance_f": {"A": 1e-6, "B": 1e-6}}, "capacitance must name the phases"),
    ],
)
def test_impossible_inputs_are_refused(kwargs: dict[str, object], message: str) -> None:
    """Each impossible input raises ValueError naming what is wrong."""
    args: dict[str, object] = {
        "line_voltage_v": 440.0,
        "frequency_hz": 60.0,
        "capacitance_f": 2e-6,
        "sequence": "ABC",
    }
    args.update(kwargs)
    with pytest.raises(ValueError, match=message):
        solve_ground(**args)  # type: ignore[arg-type]


def test_negative_fault_resistance_is_refused() -> None:
    """A fault of negative resistance is impossible."""
    with pytest.raises(ValueError, match="fault resistance on A"):
        Fault("A", -5.0)


def test_acb_sequence_swaps_the_roles_of_the_healthy_phases() -> None:
    """Reversing the rotation relabels the healthy phases (derived: in ACB, C sits where B
    sits in ABC, and the earth point E_A/(1 + jx) does not move)."""
    abc = single_ground(440.0, 60.0, 2e-6, "A", 500.0, "ABC").phase_to_earth_v
    acb = single_ground(440.0, 60.0, 2e-6, "A", 500.0, "ACB").phase_to_earth_v
    assert abs(abc["B"] - acb["C"]) < 1e-9
    assert abs(abc["C"] - acb["B"]) < 1e-9
    assert abs(abc["A"] - acb["A"]) < 1e-9
    assert abs(abs(abc["B"]) - abs(abc["C"])) > 10  # and the two healthy phases differ


def test_cable_capacitance_and_charging_current() -> None:
    """C0 = Σ per-metre capacitance × length + lumped; charging current 3ωC0·V_LN.

    150 pF/m per conductor: an insulation-monitor maker's handbook (SOURCES.md).
    Derived: 2 km × 150 pF/m = 0.3 µF; plus 10 × 10 nF = 0.4 µF; at 440 V 60 Hz,
    3 × 377 × 0.4e-6 × 254 = 0.115 A.
    """
    c = system_capacitance([CableRun(1500.0, 150e-12), CableRun(500.0, 150e-12)], [10e-9] * 10)
    assert c.cables_f == pytest.approx(0.3e-6, rel=1e-12)
    assert c.per_phase_f == pytest.approx(0.4e-6, rel=1e-12)
    i = charging_current(440.0, 60.0, c.per_phase_f)
    assert i == pytest.approx(3 * 2 * math.pi * 60 * 0.4e-6 * 440 / SQRT3, rel=1e-12)
    assert i == pytest.approx(0.115, abs=5e-4)
    with pytest.raises(ValueError, match="length"):
        CableRun(-1.0, 150e-12)


def test_fault_ratio_is_three_omega_c_r() -> None:
    """x = 3ωC0·Rf (the dimensionless number in Mitolo's eq. 9.14)."""
    assert fault_ratio(60.0, 2.2e-6, 1000.0) == pytest.approx(3 * 2 * math.pi * 60 * 2.2e-3)
    assert cmath.isclose(
        single_ground(440, 60, 2.2e-6, "A", 1000.0).earth_potential_v,
        single_ground(440, 60, 2.2e-6, "A", 0.0).source_v["A"]
        / (1 + 1j * fault_ratio(60.0, 2.2e-6, 1000.0)),
    )
