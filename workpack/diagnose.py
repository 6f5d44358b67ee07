"""A day's findings to diagnoses a supervisor can act on, and what they say together.

Each finding is placed in its galvanic system (the island of the element or
detector it names) and passed to the electrical calculations with the plant's
own data: the system's line voltage and frequency, its phase sequence, the
capacitance to earth estimated from its cables and equipment, the detector's
meter accuracy, the code set the plant follows. Then the findings are read
together: two grounds on different phases of one system, a ground on a
transformer-fed system that the primary system's detector cannot see, a bank
in open delta carrying more than it can. Pure: standards tables arrive loaded.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from typing import Any

from workpack.electrical import (
    GroundDiagnosis,
    GroundHazards,
    HazardNote,
    LampDiagnosis,
    MeterTolerance,
    MinimumIr,
    TestVoltage,
    assess_insulation_monitor,
    correction_instruction,
    dc_test_voltage,
    diagnose_ground,
    diagnose_lamps,
    ground_hazards,
    judge_insulation,
    judge_polarization_index,
    lamp_resistance,
    line_to_neutral,
    minimum_insulation_resistance,
    open_delta,
    parallel_conductance,
)
from workpack.electrical.standards import CodeSet
from workpack.model.findings import (
    BreakerTripped,
    Defect,
    Finding,
    Findings,
    LampsSeen,
    Megger,
    MonitorReading,
    PhaseVoltages,
    Severity,
    TransformerUnit,
)
from workpack.model.plant import (
    BurdenConnection,
    Bus,
    Detector,
    DetectorKind,
    Device,
    Element,
    Load,
    LoadKind,
    Plant,
    Source,
    SourceKind,
    Transformer,
    TransformerInsulation,
    Vitality,
)
from workpack.numbers import format_number, format_ohms, format_volts

# The quick diagnose lives apart (it must start fast); these names stay importable here.
from workpack.quick_diagnose import ReadingSummary as ReadingSummary
from workpack.quick_diagnose import diagnose_readings as diagnose_readings
from workpack.quick_diagnose import summarize_readings as summarize_readings
from workpack.summary import island_capacitance
from workpack.topology import Island, Topology, element_of

Standards = Mapping[str, CodeSet]

# Findings are ranked by these; a second ground on another phase is the worst.
SEVERITY_ORDER = {Severity.urgent: 0, Severity.high: 1, Severity.routine: 2, Severity.low: 3}

# Voltmeters read ±(accuracy × reading + 1 V): the volt is the resolution of a
# switchboard meter read by eye (common practice).
METER_RESOLUTION_V = 1.0


@dataclass(frozen=True)
class Ground:
    """A ground the findings point at: which system, which phase, how sure."""

    island: str
    phase: str | None  # None: a ground is present but its phase is not known
    certain: bool  # False for a dim lamp or an ambiguous fit
    finding: str
    resistance_ohm: float | None = None


@dataclass(frozen=True)
class Diagnosis:
    finding: str
    kind: str
    at: dt.datetime
    by: str
    where: str
    island: str | None
    system_voltage_v: float | None
    severity: Severity
    summary: str
    notes: tuple[str, ...] = ()
    next_steps: tuple[str, ...] = ()
    cautions: tuple[HazardNote, ...] = ()
    ground: Ground | None = None
    capacitance_per_phase_f: float | None = None
    capacitance_basis: str = ""
    # The calculation's own result, for reports and JSON (plain dataclasses).
    detail: object | None = None
    hazards: GroundHazards | None = None


@dataclass(frozen=True)
class Conclusion:
    """What several findings say together."""

    severity: Severity
    island: str | None
    text: str
    findings: tuple[str, ...]


@dataclass(frozen=True)
class DayDiagnosis:
    plant: str
    date: dt.date | None
    diagnoses: tuple[Diagnosis, ...]
    conclusions: tuple[Conclusion, ...] = field(default=())

    @property
    def grounds(self) -> tuple[Ground, ...]:
        return tuple(d.ground for d in self.diagnoses if d.ground is not None)


# --- one finding ---------------------------------------------------------------------------


def _island_of_place(topology: Topology, where: str) -> Island:
    for island in topology.normal_islands:
        if any(d.id == where for d in island.detectors):
            return island
    return topology.island_of(topology.node_in(where))


def _detector(island: Island, where: str) -> Detector | None:
    named = [d for d in island.detectors if d.id == where]
    return named[0] if named else (island.detectors[0] if island.detectors else None)


def detector_burden_ohm(detector: Detector) -> float | None:
    """A detector's own resistance from each phase to earth (Ω), from the plant file.

    Lamps: R = V²/P of each lamp (or the declared burden_per_phase, e.g. as seen through a
    lamp transformer); voltmeters: each meter's impedance; an insulation monitor coupled to
    the three phases: its internal impedance Z from the system to earth is 3Z per phase
    (three equal branches in parallel make Z). None when the plant file does not say.
    """
    if detector.lamp_power is not None and detector.lamp_voltage is not None:
        return lamp_resistance(detector.lamp_power, detector.lamp_voltage)
    if detector.burden_per_phase is not None:
        return detector.burden_per_phase
    if detector.internal_impedance is not None:
        return 3.0 * detector.internal_impedance
    return None


@dataclass(frozen=True)
class Burden:
    """The detectors tying a system's phases to earth while a finding was made."""

    ohm_per_phase: float | None  # all of them in parallel; None: none known
    parts: tuple[str, ...]  # "GD-MSB lamps 4.17 kΩ per phase", for the notes
    unknown: tuple[str, ...]  # detectors connected whose burden the plant file lacks


def island_burden(island: Island, observed: Detector | None,
                  button_pressed: bool = True) -> Burden:
    """Detector burden on ``island`` (Ω per phase) while ``observed`` is read.

    Detectors connected ``always`` load the system at every reading; one connected
    ``while_testing`` only while it is the one being read (lamps: with the button pressed).
    """
    resistances: list[float] = []
    parts: list[str] = []
    unknown: list[str] = []
    for detector in island.detectors:
        connected = detector.burden_connection is BurdenConnection.always or (
            observed is not None and detector.id == observed.id
            and (detector.kind is not DetectorKind.lamps or button_pressed))
        if not connected:
            continue
        ohm = detector_burden_ohm(detector)
        if ohm is None:
            unknown.append(detector.id)
            continue
        resistances.append(ohm)
        parts.append(f"{detector.id} {detector.kind.value.replace('_', ' ')} "
                     f"{format_ohms(ohm)} per phase")
    total = 1.0 / parallel_conductance(tuple(resistances)) if resistances else None
    return Burden(total, tuple(parts), tuple(unknown))


def _observed(island: Island, where: str, topology: Topology) -> Detector | None:
    """The detector a finding was read on: named, or the detector of the bus named."""
    for detector in island.detectors:
        if detector.id == where:
            return detector
    element = topology.elements.get(where)
    if isinstance(element, Bus) and element.detector is not None:
        return element.detector
    return None


def _burden_notes(burden: Burden, capacitance: float | None) -> list[str]:
    """What the diagnosis took as detector burden, or why it could not."""
    notes = []
    if burden.ohm_per_phase is not None and capacitance is None:
        notes.append("detector burden not used: the system's capacitance to earth is unknown, "
                     "and the fault locus depends on the ratio of the two")
    elif burden.parts:
        notes.append(f"detector burden in the model: {'; '.join(burden.parts)} "
                     f"(together {format_ohms(burden.ohm_per_phase or 0.0)} per phase to earth)")
    if burden.unknown:
        notes.append(f"the plant file gives no burden for {', '.join(burden.unknown)}: taken "
                     "as none; lamps, meters and monitors tied to earth shift which phase "
                     "reads low")
    return notes


def diagnose_finding(plant: Plant, topology: Topology, finding: Finding,
                     standards: Standards) -> Diagnosis:
    """One finding in its system, through the calculation its kind calls for."""
    island = _island_of_place(topology, finding.where)
    base: dict[str, Any] = {
        "finding": str(finding.id), "kind": finding.kind, "at": finding.at, "by": finding.by,
        "where": finding.where, "island": island.id, "system_voltage_v": island.voltage,
    }
    if isinstance(finding, PhaseVoltages):
        return _phase_voltages(plant, topology, island, finding, standards, base)
    if isinstance(finding, LampsSeen):
        return _lamps(plant, topology, island, finding, base)
    if isinstance(finding, MonitorReading):
        return _monitor(island, finding, standards, base)
    if isinstance(finding, Megger):
        return _megger(plant, topology, finding, standards, base)
    if isinstance(finding, TransformerUnit):
        return _transformer_unit(topology, finding, base)
    if isinstance(finding, BreakerTripped):
        return _tripped(topology, finding, base)
    assert isinstance(finding, Defect)
    return Diagnosis(**base, severity=finding.severity, summary=finding.text)


def _insulated(island: Island) -> bool:
    """Not solidly grounded: a first ground trips nothing."""
    return island.earthing is None or island.earthing.value != "solid"


def _on_grounded_system(island: Island, base: dict[str, Any], what: str) -> Diagnosis:
    return Diagnosis(
        **base, severity=Severity.high,
        summary=(f"{what} on the solidly grounded {island.id} system "
                 f"({format_volts(island.voltage)}): a ground there trips instead of shifting the "
                 "readings, so these readings mean the neutral-to-earth bond may be lost "
                 "(the system running unearthed) or the meter is faulty"),
        next_steps=("check the neutral-to-earth bond at the transformer or source, and the "
                    "meter on a known source",))


def _phase_voltages(plant: Plant, topology: Topology, island: Island, finding: PhaseVoltages,
                    standards: Standards, base: dict[str, Any]) -> Diagnosis:
    voltage = _system_voltage(island)
    if island.earthing is not None and island.earthing.value == "solid":
        shift = max(finding.volts.values()) - min(finding.volts.values())
        if shift > 0.1 * line_to_neutral(voltage):
            return _on_grounded_system(island, base, "unequal phase-to-earth readings")
    capacitance, basis = island_capacitance(plant, topology, island)
    detector = _detector(island, finding.where)
    percent = finding.meter_tolerance_percent or (
        detector.meter_tolerance_percent if detector else 2.5)
    # Voltmeters being read load the system; lamps do not unless their button is pressed,
    # which nobody does while reading a meter.
    burden = island_burden(island, _observed(island, finding.where, topology),
                           button_pressed=False)
    result = diagnose_ground(
        finding.volts, voltage, "-".join(plant.plant.sequence),
        frequency_hz=plant.plant.frequency if capacitance is not None else None,
        capacitance_f=capacitance,
        tolerance=MeterTolerance(relative=percent / 100, absolute_v=METER_RESOLUTION_V),
        burden_ohm=burden.ohm_per_phase if capacitance is not None else None,
    )
    hazards = ground_hazards(voltage, finding.volts, result.fault_current_a,
                             intermittent=finding.intermittent,
                             guides=standards.get("it-system-guides"),
                             insulated=_insulated(island))
    ground = None
    severity = Severity.low
    if result.grounded_phase is not None or result.candidate_phases:
        phase = result.grounded_phase
        ground = Ground(island.id, phase, certain=phase is not None, finding=str(finding.id),
                        resistance_ohm=result.fault_resistance_ohm)
        severity = Severity.urgent if finding.intermittent else Severity.high
    elif not result.consistent:
        severity = Severity.high
        ground = Ground(island.id, None, certain=False, finding=str(finding.id))
    summary = _ground_summary(result, island)
    return Diagnosis(
        **base, severity=severity, summary=summary,
        notes=(*result.notes, *_burden_notes(burden, capacitance)),
        next_steps=result.next_steps,
        cautions=hazards.notes, ground=ground,
        capacitance_per_phase_f=capacitance, capacitance_basis=basis, detail=result,
        hazards=hazards,
    )


def _ground_summary(result: GroundDiagnosis, island: Island) -> str:
    where = f"{island.id} system ({format_volts(island.voltage)})"
    if result.status.value == "no ground detected":
        return f"no ground detected on the {where}"
    if result.grounded_phase is not None:
        text = f"phase {result.grounded_phase} grounded on the {where}"
        if result.fault_resistance_ohm is not None and result.fault_resistance_interval_ohm:
            low, high = result.fault_resistance_interval_ohm
            text += (f", fault resistance about {format_ohms(result.fault_resistance_ohm)} "
                     f"({format_ohms(low)} to {format_ohms(high)})")
        if result.fault_current_a is not None:
            text += f", ground current about {result.fault_current_a:.2g} A"
        if result.lowest_reading_phase != result.grounded_phase:
            text += (f"; note: the lowest reading is on phase {result.lowest_reading_phase}, "
                     "a healthy phase (high-resistance ground)")
        return text
    if result.consistent:
        return (f"ground on the {where}, phase not certain: "
                + " or ".join(result.candidate_phases))
    return (f"readings on the {where} fit no single ground "
            f"(best fit: phase {result.best_fit_phase}); check meter, line voltage and "
            "phase sequence, or suspect two grounds")


def _lamps(plant: Plant, topology: Topology, island: Island, finding: LampsSeen,
           base: dict[str, Any]) -> Diagnosis:
    if island.earthing is not None and island.earthing.value == "solid" and any(
        state.value != "normal" for state in finding.lamps.values()
    ):
        return _on_grounded_system(island, base, "unequal detector lamps")
    states = {phase: state.value for phase, state in finding.lamps.items()}
    capacitance, basis = island_capacitance(plant, topology, island)
    observed = _observed(island, finding.where, topology)
    burden = island_burden(island, observed, finding.test_button_pressed)
    known = capacitance is not None
    result: LampDiagnosis = diagnose_lamps(
        states, "-".join(plant.plant.sequence),
        frequency_hz=plant.plant.frequency if known else None,
        capacitance_f=capacitance,
        burden_ohm=burden.ohm_per_phase if known else None)
    grounded = bool(result.suspected_phases)
    ground = None
    if grounded:
        certain = len(result.suspected_phases) == 1 and result.confidence.value == "high"
        ground = Ground(island.id, result.suspected_phases[0] if certain else None,
                        certain=certain, finding=str(finding.id))
    severity = (Severity.urgent if grounded and finding.intermittent
                else Severity.high if grounded else Severity.low)
    notes = [f"confidence: {result.confidence.value}", *_burden_notes(burden, capacitance)]
    if not finding.test_button_pressed:
        if (observed is not None and observed.kind is DetectorKind.lamps
                and observed.burden_connection is BurdenConnection.while_testing):
            notes.append("lamps were read without the test button pressed: their star point "
                         "was not earthed, so they could not show a ground; read them again "
                         "with the button pressed")
        else:
            notes.append("lamps were read without the test button pressed")
    return Diagnosis(**base, severity=severity, summary=result.finding, notes=tuple(notes),
                     next_steps=(result.next_step,), ground=ground,
                     capacitance_per_phase_f=capacitance, capacitance_basis=basis,
                     detail=result)


def _monitor(island: Island, finding: MonitorReading, standards: Standards,
             base: dict[str, Any]) -> Diagnosis:
    detector = _detector(island, finding.where)
    if detector is None or detector.alarm is None:
        return Diagnosis(**base, severity=Severity.high,
                         summary=f"insulation monitor reading {format_ohms(finding.reading)}, but "
                                 "the plant lists no monitor with an alarm setting here",
                         next_steps=("add the monitor and its setting to the plant file",))
    guides = standards["it-system-guides"]
    factor = (detector.prewarning / detector.alarm) if detector.prewarning else 2.0
    result = assess_insulation_monitor(
        finding.reading, detector.alarm, _system_voltage(island),
        guides.guide("insulation_monitor_response_per_volt").value, prewarning_factor=factor)
    severity = {"alarm": Severity.high, "prewarning": Severity.routine}.get(
        result.severity.value, Severity.low)
    ground = (Ground(island.id, None, certain=False, finding=str(finding.id),
                     resistance_ohm=finding.reading)
              if result.severity.value == "alarm" else None)
    return Diagnosis(
        **base, severity=severity,
        summary=(f"insulation monitor {detector.id}: {format_ohms(finding.reading)} "
                 f"({result.severity.value}; alarm at {format_ohms(detector.alarm)})"),
        notes=(result.note,),
        next_steps=(("find the circuit: the monitor shows the whole system's insulation, not "
                     "the phase or the feeder",) if ground else ()),
        ground=ground, detail=result)


def equipment_family(element: Element) -> str:
    """Which table judges an insulation test of this element (see the plant's code set)."""
    if isinstance(element, Load) and (element.kind in (LoadKind.motor, LoadKind.deck_machinery)
                                      or element.winding is not None):
        return "rotating_machines"
    if isinstance(element, Source) and element.kind in ROTATING_SOURCES:
        return "rotating_machines"
    if isinstance(element, Transformer | Bus | Device):
        return "apparatus"
    return "installations"


ROTATING_SOURCES = (SourceKind.generator, SourceKind.emergency_generator)


def winding_of(element: Element, voltage_v: float) -> tuple[str | None, str]:
    """The winding kind that picks the IEEE 43 minimum, and a note when it was assumed.

    Low-voltage motors are nearly all random-wound and machines above 1 kV form-wound
    (common practice): when the plant file does not say, that is assumed, and said.
    """
    if equipment_family(element) != "rotating_machines":
        return None, ""
    if isinstance(element, Load) and element.winding is not None:
        return element.winding.value, ""
    assumed = "random_wound" if voltage_v < 1000 else "form_wound"
    return assumed, (f"{element.id}: winding kind not in the plant file; {assumed} assumed "
                     f"for a {voltage_v:g} V machine (common practice)")


def transformer_insulation(element: Element) -> tuple[str | None, str]:
    """"liquid_filled" or "dry_type" for a transformer (None otherwise), and a note when
    assumed. Absent from the plant file, dry-type is assumed: its Table 100.5 minimums are
    five times the liquid-filled ones, so the assumption can fail a good winding but never
    pass a bad one."""
    if not isinstance(element, Transformer):
        return None, ""
    if element.insulation is not None:
        return element.insulation.value, ""
    return (TransformerInsulation.dry_type.value,
            f"{element.id}: liquid-filled or dry-type not in the plant file; dry-type "
            "assumed (the higher minimum): give 'insulation' to use the right one")


def correction_column(element: Element) -> str:
    """The column of a correction table with one per insulation (ANSI/NETA MTS Table
    100.14): oil for liquid-filled transformers; solid for dry-type transformers,
    switchgear, cables and other solid insulation."""
    kind, _ = transformer_insulation(element)
    return "oil" if kind == TransformerInsulation.liquid_filled.value else "solid"


def insulation_code_set(plant: Plant, element: Element, standards: Standards) -> CodeSet:
    """The tables that judge an insulation test of ``element``, with the right column of a
    correction table that has one per insulation ("neta-mts-2019/solid")."""
    name = getattr(plant.plant.code_set, equipment_family(element))
    if standards[name].temperature_columns:
        return standards[f"{name}/{correction_column(element)}"]
    return standards[name]


def rated_voltage(topology: Topology, element: Element) -> float:
    """Rated line-to-line voltage of an element, V: its own, else its system's."""
    if isinstance(element, Load) and element.rated_voltage:
        return element.rated_voltage
    if isinstance(element, Source):
        return element.voltage
    if isinstance(element, Transformer):
        return max(element.primary_voltage, element.secondary_voltage)
    return _system_voltage(topology.island_of(topology.node_in(element.id)))


@dataclass(frozen=True)
class InsulationTest:
    """One insulation-resistance test: of an element, or of one winding of a transformer.

    Everything a package, a diagnosis and a search prints about it comes from here, so the
    test voltage, the minimum, the table column and the correction range always agree with
    what ``evaluate`` later judges by (the same code set, through ``correct_to_reference``).
    """

    element: str
    part: str  # "" for the whole element; "primary winding (440 V)" for a transformer
    voltage_v: float  # the rating that entered the table
    code_set: CodeSet
    test_voltage: TestVoltage
    minimum: MinimumIr
    assumption: str  # what was assumed for want of plant data ("" if nothing)
    basis: str  # the source of the minimum (and what was assumed)
    correction: str  # how the reading is brought to the minimum's temperature, and where not

    @property
    def dc_text(self) -> str:
        """'500 V' or '500–1000 V' DC."""
        low, high = self.test_voltage.min_v, self.test_voltage.max_v
        return f"{low:g} V" if low == high else f"{low:g}–{high:g} V"


def insulation_tests(topology: Topology, element: Element,
                     standards: Standards) -> tuple[InsulationTest, ...]:
    """The insulation tests of an element with their test voltage, minimum and basis.

    A transformer has one per winding, each entered in its table by that winding's rated
    voltage (ANSI/NETA MTS Table 100.5, liquid-filled or dry-type); anything else one, by
    its rated voltage (IEEE Std 43 for machines, Table 100.1, IEC 60364-6 style).
    """
    plant: Plant = topology.plant
    code_set = insulation_code_set(plant, element, standards)
    kind, kind_note = transformer_insulation(element)
    parts: list[tuple[str, float]]
    if isinstance(element, Transformer) and code_set.transformer_windings:
        parts = [(f"primary winding ({element.primary_voltage:g} V)", element.primary_voltage),
                 (f"secondary winding ({element.secondary_voltage:g} V)",
                  element.secondary_voltage)]
    else:
        kind, kind_note = None, ""
        parts = [("", rated_voltage(topology, element))]
    tests = []
    for part, voltage in parts:
        winding, assumption = winding_of(element, voltage)
        assumption = "; ".join(a for a in (assumption, kind_note) if a)
        test = dc_test_voltage(code_set, voltage, transformer=kind)
        minimum = minimum_insulation_resistance(code_set, voltage, winding=winding,
                                                transformer=kind)
        basis = str(minimum.citation) + (f" ({minimum.basis})" if kind else "")
        if assumption:
            basis += f"; {assumption}"
        correction = ("" if minimum.reference_c is None
                      else correction_instruction(code_set))
        tests.append(InsulationTest(element.id, part, voltage, code_set, test, minimum,
                                    assumption, basis, correction))
    return tuple(tests)


def _megger(plant: Plant, topology: Topology, finding: Megger, standards: Standards,
            base: dict[str, Any]) -> Diagnosis:
    element = topology.elements[finding.where]
    tests = insulation_tests(topology, element, standards)
    # A transformer finding names no winding: judge it by the stricter one.
    test = max(tests, key=lambda t: t.minimum.minimum_ohm)
    kind, _ = transformer_insulation(element)
    if len(tests) == 1:
        kind = None
    try:
        judgement = judge_insulation(test.code_set, finding.reading, finding.temperature,
                                     test.voltage_v,
                                     winding=winding_of(element, test.voltage_v)[0],
                                     transformer=kind)
    except ValueError as error:  # a temperature outside the correction's range
        return Diagnosis(**base, severity=Severity.high,
                         summary=f"{element.label}: {format_ohms(finding.reading)} at "
                                 f"{finding.temperature:g} °C cannot be judged: {error}",
                         next_steps=("repeat the test nearer the reference temperature",))
    notes = [test.assumption] if test.assumption else []
    if len(tests) > 1:
        notes.append(f"judged by the {test.part}, the stricter of the windings")
    compared = format_ohms(judgement.value_ohm)
    if judgement.corrected is not None:
        compared += f" at {judgement.corrected.reference_c:g} °C"
        notes.append(f"{format_ohms(finding.reading)} at {finding.temperature:g} °C corrected by "
                     f"×{format_number(judgement.corrected.factor)} ({judgement.corrected.citation}"
                     + (f", {test.code_set.temperature_correction.column_label}"
                        if test.code_set.temperature_correction is not None
                        and test.code_set.temperature_correction.column_label else "")
                     + ")")
    pi_fails = False
    if finding.reading_10min is not None and isinstance(element, Load) and (
        element.insulation_class
    ):
        pi = judge_polarization_index(test.code_set, finding.reading, finding.reading_10min,
                                      element.insulation_class)
        notes.append(f"polarization index {pi.index:.2f} (minimum {pi.minimum:g}): {pi.note}")
        pi_fails = pi.passes is False
    passes = judgement.passes and not pi_fails
    verdict = "passes" if passes else "BELOW the minimum"
    summary = (f"{element.label}: insulation {compared} {verdict} "
               f"{format_ohms(judgement.minimum.minimum_ohm)} ({judgement.minimum.citation})")
    return Diagnosis(
        **base, severity=Severity.low if passes else Severity.high, summary=summary,
        notes=tuple(notes),
        next_steps=() if passes else (
            f"isolate {element.id}, test its sections separately, dry out or repair",),
        detail=judgement)


def _transformer_unit(topology: Topology, finding: TransformerUnit,
                      base: dict[str, Any]) -> Diagnosis:
    bank = topology.elements[finding.where]
    assert isinstance(bank, Transformer) and bank.unit_kva is not None
    loads = downstream_loads(topology, bank.id)
    vital = [load.id for load in loads if load.vitality is Vitality.vital]
    if finding.state.value != "failed":
        return Diagnosis(**base, severity=Severity.high,
                         summary=f"{bank.label}: unit {finding.unit} {finding.state.value}",
                         next_steps=("measure the unit's load and temperature; plan its "
                                     "replacement before it fails",))
    if not bank.vector_group.startswith("D") or bank.vector_group[1] != "d":
        return Diagnosis(
            **base, severity=Severity.urgent,
            summary=(f"{bank.label} ({bank.vector_group}) lost unit {finding.unit}: it has no "
                     "open-delta fall-back; its secondary systems are lost until replaced"),
            notes=(f"vital loads affected: {', '.join(vital)}" if vital else "no vital loads",),
            next_steps=("transfer vital loads to their alternate supply; replace the unit",))
    load_va, basis = (finding.load, "measured") if finding.load else (
        connected_load_va(loads), "connected load (rated kVA or kW as kVA, no diversity)")
    check = open_delta([bank.unit_kva] * 3, failed_unit=0, load_va=load_va,
                       vector_group=bank.vector_group)
    fits = check.load_fits
    summary = (f"{bank.label} in open delta: capacity {check.open_delta_capacity_va / 1e3:.1f} "
               f"kVA ({check.fraction_of_closed_bank:.1%} of {check.closed_bank_va / 1e3:g} kVA)"
               f"; load {load_va / 1e3:.1f} kVA ({basis}) "
               + ("fits" if fits else f"exceeds it: shed {check.load_to_shed_va / 1e3:.1f} kVA"))
    return Diagnosis(
        **base, severity=Severity.high if fits else Severity.urgent, summary=summary,
        notes=(f"each remaining unit carries {check.unit_load_va[0] / 1e3:.1f} kVA "
               f"({check.unit_loading_fraction[0]:.0%} of its rating)",),
        next_steps=(("keep the load within the open-delta capacity; replace the unit",)
                    if fits else (f"shed {check.load_to_shed_va / 1e3:.1f} kVA now "
                                  "(non-essential loads first); replace the unit",)),
        detail=check)


def _tripped(topology: Topology, finding: BreakerTripped, base: dict[str, Any]) -> Diagnosis:
    loads = downstream_loads(topology, finding.where)
    vital = [load.id for load in loads if load.vitality is Vitality.vital]
    what = f"{finding.where} found tripped"
    what += f" ({finding.indication})" if finding.indication else " with no indication"
    return Diagnosis(
        **base, severity=Severity.high if vital else Severity.routine,
        summary=what + (f"; vital loads without supply: {', '.join(vital)}" if vital else ""),
        next_steps=("do not reset again before the circuit is tested: isolate, insulation-test "
                    "and inspect the downstream circuit",) if finding.reset_attempted else (
            "isolate and insulation-test the downstream circuit before resetting",))


# --- plant facts used above -------------------------------------------------------------------


def downstream_loads(topology: Topology, element_id: str) -> list[Load]:
    """Loads that lose supply when ``element_id`` is opened (normal state, through banks)."""
    loads = [topology.elements[e] for e in topology.below(element_id)]
    return sorted((e for e in loads if isinstance(e, Load)), key=lambda load: load.id)


def connected_load_va(loads: Iterable[Load]) -> float:
    """Sum of rated kVA (or kW taken as kVA), VA: an upper estimate with no diversity."""
    return sum(load.rated_kva or load.rated_kw or 0.0 for load in loads)


def _system_voltage(island: Island) -> float:
    if island.voltage is None:
        raise ValueError(f"system {island.id} has no known voltage")
    return island.voltage


# --- the day ------------------------------------------------------------------------------------


def diagnose_day(plant: Plant, topology: Topology, findings: Findings,
                 standards: Standards) -> DayDiagnosis:
    """Every finding diagnosed, then the conclusions they support together."""
    diagnoses = tuple(diagnose_finding(plant, topology, f, standards)
                      for f in findings.findings)
    return DayDiagnosis(plant=plant.plant.name, date=findings.date, diagnoses=diagnoses,
                        conclusions=tuple(conclude(topology, diagnoses)))


def conclude(topology: Topology, diagnoses: Iterable[Diagnosis]) -> list[Conclusion]:
    diagnoses = list(diagnoses)
    conclusions: list[Conclusion] = []
    grounds: dict[str, list[Ground]] = {}
    for diagnosis in diagnoses:
        if diagnosis.ground is not None:
            grounds.setdefault(diagnosis.ground.island, []).append(diagnosis.ground)
    for island_id, found in sorted(grounds.items()):
        phases = sorted({g.phase for g in found if g.phase is not None and g.certain})
        ids = tuple(g.finding for g in found)
        island = _island_by_id(topology, island_id)
        if len(phases) >= 2:
            conclusions.append(Conclusion(
                Severity.urgent, island_id,
                f"grounds on phases {' and '.join(phases)} of the {island_id} system "
                f"({format_volts(island.voltage)}): a phase-to-phase fault through earth is "
                "waiting to happen; find and clear one before anything else",
                ids))
        feeding = _feeding_transformers(topology, island)
        if feeding:
            primaries = sorted({topology.island_of(f"{t}:primary").id for t in feeding})
            conclusions.append(Conclusion(
                Severity.high, island_id,
                f"the ground on the {island_id} system is behind transformer "
                f"{', '.join(feeding)}: the detector of the {', '.join(primaries)} system "
                "cannot see it; only this system's own detector shows it", ids))
        if not island.detectors:
            conclusions.append(Conclusion(
                Severity.high, island_id,
                f"no ground detector watches the {island_id} system: the ground was found "
                "another way and its return will not be seen", ids))
        conclusions.extend(_joining_ties(topology, island_id, grounds))
    for diagnosis in diagnoses:
        if diagnosis.kind == "transformer_unit" and diagnosis.severity is Severity.urgent:
            conclusions.append(Conclusion(Severity.urgent, diagnosis.island, diagnosis.summary,
                                          (diagnosis.finding,)))
    return sorted(conclusions, key=lambda c: (SEVERITY_ORDER[c.severity], c.island or "",
                                              c.text))


def _joining_ties(topology: Topology, island_id: str,
                  grounds: dict[str, list[Ground]]) -> list[Conclusion]:
    """Normally open devices that would join this grounded system to another grounded one."""
    found: list[Conclusion] = []
    island = _island_by_id(topology, island_id)
    for device in sorted(topology.normally_open):
        sides = {topology.island_of(n).id for n in topology.graph.neighbors(device)
                 if topology.graph.edges[device, n]["kind"] == "wiring"}
        sides.add(topology.island_of(device).id)
        if island_id in sides:
            others = sorted(sides - {island_id})
            for other in others:
                if other in grounds and other > island_id:
                    found.append(Conclusion(
                        Severity.urgent, island_id,
                        f"do not close {device}: it would join the grounded {island_id} and "
                        f"{other} systems ({format_volts(island.voltage)})",
                        tuple(g.finding for g in grounds[island_id] + grounds[other])))
    return found


def _feeding_transformers(topology: Topology, island: Island) -> list[str]:
    return sorted(element_of(n) for n in island.nodes if n.endswith(":secondary"))


def _island_by_id(topology: Topology, island_id: str) -> Island:
    return next(i for i in topology.normal_islands if i.id == island_id)


def healthy_phase_to_earth(line_voltage_v: float) -> float:
    """Each phase to earth on a healthy, balanced insulated system: V_LL/√3, V."""
    return line_to_neutral(line_voltage_v)


__all__ = ["Burden", "Conclusion", "DayDiagnosis", "Diagnosis", "Ground", "InsulationTest",
           "ReadingSummary", "conclude", "connected_load_va", "correction_column",
           "detector_burden_ohm", "diagnose_day", "diagnose_finding", "diagnose_readings",
           "downstream_loads", "equipment_family", "healthy_phase_to_earth", "insulation_code_set",
           "insulation_tests", "island_burden", "rated_voltage", "summarize_readings",
           "transformer_insulation", "winding_of"]
