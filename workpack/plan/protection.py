"""What a package says about the danger of its systems and how to be protected from it:
the hazard facts, the approach boundaries and the PPE, all from one worst-case voltage
to earth per system (``electrical.worst_voltage_to_earth``). Pure."""

from __future__ import annotations

from collections.abc import Mapping

from workpack.electrical import (
    VoltageToEarth,
    approach_boundary,
    line_to_neutral,
    worst_voltage_to_earth,
)
from workpack.electrical.standards import CodeSet
from workpack.model.package import ApproachBoundaries
from workpack.model.plant import Earthing
from workpack.plan.systems import System
from workpack.topology import Topology


def worst_to_earth(system: System) -> VoltageToEarth | None:
    """The system's one worst-case voltage to earth (None when its voltage is unknown)."""
    if not system.voltage:
        return None
    return worst_voltage_to_earth(system.voltage, system.earthing is not Earthing.solid,
                                  system.state.highest_phase_to_earth_v)


def hazard_facts(system: System, worst: VoltageToEarth | None,
                 sequence: tuple[str, str, str]) -> tuple[str, ...]:
    """What is true of the system today that a person must know: a ground and what it
    does to the healthy phases, or that the system is insulated; two grounds."""
    facts: list[str] = []
    voltage = system.voltage
    if worst is None or not voltage:
        return ()
    state = system.state
    treat = f"treat every conductor as up to {worst.worst_v:.0f} V to earth"
    if state.ground_phases:
        healthy = [p for p in sequence if p not in state.ground_phases]
        normal = line_to_neutral(voltage)
        standing = (f"at up to {state.highest_phase_to_earth_v:.0f} V to earth as measured "
                    f"(normally {normal:.0f} V)" if state.highest_phase_to_earth_v
                    else f"above their normal {normal:.0f} V to earth (not measured)")
        facts.append(
            f"Phase {' and '.join(state.ground_phases)} of the {voltage:g} V "
            f"{system.id} system {'is' if len(state.ground_phases) == 1 else 'are'} "
            f"grounded: phase{'s' if len(healthy) > 1 else ''} {' and '.join(healthy)} "
            f"stand{'' if len(healthy) > 1 else 's'} {standing}; "
            f"{worst.why(ground_present=True)}: {treat}.")
    elif state.grounded:
        facts.append(f"A ground is indicated on the {voltage:g} V {system.id} system, "
                     f"phase not certain; {worst.why(ground_present=True)}: {treat}.")
    elif worst.insulated:
        facts.append(f"The {voltage:g} V {system.id} system is insulated from earth: "
                     f"{worst.basis}: {treat}.")
    if system.second_ground:
        facts.append("Grounds on two phases of one system: a phase-to-phase fault through "
                     "earth is waiting to happen.")
    return tuple(facts)


def approach(topology: Topology, standards: Mapping[str, CodeSet], item_id: str,
             worst: VoltageToEarth | None) -> ApproachBoundaries | None:
    """The shock approach boundaries for work on the item, the table entered with the
    worst voltage the job can meet; None below the table."""
    code_set = standards[topology.plant.plant.code_set.approach_boundaries]
    voltages = [topology.voltage_at(n) for n in topology.work_nodes(item_id)]
    voltage = max((v for v in voltages if v), default=None)
    if voltage is None:
        return None
    entered = max(voltage, worst.exposure_v if worst is not None else 0.0)
    boundary = approach_boundary(code_set, voltage, entered)
    if boundary is None:
        return None

    def shown(metres: float | None, text: str) -> str:
        return text if metres is None else f"{metres:.1f} m ({text})"

    return ApproachBoundaries(
        entered_at_v=entered,
        limited_movable=shown(boundary.limited_movable_m, boundary.limited_movable_text),
        limited_fixed=shown(boundary.limited_fixed_m, boundary.limited_fixed_text),
        restricted=shown(boundary.restricted_m, boundary.restricted_text),
        source=str(boundary.citation))


def ppe(worst: VoltageToEarth | None) -> tuple[str, ...]:
    gloves = ("rubber insulating gloves with leather protectors, of a class rated for the "
              "system's voltage (not in the plant file)")
    if worst is not None:
        gloves = (f"rubber insulating gloves with leather protectors, of a class rated for "
                  f"at least {worst.exposure_v:.0f} V AC (the worst case on this job; see "
                  "the hazard facts)")
    return (
        gloves + " (ASTM D120 classes: 00 to 500 V, 0 to 1 kV; from memory)",
        "safety glasses or face shield; arc-rated clothing as the employer's arc-flash "
        "assessment requires (not computed here)",
        "voltage tester rated for the system, with its own proving unit",
        "padlocks and tags, one lock per person",
    )
