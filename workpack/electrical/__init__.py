"""Pure electrical calculations for insulated three-phase systems and transformer banks.

Three-phase and transformer relations, the forward ground model and its inverse, ground
detectors, hazard figures, insulation-resistance rules and system capacitance. Quantities
are SI (V, A, Ω, F, Hz, °C, s). Only ``tables.load_code_set`` reads files (the standards
tables shipped as YAML); every other function is pure.

The names below are imported on first use (PEP 562), so a command that needs one
calculation (the quick diagnose) does not load every module and the libraries they use.
"""

from importlib import import_module
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from workpack.electrical.capacitance import (
        CableRun,
        SystemCapacitance,
        charging_current,
        system_capacitance,
    )
    from workpack.electrical.detectors import (
        Confidence,
        LampBands,
        LampDiagnosis,
        MonitorAssessment,
        MonitorSeverity,
        assess_insulation_monitor,
        diagnose_lamps,
        lamp_resistance,
        parallel_conductance,
    )
    from workpack.electrical.ground import (
        Fault,
        GroundSolution,
        fault_ratio,
        single_ground,
        solve_ground,
    )
    from workpack.electrical.ground_inverse import (
        BatchDiagnosis,
        GroundDiagnosis,
        GroundStatus,
        MeterTolerance,
        diagnose_ground,
        diagnose_ground_batch,
        lag_crossover_ratio,
        leading_phase_max,
        locus_angle,
    )
    from workpack.electrical.hazards import (
        LEADING_PHASE_MAX_PER_UNIT,
        GroundHazard,
        GroundHazards,
        HazardNote,
        VoltageToEarth,
        approach_boundary,
        ground_hazards,
        worst_voltage_to_earth,
    )
    from workpack.electrical.insulation import (
        CorrectedResistance,
        DatedReading,
        IrJudgement,
        MinimumIr,
        PolarizationJudgement,
        TestVoltage,
        TrendJudgement,
        TrendStatus,
        correct_to_reference,
        correction_instruction,
        correction_range,
        dc_test_voltage,
        default_code_set,
        insulation_trend,
        judge_insulation,
        judge_polarization_index,
        minimum_insulation_resistance,
        polarization_index,
    )
    from workpack.electrical.standards import (
        ApproachBoundary,
        Citation,
        CodeSet,
        GuideValue,
    )
    from workpack.electrical.tables import available_code_sets, load_code_set
    from workpack.electrical.threephase import (
        ConnectionQuantities,
        PhaseSequence,
        delta_quantities,
        line_current,
        line_to_line,
        line_to_neutral,
        source_phasors,
        wye_quantities,
    )
    from workpack.electrical.transformers import (
        BankRatings,
        OpenDeltaCheck,
        VectorGroup,
        open_delta,
        transformer_bank,
    )

# name -> the module of this package that defines it
_HOME = {
    "ApproachBoundary": "standards",
    "BankRatings": "transformers",
    "BatchDiagnosis": "ground_inverse",
    "CableRun": "capacitance",
    "Citation": "standards",
    "CodeSet": "standards",
    "Confidence": "detectors",
    "ConnectionQuantities": "threephase",
    "CorrectedResistance": "insulation",
    "DatedReading": "insulation",
    "Fault": "ground",
    "GroundDiagnosis": "ground_inverse",
    "GroundHazard": "hazards",
    "GroundHazards": "hazards",
    "GroundSolution": "ground",
    "GroundStatus": "ground_inverse",
    "GuideValue": "standards",
    "HazardNote": "hazards",
    "IrJudgement": "insulation",
    "LEADING_PHASE_MAX_PER_UNIT": "hazards",
    "LampBands": "detectors",
    "LampDiagnosis": "detectors",
    "MeterTolerance": "ground_inverse",
    "MinimumIr": "insulation",
    "MonitorAssessment": "detectors",
    "MonitorSeverity": "detectors",
    "OpenDeltaCheck": "transformers",
    "PhaseSequence": "threephase",
    "PolarizationJudgement": "insulation",
    "SystemCapacitance": "capacitance",
    "TestVoltage": "insulation",
    "TrendJudgement": "insulation",
    "TrendStatus": "insulation",
    "VectorGroup": "transformers",
    "VoltageToEarth": "hazards",
    "approach_boundary": "hazards",
    "assess_insulation_monitor": "detectors",
    "available_code_sets": "tables",
    "charging_current": "capacitance",
    "correct_to_reference": "insulation",
    "correction_instruction": "insulation",
    "correction_range": "insulation",
    "dc_test_voltage": "insulation",
    "default_code_set": "insulation",
    "delta_quantities": "threephase",
    "diagnose_ground": "ground_inverse",
    "diagnose_ground_batch": "ground_inverse",
    "diagnose_lamps": "detectors",
    "fault_ratio": "ground",
    "ground_hazards": "hazards",
    "insulation_trend": "insulation",
    "judge_insulation": "insulation",
    "judge_polarization_index": "insulation",
    "lag_crossover_ratio": "ground_inverse",
    "lamp_resistance": "detectors",
    "leading_phase_max": "ground_inverse",
    "line_current": "threephase",
    "line_to_line": "threephase",
    "line_to_neutral": "threephase",
    "load_code_set": "tables",
    "locus_angle": "ground_inverse",
    "minimum_insulation_resistance": "insulation",
    "open_delta": "transformers",
    "parallel_conductance": "detectors",
    "polarization_index": "insulation",
    "single_ground": "ground",
    "solve_ground": "ground",
    "source_phasors": "threephase",
    "system_capacitance": "capacitance",
    "transformer_bank": "transformers",
    "worst_voltage_to_earth": "hazards",
    "wye_quantities": "threephase",
}

__all__ = [
    "ApproachBoundary",
    "BankRatings",
    "BatchDiagnosis",
    "CableRun",
    "Citation",
    "CodeSet",
    "Confidence",
    "ConnectionQuantities",
    "CorrectedResistance",
    "DatedReading",
    "Fault",
    "GroundDiagnosis",
    "GroundHazard",
    "GroundHazards",
    "GroundSolution",
    "GroundStatus",
    "GuideValue",
    "HazardNote",
    "IrJudgement",
    "LEADING_PHASE_MAX_PER_UNIT",
    "LampBands",
    "LampDiagnosis",
    "MeterTolerance",
    "MinimumIr",
    "MonitorAssessment",
    "MonitorSeverity",
    "OpenDeltaCheck",
    "PhaseSequence",
    "PolarizationJudgement",
    "SystemCapacitance",
    "TestVoltage",
    "TrendJudgement",
    "TrendStatus",
    "VectorGroup",
    "VoltageToEarth",
    "approach_boundary",
    "assess_insulation_monitor",
    "available_code_sets",
    "charging_current",
    "correct_to_reference",
    "correction_instruction",
    "correction_range",
    "dc_test_voltage",
    "default_code_set",
    "delta_quantities",
    "diagnose_ground",
    "diagnose_ground_batch",
    "diagnose_lamps",
    "fault_ratio",
    "ground_hazards",
    "insulation_trend",
    "judge_insulation",
    "judge_polarization_index",
    "lag_crossover_ratio",
    "lamp_resistance",
    "leading_phase_max",
    "line_current",
    "line_to_line",
    "line_to_neutral",
    "load_code_set",
    "locus_angle",
    "minimum_insulation_resistance",
    "open_delta",
    "parallel_conductance",
    "polarization_index",
    "single_ground",
    "solve_ground",
    "source_phasors",
    "system_capacitance",
    "transformer_bank",
    "worst_voltage_to_earth",
    "wye_quantities",
]


def __getattr__(name: str) -> Any:
    if name not in _HOME:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    value = getattr(import_module(f"{__name__}.{_HOME[name]}"), name)
    globals()[name] = value  # found once
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_HOME))
