"""Pure electrical calculations for insulated three-phase systems and transformer banks.

Three-phase and transformer relations, the forward ground model and its inverse, ground
detectors, hazard figures, insulation-resistance rules and system capacitance. Quantities
are SI (V, A, Ω, F, Hz, °C, s). Only ``tables.load_code_set`` reads files (the standards
tables shipped as YAML); every other function is pure.
"""

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
)
from workpack.electrical.hazards import (
    LEADING_PHASE_MAX_PER_UNIT,
    GroundHazards,
    HazardNote,
    approach_boundary,
    ground_hazards,
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
    "approach_boundary",
    "assess_insulation_monitor",
    "available_code_sets",
    "charging_current",
    "correct_to_reference",
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
    "line_current",
    "line_to_line",
    "line_to_neutral",
    "load_code_set",
    "minimum_insulation_resistance",
    "open_delta",
    "polarization_index",
    "single_ground",
    "solve_ground",
    "source_phasors",
    "system_capacitance",
    "transformer_bank",
    "wye_quantities",
]
