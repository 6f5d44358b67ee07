"""Hazard figures on an insulated system with a ground: voltages to earth, ground current,
intermittent-ground overvoltage, and NFPA 70E shock approach boundaries.

Units: volts, amperes, metres.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from enum import StrEnum

from workpack.electrical.standards import ApproachBoundary, CodeSet
from workpack.electrical.threephase import line_to_neutral
from workpack.model.signal_word import SignalWord

# A healthy phase leading a resistive ground can reach (1+√7)/2 · V_LN at 3ωC0·Rf ≈ 0.373.
# Derived from the single-fault locus (KCL at the earth node); no published statement found.
# A resistive detector burden (lamps, meters) only flattens the locus and lowers the peak
# (ground_inverse.leading_phase_max), so the figure bounds every balanced system.
LEADING_PHASE_MAX_PER_UNIT = (1.0 + math.sqrt(7.0)) / 2.0
MAX_SINGLE_GROUND_PU = LEADING_PHASE_MAX_PER_UNIT


@dataclass(frozen=True)
class VoltageToEarth:
    """The one worst-case voltage to earth (V) a package states for a system.

    Hazard facts, cautions, the approach-boundary table entry and the glove class all use
    ``worst_v`` (for the last two, never less than the line voltage: ``exposure_v``).
    """

    line_voltage_v: float
    worst_v: float  # the highest voltage to earth a person can meet on the system
    exposure_v: float  # max(line voltage, worst_v): enters NFPA 70E and the glove class
    measured_v: float | None  # the highest phase-to-earth reading of the day, if any
    insulated: bool
    single_ground_v: float | None  # (1+√7)/2 × V_LN on an insulated system, else None

    def why(self, ground_present: bool = False) -> str:
        """Where ``worst_v`` comes from, in words for the page."""
        v_ln = line_to_neutral(self.line_voltage_v)
        if self.single_ground_v is None:
            return (f"solidly grounded: a ground trips; the phases stay at V_LL/√3 = "
                    f"{v_ln:.0f} V to earth")
        if self.measured_v is not None and self.measured_v > self.single_ground_v:
            return (f"measured {self.measured_v:.0f} V to earth, above the "
                    f"{self.single_ground_v:.0f} V one ground can cause")
        lift = (f"a resistive one lifts a phase to up to {MAX_SINGLE_GROUND_PU:.2f} × "
                f"{v_ln:.0f} V = {self.single_ground_v:.0f} V to earth (derived)")
        if ground_present:
            return f"a solid ground puts the healthy phases at line voltage and {lift}"
        return f"a first ground can appear during the work and trips nothing; {lift}"

    @property
    def basis(self) -> str:
        """``why`` for a system with no ground known."""
        return self.why(False)


def worst_voltage_to_earth(
    line_voltage_v: float, insulated: bool, measured_highest_v: float | None = None
) -> VoltageToEarth:
    """The worst-case voltage to earth (V) on a system of ``line_voltage_v`` (V).

    On an insulated (or resistance-earthed) system nothing trips on a first ground, which can
    appear at any time during the job: a solid one puts the healthy phases at line voltage,
    a resistive one lifts the leading phase up to (1+√7)/2 × V_LN (derived, SOURCES.md), and
    a reading of the day may be higher still (a meter, unequal capacitance). On a solidly
    grounded system a ground trips and the phases stay at V_LN to earth.
    """
    if not math.isfinite(line_voltage_v) or line_voltage_v <= 0:
        raise ValueError(f"line voltage must be positive volts (got {line_voltage_v!r})")
    if measured_highest_v is not None and (
        not math.isfinite(measured_highest_v) or measured_highest_v < 0
    ):
        raise ValueError(f"measured voltage must be 0 V or more (got {measured_highest_v!r})")
    v_ln = line_to_neutral(line_voltage_v)
    measured = measured_highest_v or 0.0
    bound = MAX_SINGLE_GROUND_PU * v_ln if insulated else None
    worst = max(bound if bound is not None else v_ln, measured)
    return VoltageToEarth(
        line_voltage_v=line_voltage_v, worst_v=worst,
        exposure_v=max(line_voltage_v, worst), measured_v=measured_highest_v,
        insulated=insulated, single_ground_v=bound)


class GroundHazard(StrEnum):
    """What a note about a ground warns of."""

    ground_indicated = "ground_indicated"  # a phase has moved: treat all as up to worst_v
    second_ground = "second_ground"  # a ground on another phase is a short through earth
    above_line_voltage = "above_line_voltage"  # a phase stands above line voltage to earth
    intermittent = "intermittent"  # an arcing ground's transient overvoltages


@dataclass(frozen=True)
class HazardNote:
    """One caution, worded for a printed package: a signal word, what it warns of, and
    plain text."""

    signal_word: SignalWord
    kind: GroundHazard
    text: str


@dataclass(frozen=True)
class GroundHazards:
    """What a person meets on a system with (possibly) a ground on it."""

    line_voltage_v: float
    normal_phase_to_earth_v: float  # V_LN
    highest_phase_to_earth_v: float
    highest_phase: str
    highest_per_unit: float  # of V_LN
    above_line_voltage: bool
    ground_current_a: float | None
    approach_entry_v: float  # the voltage to enter a phase-to-phase approach table with
    notes: tuple[HazardNote, ...]
    worst_v: float = 0.0  # the one worst-case voltage to earth (worst_voltage_to_earth)


def ground_hazards(
    line_voltage_v: float,
    phase_to_earth_v: Mapping[str, float],
    ground_current_a: float | None = None,
    intermittent: bool = False,
    guides: CodeSet | None = None,
    shift_threshold: float = 0.1,
    insulated: bool = True,
) -> GroundHazards:
    """Highest phase-to-earth voltage (V), ground current (A) and cautions.

    ``phase_to_earth_v`` are magnitudes (V), measured or from the forward model. A shift
    beyond ``shift_threshold`` × V_LN on any phase is treated as a ground present (our
    threshold). ``guides`` (code set "it-system-guides") supplies the intermittent-ground
    overvoltage figures of a grounding application guide.
    """
    if not math.isfinite(line_voltage_v) or line_voltage_v <= 0:
        raise ValueError(f"line voltage must be positive volts (got {line_voltage_v!r})")
    if len(phase_to_earth_v) != 3:
        raise ValueError(f"give three phase-to-earth voltages (got {len(phase_to_earth_v)})")
    for label, v in phase_to_earth_v.items():
        if not math.isfinite(v) or v < 0:
            raise ValueError(f"phase {label}: voltage to earth must be 0 V or more (got {v!r})")
    if ground_current_a is not None and (math.isnan(ground_current_a) or ground_current_a < 0):
        raise ValueError(f"ground current must be 0 A or more (got {ground_current_a!r})")
    v_ln = line_to_neutral(line_voltage_v)
    phase = max(sorted(phase_to_earth_v), key=lambda k: phase_to_earth_v[k])
    highest = phase_to_earth_v[phase]
    shifted = any(abs(v - v_ln) > shift_threshold * v_ln for v in phase_to_earth_v.values())
    worst = worst_voltage_to_earth(line_voltage_v, insulated, highest)
    notes: list[HazardNote] = []
    if shifted:
        notes.append(
            HazardNote(
                SignalWord.warning, GroundHazard.ground_indicated,
                f"A ground is indicated: phase {phase} stands at {highest:.0f} V to earth "
                f"(normal {v_ln:.0f} V). A partial ground can go solid, and a resistive one "
                f"can lift a phase to about {MAX_SINGLE_GROUND_PU:.2f} × {v_ln:.0f} V = "
                f"{MAX_SINGLE_GROUND_PU * v_ln:.0f} V (derived): treat every conductor as up "
                f"to {worst.worst_v:.0f} V to earth.",
            )
        )
        notes.append(
            HazardNote(
                SignalWord.danger, GroundHazard.second_ground,
                "A second ground on another phase of this system is a phase-to-phase short "
                "through earth: heavy current, breakers may trip, arcing.",
            )
        )
    if highest > line_voltage_v:
        notes.append(
            HazardNote(
                SignalWord.warning, GroundHazard.above_line_voltage,
                f"Phase {phase} is above line voltage to earth ({highest:.0f} V > "
                f"{line_voltage_v:.0f} V): a resistive ground lifts the leading phase up "
                f"to {LEADING_PHASE_MAX_PER_UNIT:.3f} × V_LN (derived).",
            )
        )
    if intermittent:
        text = (
            "Intermittent (arcing) ground: transient overvoltages of several times normal "
            "can break down insulation elsewhere. Find and clear it first."
        )
        if guides is not None:
            example = guides.guide("intermittent_ground_overvoltage_example")
            failure = guides.guide("insulation_failure_overvoltage")
            text += (
                f" ({example.citation.document}: {example.value:g} per unit in a theory "
                f"example; insulation usually fails at {failure.low:g}–{failure.high:g} "
                "per unit.)"
            )
        notes.append(HazardNote(SignalWord.danger, GroundHazard.intermittent, text))
    return GroundHazards(
        line_voltage_v=line_voltage_v,
        normal_phase_to_earth_v=v_ln,
        highest_phase_to_earth_v=highest,
        highest_phase=phase,
        highest_per_unit=highest / v_ln,
        above_line_voltage=highest > line_voltage_v,
        ground_current_a=ground_current_a,
        approach_entry_v=worst.exposure_v,
        notes=tuple(notes),
        worst_v=worst.worst_v,
    )


def approach_boundary(
    code_set: CodeSet,
    line_voltage_v: float,
    highest_phase_to_earth_v: float | None = None,
) -> ApproachBoundary | None:
    """NFPA 70E shock approach boundaries (m) for a nominal phase-to-phase voltage (V).

    On an insulated system with a ground present a healthy phase stands at line voltage
    or above to earth, so the table is entered with the larger of the line voltage and the
    highest phase-to-earth voltage. NFPA 70E 2021 Table 130.4(E)(a) (2018: 130.4(D)(a)).
    None below the table's first row (50 V); ValueError above its last.
    """
    if not code_set.approach_boundaries:
        raise ValueError(f"code set {code_set.name!r} has no approach-boundary table")
    if not math.isfinite(line_voltage_v) or line_voltage_v <= 0:
        raise ValueError(f"line voltage must be positive volts (got {line_voltage_v!r})")
    voltage = line_voltage_v
    if highest_phase_to_earth_v is not None:
        if not math.isfinite(highest_phase_to_earth_v) or highest_phase_to_earth_v < 0:
            raise ValueError(
                f"phase-to-earth voltage must be 0 V or more (got {highest_phase_to_earth_v!r})"
            )
        voltage = max(voltage, highest_phase_to_earth_v)
    rows = code_set.approach_boundaries
    if voltage < rows[0].from_v:
        return None
    for row in rows:
        if voltage <= row.up_to_v:
            return row
    raise ValueError(
        f"{voltage:g} V is above the {code_set.name} table, which ends at {rows[-1].up_to_v:g} V"
    )
