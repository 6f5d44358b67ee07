"""Three phase-to-earth readings at a switchboard, with no plant file: the quick diagnose.

Apart from ``diagnose.py`` so that answering at a switchboard loads only the ground
calculations and the hazard notes, not the plant model, the planner or their libraries
(``tests/test_startup.py`` holds it to that). Pure.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

from workpack.electrical.ground_inverse import GroundDiagnosis, MeterTolerance, diagnose_ground
from workpack.electrical.hazards import GroundHazards, HazardNote, ground_hazards


@dataclass(frozen=True)
class ReadingSummary:
    """The answer to three readings at a switchboard, stated only as far as it is known.

    Phase, resistance and current are given only when one single ground explains the
    readings; otherwise they are null and ``best_fit`` says what came closest.
    """

    status: str
    consistent: bool
    grounded_phase: str | None
    fault_resistance_ohm: float | None
    fault_resistance_interval_ohm: tuple[float, float] | None
    fault_current_a: float | None
    neutral_shift_v: float
    candidate_phases: tuple[str, ...]
    lowest_reading_phase: str
    best_fit: GroundDiagnosis
    cautions: tuple[HazardNote, ...] = ()  # for what stands now


def summarize_readings(result: GroundDiagnosis,
                       hazards: GroundHazards | None = None) -> ReadingSummary:
    known = result.grounded_phase is not None
    return ReadingSummary(
        cautions=hazards.notes if hazards else (),
        status=result.status.value, consistent=result.consistent,
        grounded_phase=result.grounded_phase,
        fault_resistance_ohm=result.fault_resistance_ohm if known else None,
        fault_resistance_interval_ohm=result.fault_resistance_interval_ohm if known else None,
        fault_current_a=result.fault_current_a if known else None,
        neutral_shift_v=result.neutral_shift_v, candidate_phases=result.candidate_phases,
        lowest_reading_phase=result.lowest_reading_phase, best_fit=result)


def diagnose_readings(readings: Mapping[str, float], line_voltage_v: float,
                      sequence: str | None = None, *, frequency_hz: float | None = None,
                      capacitance_f: float | None = None,
                      tolerance_percent: float = 1.0) -> ReadingSummary:
    """Three phase-to-earth readings (V) taken at a switchboard, with no plant file: the
    ground they show and the hazards that stand with it.

    ``sequence`` defaults to the phase labels in alphabetical order ("A-B-C"). The
    frequency (Hz) matters only with a capacitance per phase (F): without one there is
    no fault resistance to find. ``tolerance_percent`` of reading, plus 1 V, is the
    meter's accuracy. ValueError for readings that cannot be diagnosed.
    """
    result = diagnose_ground(readings, line_voltage_v, sequence or "-".join(sorted(readings)),
                             frequency_hz=frequency_hz if capacitance_f is not None else None,
                             capacitance_f=capacitance_f,
                             tolerance=MeterTolerance(relative=tolerance_percent / 100))
    hazards = ground_hazards(line_voltage_v, readings, result.fault_current_a)
    return summarize_readings(result, hazards)
