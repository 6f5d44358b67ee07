"""Named calculations that rules call for: each gives readings with expected values and limits.

A rule asks for ``calc: insulation_resistance`` with ``params: {element: ...}``;
the function here computes, from plant data and the standards tables, what
the technician should read and what is acceptable, and says where each number
comes from. Nothing else in a package may carry a number a person compares
with. Pure: plant, topology and tables arrive as arguments.
"""

from __future__ import annotations

import cmath
import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any

from workpack.diagnose import (
    InsulationTest,
    connected_load_va,
    downstream_loads,
    insulation_code_set,
    insulation_tests,
)
from workpack.electrical import (
    line_to_neutral,
    open_delta,
    transformer_bank,
)
from workpack.electrical.standards import CodeSet
from workpack.electrical.threephase import SQRT3, PhaseSequence, source_phasors
from workpack.electrical.transformers import VectorGroup
from workpack.model.package import Limit, Reading
from workpack.model.plant import Bus, Cable, Load, LoadKind, Transformer
from workpack.topology import Topology

# Common practice, not a published limit: on a healthy balanced system each
# reading within 10 % of its computed value; outside it, look for the cause.
BALANCE_BAND = 0.10
# Turns-ratio acceptance: within 0.5 % of the calculated ratio (ANSI/NETA MTS,
# transformer section; from memory, not confirmed against the text).
RATIO_BAND = 0.005


@dataclass(frozen=True)
class CalcContext:
    topology: Topology
    standards: Mapping[str, CodeSet]
    prefix: str  # reading ids: "<prefix>.R<n>"


class CalcError(ValueError):
    """A calculation cannot be made for the element a rule named."""


def _element(ctx: CalcContext, element_id: str) -> Any:
    if element_id not in ctx.topology.elements:
        raise CalcError(f"no element {element_id!r} in the plant")
    return ctx.topology.elements[element_id]


def _system_voltage(ctx: CalcContext, element_id: str) -> float:
    _element(ctx, element_id)
    island = ctx.topology.island_of(ctx.topology.node_out(element_id))
    if island.voltage is None:
        raise CalcError(f"the system of {element_id} has no known voltage")
    return island.voltage


def _voltage_source(test: InsulationTest) -> str:
    """The test voltage's source after the reading's name, unless the limit's source
    (printed beside it) is the same table: then once is enough."""
    citation = str(test.test_voltage.citation)
    return "" if test.basis.startswith(citation) else f" ({citation})"


def _labels(ctx: CalcContext) -> tuple[str, str, str]:
    return ctx.topology.plant.plant.sequence


def _inward(low: float, high: float) -> tuple[float, float]:
    """Bounds rounded inward to three significant figures, as the package prints them:
    what is printed is what is judged, and never wider than computed."""
    def significant(value: float, up: bool) -> float:
        if value == 0:
            return 0.0
        step = 10 ** (math.floor(math.log10(abs(value))) - 2)
        count = value / step
        whole = math.ceil(count - 1e-9) if up else math.floor(count + 1e-9)
        return float(f"{whole * step:.12g}")  # 381 × 0.01 is 3.81, not 3.8100000000000005

    return significant(low, up=True), significant(high, up=False)


def _band(value: float, basis: str) -> Limit:
    low, high = _inward(value * (1 - BALANCE_BAND), value * (1 + BALANCE_BAND))
    return Limit(low=low, high=high, basis=f"{basis}; ±{BALANCE_BAND:.0%} band: common practice")


def healthy_phase_to_earth(ctx: CalcContext, at: str) -> tuple[Reading, ...]:
    """Each phase to earth on a healthy insulated system: V_LL/√3 (SOURCES.md), V."""
    voltage = _system_voltage(ctx, at)
    expected = line_to_neutral(voltage)
    basis = f"computed: {voltage:g} V / √3 = {expected:.0f} V"
    return tuple(
        Reading(id=f"{ctx.prefix}.R{n}", what=f"phase {phase} to earth at {at}", unit="V",
                expected=expected, tolerance=BALANCE_BAND * expected,
                limit=_band(expected, basis), basis=basis)
        for n, phase in enumerate(_labels(ctx), start=1))


def record_phase_to_earth(ctx: CalcContext, at: str) -> tuple[Reading, ...]:
    """Each phase to earth as found: recorded, not judged (the search compares with it)."""
    _system_voltage(ctx, at)
    return tuple(
        Reading(id=f"{ctx.prefix}.R{n}", what=f"phase {phase} to earth at {at}, as found",
                unit="V", basis="record as found")
        for n, phase in enumerate(_labels(ctx), start=1))


def line_voltages(ctx: CalcContext, at: str) -> tuple[Reading, ...]:
    """Line-to-line voltages at a bus: the system's nominal voltage, V."""
    voltage = _system_voltage(ctx, at)
    a, b, c = _labels(ctx)
    basis = f"nominal voltage of the system at {at} (plant file)"
    return tuple(
        Reading(id=f"{ctx.prefix}.R{n}", what=f"{x}-{y} at {at}", unit="V", expected=voltage,
                tolerance=BALANCE_BAND * voltage, limit=_band(voltage, basis), basis=basis)
        for n, (x, y) in enumerate(((a, b), (b, c), (c, a)), start=1))


def insulation_resistance(ctx: CalcContext, element: str) -> tuple[Reading, ...]:
    """Insulation to earth of an element: test voltage, minimum and correction from its
    code set (``diagnose.insulation_tests``). Each phase to earth; a transformer's windings
    one by one, each to the other winding and earth (ANSI/NETA MTS Table 100.5)."""
    target = _element(ctx, element)
    readings: list[Reading] = []
    for test in insulation_tests(ctx.topology, target, ctx.standards):
        minimum = test.minimum
        unit = "MΩ" if minimum.minimum_ohm >= 1e6 else "kΩ"
        limit = Limit(low=minimum.minimum_ohm, basis=test.basis,
                      temperature_corrected_to_c=minimum.reference_c,
                      code_set=test.code_set.name if minimum.reference_c is not None
                      else None)
        if test.part:
            whats = [f"{element} {test.part} to the other winding and earth"]
        else:
            whats = [f"{element} phase {phase} to earth" for phase in _labels(ctx)]
        for index, what in enumerate(whats):
            # The correction rule in full once per test; the other phases point to it (by
            # phase: the planner renumbers reading ids).
            correction = (test.correction if index == 0 or not test.correction
                          else f"correct as for phase {_labels(ctx)[0]} above")
            readings.append(Reading(
                id=f"{ctx.prefix}.R{len(readings) + 1}",
                what=f"{what}, {test.dc_text} DC for 1 min{_voltage_source(test)}",
                unit=unit, limit=limit, needs_temperature=minimum.reference_c is not None,
                basis=correction, element=element, test_voltage_v=test.test_voltage.max_v))
    return tuple(readings)


def polarization_index(ctx: CalcContext, element: str) -> tuple[Reading, ...]:
    """10-min / 1-min ratio of a winding against its thermal class minimum (IEEE 43)."""
    target = _element(ctx, element)
    if not isinstance(target, Load) or not target.insulation_class:
        raise CalcError(f"{element} has no insulation_class in the plant file: the "
                        "polarization index minimum depends on it")
    code_set = insulation_code_set(ctx.topology.plant, target, ctx.standards)
    rule = code_set.polarization_index
    if rule is None:
        raise CalcError(f"code set {code_set.name} has no polarization index table")
    minimum = rule.minimum_by_class[target.insulation_class]
    return (Reading(id=f"{ctx.prefix}.R1", what=f"{element} polarization index (10 min / 1 min)",
                    unit="", limit=Limit(low=minimum, basis=str(rule.citation))),)


def bank_of(ctx: CalcContext, element_id: str) -> Transformer:
    target = _element(ctx, element_id)
    if not isinstance(target, Transformer):
        raise CalcError(f"{element_id} is not a transformer")
    return target


def winding_ratio(bank: Transformer) -> float:
    """HV winding voltage / LV winding voltage of one phase, from the line voltages."""
    hv = bank.primary_voltage if bank.vector_group[0] == "D" else (
        bank.primary_voltage / math.sqrt(3))
    lv_letter = bank.vector_group.lstrip("DYNZ")[0]
    lv = bank.secondary_voltage if lv_letter == "d" else bank.secondary_voltage / math.sqrt(3)
    return hv / lv


def bank_secondary_voltages(ctx: CalcContext, bank: str) -> tuple[Reading, ...]:
    """Secondary line voltages of a bank from its primary voltage and turns ratio, V."""
    transformer = bank_of(ctx, bank)
    ratings = transformer_bank(transformer.primary_voltage, winding_ratio(transformer),
                               transformer.vector_group, sequence="-".join(_labels(ctx)))
    a, b, c = _labels(ctx)
    basis = (f"computed: {transformer.primary_voltage:g} V primary, winding ratio "
             f"{winding_ratio(transformer):.4g}, {transformer.vector_group}")
    expected = ratings.secondary_line_v
    return tuple(
        Reading(id=f"{ctx.prefix}.R{n}", what=f"secondary {x}-{y} of {bank}", unit="V",
                expected=expected, tolerance=BALANCE_BAND * expected,
                limit=_band(expected, basis), basis=basis)
        for n, (x, y) in enumerate(((a, b), (b, c), (c, a)), start=1))


def unit_windings(vector_group: str, sequence: tuple[str, str, str],
                  ) -> tuple[tuple[str, str], ...]:
    """Which LV winding shares a unit (a core) with each HV winding of a bank, as
    ``(HV terminals, LV terminals)`` such as ``("A-B", "a-n")`` for Dyn11.

    A unit's two windings carry voltages in phase (or in opposition, the terminals then
    named the other way round). HV windings: line pairs for delta, line to neutral for
    wye; LV likewise, shifted by the group's clock number × 30° (IEC 60076-1; LV lags HV
    by that angle, mirrored for the opposite rotation). ``sequence``: the plant's phase
    labels in rotation order; LV labels are the same in lower case.
    """
    group = VectorGroup.parse(vector_group)
    if "Z" in (group.hv, group.lv.upper()):
        raise CalcError(f"{vector_group}: zigzag windings are not single units on one core")
    order = PhaseSequence.parse(sequence)
    hv = source_phasors(SQRT3, order)  # 1 V to neutral; only angles matter here
    shift = cmath.rect(1.0, math.radians(group.lv_angle_deg(order)))
    a, b, c = sequence
    low = {label: _lv_label(label) for label in sequence}

    def windings(delta: bool, names: dict[str, str], turn: complex,
                 ) -> list[tuple[str, str, complex]]:
        if delta:
            return [(names[x], names[y], (hv[x] - hv[y]) * turn)
                    for x, y in ((a, b), (b, c), (c, a))]
        return [(names[x], "n" if names is low else "N", hv[x] * turn) for x in (a, b, c)]

    high = windings(group.hv == "D", {x: x for x in sequence}, 1.0)
    lows = windings(group.lv == "d", low, shift)
    pairs = []
    for hx, hy, hv_phasor in high:
        for lx, ly, lv_phasor in lows:
            turn = lv_phasor / hv_phasor
            if abs(turn.imag) < 1e-9 and turn.real > 0:
                pairs.append((f"{hx}-{hy}", f"{lx}-{ly}"))
            elif abs(turn.imag) < 1e-9 and turn.real < 0:  # named the other way round
                pairs.append((f"{hy}-{hx}", f"{lx}-{ly}"))
    return tuple(pairs)


def _lv_label(label: str) -> str:
    return label.lower() if len(label) == 1 else f"{label}'"


def turns_ratio(ctx: CalcContext, bank: str) -> tuple[Reading, ...]:
    """Turns ratio of each unit of a bank: its HV winding's nameplate voltage over its LV
    winding's, the windings paired by the vector group (``unit_windings``)."""
    transformer = bank_of(ctx, bank)
    ratio = winding_ratio(transformer)
    group = VectorGroup.parse(transformer.vector_group)
    hv_v = transformer.primary_voltage if group.hv == "D" else (
        transformer.primary_voltage / math.sqrt(3))
    lv_v = transformer.secondary_voltage if group.lv == "d" else (
        transformer.secondary_voltage / math.sqrt(3))

    def how(connection: str, line_v: float) -> str:
        return ("delta: the line voltage" if connection in "Dd" else
                f"wye: {line_v:g} V / √3")

    limit = ("±0.5 % of the calculated ratio: ANSI/NETA MTS transformer turns-ratio "
             "acceptance (from memory)")
    bounds = _inward(ratio * (1 - RATIO_BAND), ratio * (1 + RATIO_BAND))
    return tuple(
        Reading(id=f"{ctx.prefix}.R{n}",
                what=f"turns ratio of the {bank} unit across HV {hv_pair} (LV {lv_pair})",
                unit="", expected=ratio, tolerance=RATIO_BAND * ratio,
                limit=Limit(low=bounds[0], high=bounds[1], basis=limit),
                basis=(f"computed: HV winding {hv_v:.4g} V "
                       f"({how(group.hv, transformer.primary_voltage)}) / LV winding "
                       f"{lv_v:.4g} V ({how(group.lv, transformer.secondary_voltage)}) = "
                       f"{ratio:.4g}; {transformer.vector_group}: the unit across HV "
                       f"{hv_pair} carries LV {lv_pair} (IEC 60076-1 clock number)"))
        for n, (hv_pair, lv_pair) in enumerate(
            unit_windings(transformer.vector_group, _labels(ctx)), start=1))


def circuit_insulation(ctx: CalcContext, feeder: str) -> tuple[Reading, ...]:
    """Insulation of the circuit a device feeds, down to the first board or bank: each
    cable and busbar phase to phase and each phase to earth, each load phase to earth
    (a winding joins its phases, so between them it reads nothing useful), with the
    test voltage and minimum of each element's own table. Electronics are left out (they
    are disconnected, not tested). Where the circuit has no cable element, the
    conductors from the device to its loads are tested as one."""
    device = _element(ctx, feeder)
    topology = ctx.topology
    a, b, c = _labels(ctx)
    sections: list[Any] = []
    stack = list(reversed(topology.normal_children.get(device.id, [])))
    while stack:
        element = topology.elements[stack.pop()]
        if isinstance(element, Load) and element.kind is LoadKind.electronics:
            continue
        if isinstance(element, Cable | Load | Bus | Transformer):
            sections.append(element)
        if not isinstance(element, Bus | Transformer | Load):
            stack.extend(reversed(topology.normal_children.get(element.id, [])))
    readings: list[Reading] = []

    def add(element: Any, label: str, pairs: list[tuple[str, str]], between: bool) -> None:
        # One limit path for every insulation reading: a transformer on this circuit is
        # entered by its primary winding, the side this feeder reaches.
        test = insulation_tests(topology, element, ctx.standards)[0]
        minimum = test.minimum
        if test.part:
            label = f"{label} {test.part}"
        for x, y in pairs:
            phase_to_phase = y != "E"
            readings.append(Reading(
                id=f"{ctx.prefix}.R{len(readings) + 1}",
                what=f"{label} {x}-{y}, {test.dc_text} DC for 1 min{_voltage_source(test)}",
                unit="MΩ" if minimum.minimum_ohm >= 1e6 else "kΩ",
                limit=Limit(low=minimum.minimum_ohm,
                            basis=test.basis + ("; between phases the same minimum as to "
                                                "earth (common practice)" if phase_to_phase
                                                else ""),
                            temperature_corrected_to_c=minimum.reference_c,
                            code_set=test.code_set.name if minimum.reference_c is not None
                            else None),
                needs_temperature=minimum.reference_c is not None,
                basis=test.correction,
                element=element.id if between or not phase_to_phase else None,
                test_voltage_v=test.test_voltage.max_v))

    to_earth = [(a, "E"), (b, "E"), (c, "E")]
    between = [(a, b), (b, c), (c, a)]
    if not any(isinstance(s, Cable) for s in sections):
        loads = [s for s in sections if isinstance(s, Load)]
        if loads:
            add(loads[0], f"conductors {feeder} to {loads[0].id}", between, False)
    for section in sections:
        add(section, section.id,
            to_earth if isinstance(section, Load | Transformer) else between + to_earth, True)
    if not readings:
        raise CalcError(f"nothing below {feeder} can be insulation-tested")
    return tuple(readings)


def open_delta_load(ctx: CalcContext, bank: str) -> tuple[Reading, ...]:
    """The load a bank carries in open delta against √3 × one unit's rating, kVA."""
    transformer = bank_of(ctx, bank)
    if transformer.unit_kva is None:
        raise CalcError(f"{bank} is not a bank of single-phase units")
    loads = downstream_loads(ctx.topology, bank)
    check = open_delta([transformer.unit_kva] * 3, failed_unit=0,
                       load_va=connected_load_va(loads), vector_group=transformer.vector_group)
    return (Reading(
        id=f"{ctx.prefix}.R1", what=f"total load on {bank} in open delta", unit="kVA",
        limit=Limit(high=check.open_delta_capacity_va,
                    basis=f"computed: √3 × {transformer.unit_kva / 1e3:g} kVA = "
                          f"{check.open_delta_capacity_va / 1e3:.1f} kVA (1/√3 = 57.7 % of "
                          "the closed bank)")),)


def monitor_above_alarm(ctx: CalcContext, at: str) -> tuple[Reading, ...]:
    """An insulation monitor's reading once the system is healthy: above its settings, Ω."""
    target = _element(ctx, at)
    island = ctx.topology.island_of(ctx.topology.node_out(at))
    monitors = [d for d in island.detectors if d.alarm is not None]
    if isinstance(target, Bus) and target.detector and target.detector.alarm is not None:
        monitors = [target.detector]
    if not monitors:
        raise CalcError(f"no insulation monitor watches the system of {at}")
    monitor = monitors[0]
    threshold = monitor.prewarning or monitor.alarm
    assert threshold is not None
    return (Reading(id=f"{ctx.prefix}.R1", what=f"insulation monitor {monitor.id} reading",
                    unit="kΩ", limit=Limit(low=threshold,
                                           basis=f"{monitor.id} setting in the plant file")),)


CALCULATIONS: dict[str, Callable[..., tuple[Reading, ...]]] = {
    "healthy_phase_to_earth": healthy_phase_to_earth,
    "line_voltages": line_voltages,
    "record_phase_to_earth": record_phase_to_earth,
    "insulation_resistance": insulation_resistance,
    "polarization_index": polarization_index,
    "bank_secondary_voltages": bank_secondary_voltages,
    "turns_ratio": turns_ratio,
    "circuit_insulation": circuit_insulation,
    "open_delta_load": open_delta_load,
    "monitor_above_alarm": monitor_above_alarm,
}


def parameters(name: str) -> tuple[str, ...]:
    """Parameter names a calculation takes (after its context)."""
    import inspect

    return tuple(list(inspect.signature(CALCULATIONS[name]).parameters)[1:])
