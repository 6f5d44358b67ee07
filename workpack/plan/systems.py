"""What the day says about each galvanic system, as typed state the planner works on.

``SystemState``: the day's diagnoses on one system (the phases grounded, the highest
voltage to earth measured, the ground's cautions, the phasor diagram). ``System``: one
system as a package sees it, the island of the normal switching state with that state.
The rules see a ``System`` through ``context.system_context``. Pure.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

from workpack.diagnose import DayDiagnosis, Diagnosis
from workpack.electrical import HazardNote
from workpack.model.package import Phasor
from workpack.model.plant import Earthing
from workpack.topology import Island, Topology


@dataclass(frozen=True)
class SystemState:
    """What the day's diagnoses say about one galvanic system."""

    ground_phases: tuple[str, ...] = ()  # phases certainly grounded
    grounded: bool = False  # a ground is indicated, its phase known or not
    highest_phase_to_earth_v: float | None = None
    cautions: tuple[HazardNote, ...] = ()
    phasor: Phasor | None = None


def system_states(topology: Topology, day: DayDiagnosis) -> dict[str, SystemState]:
    """The state of every system a ground diagnosis of the day falls on, by system id."""
    states: dict[str, SystemState] = {}
    for diagnosis in day.diagnoses:
        if diagnosis.ground is None or diagnosis.island is None:
            continue
        state = states.get(diagnosis.island, SystemState())
        phases = set(state.ground_phases)
        if diagnosis.ground.phase and diagnosis.ground.certain:
            phases.add(diagnosis.ground.phase)
        highest = state.highest_phase_to_earth_v
        if diagnosis.hazards is not None:
            highest = max(highest or 0.0, diagnosis.hazards.highest_phase_to_earth_v)
        states[diagnosis.island] = SystemState(
            ground_phases=tuple(sorted(phases)), grounded=True,
            highest_phase_to_earth_v=highest,
            cautions=tuple(dict.fromkeys((*state.cautions, *diagnosis.cautions))),
            phasor=state.phasor or _phasor(topology, diagnosis))
    return states


def _phasor(topology: Topology, diagnosis: Diagnosis) -> Phasor | None:
    detail = diagnosis.detail
    readings = getattr(detail, "readings_v", None)
    if not readings or diagnosis.system_voltage_v is None:
        return None
    point = getattr(detail, "earth_point_v", None)
    return Phasor(line_voltage_v=diagnosis.system_voltage_v,
                  sequence=topology.plant.plant.sequence, readings_v=dict(readings),
                  earth_point_v=(point.real, point.imag) if point is not None else None,
                  grounded_phase=diagnosis.ground.phase if diagnosis.ground else None)


@dataclass(frozen=True)
class System:
    """One galvanic system of the normal switching state, with what the day says of it."""

    island: Island
    state: SystemState

    @property
    def id(self) -> str:
        return self.island.id

    @property
    def voltage(self) -> float | None:
        """Line to line (V)."""
        return self.island.voltage

    @property
    def earthing(self) -> Earthing | None:
        return self.island.earthing

    @property
    def insulated(self) -> bool:
        return self.island.earthing is Earthing.insulated

    @property
    def board(self) -> str:
        """Where a search of the system starts: its first bus."""
        return (self.island.buses or (self.island.id,))[0]

    @property
    def monitor(self) -> str | None:
        """The first detector with an alarm setting (an insulation monitor)."""
        return next((d.id for d in self.island.detectors if d.alarm is not None), None)

    @property
    def second_ground(self) -> bool:
        """Grounds on two phases: a phase-to-phase fault through earth."""
        return len(self.state.ground_phases) >= 2


def system_at(topology: Topology, element_id: str, states: Mapping[str, SystemState]) -> System:
    """The system an element's own (outgoing) side belongs to."""
    island = topology.island_of(topology.node_out(element_id))
    return System(island, states.get(island.id, SystemState()))


def systems_touched(topology: Topology, element_id: str,
                    states: Mapping[str, SystemState]) -> list[System]:
    """Every system the element's own conductors belong to (both sides of a bank), by id."""
    islands = {topology.island_of(node).id: topology.island_of(node)
               for node in topology.work_nodes(element_id)}
    return [System(islands[i], states.get(i, SystemState())) for i in sorted(islands)]
