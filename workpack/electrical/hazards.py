"""Hazard figures on an insulated system with a ground: voltages to earth, ground current,
intermittent-ground overvoltage, and NFPA 70E shock approach boundaries.

Units: volts, amperes, metres.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

from workpack.electrical.standards import ApproachBoundary, CodeSet
from workpack.electrical.threephase import line_to_neutral

# A healthy phase leading a resistive ground can reach (1+√7)/2 · V_LN at 3ωC0·Rf ≈ 0.373.
# Derived from the single-fault locus (KCL at the earth node); no published statement found.
LEADING_PHASE_MAX_PER_UNIT = (1.0 + math.sqrt(7.0)) / 2.0


# Derived from the single-ground locus (SOURCES.md): the phase leading a resistive
# ground peaks at (1 + √7)/2 ≈ 1.823 × V_LN when 3ωC0·Rf ≈ 0.373.
MAX_SINGLE_GROUND_PU = (1 + 7 ** 0.5) / 2


@dataclass(frozen=True)
class HazardNote:
    """One caution, worded for a printed package: a signal word and plain text."""

    signal_word: str  # "DANGER", "WARNING" or "CAUTION"
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


def ground_hazards(
    line_voltage_v: float,
    phase_to_earth_v: Mapping[str, float],
    ground_current_a: float | None = None,
    intermittent: bool = False,
    guides: CodeSet | None = None,
    shift_threshold: float = 0.1,
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
    notes: list[HazardNote] = []
    if shifted:
        notes.append(
            HazardNote(
                "WARNING",
                f"A ground is indicated: phase {phase} stands at {highest:.0f} V to earth "
                f"(normal {v_ln:.0f} V). A partial ground can go solid, and a resistive one "
                f"can lift a phase to about {MAX_SINGLE_GROUND_PU:.2f} × {v_ln:.0f} V = "
                f"{MAX_SINGLE_GROUND_PU * v_ln:.0f} V (derived): treat every conductor as at "
                f"least {max(highest, line_voltage_v, MAX_SINGLE_GROUND_PU * v_ln):.0f} V "
                "to earth.",
            )
        )
        notes.append(
            HazardNote(
                "DANGER",
                "A second ground on another phase of this system is a phase-to-phase short "
                "through earth: heavy current, breakers may trip, arcing.",
            )
        )
    if highest > line_voltage_v:
        notes.append(
            HazardNote(
                "WARNING",
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
        notes.append(HazardNote("DANGER", text))
    return GroundHazards(
        line_voltage_v=line_voltage_v,
        normal_phase_to_earth_v=v_ln,
        highest_phase_to_earth_v=highest,
        highest_phase=phase,
        highest_per_unit=highest / v_ln,
        above_line_voltage=highest > line_voltage_v,
        ground_current_a=ground_current_a,
        approach_entry_v=max(line_voltage_v, highest),
        notes=tuple(notes),
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
