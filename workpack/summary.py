"""What `workpack check` tells about a plant: its galvanic systems and their size.

Pure: takes a validated plant and its topology, returns plain data.
"""

from __future__ import annotations

from dataclasses import dataclass

from workpack.checks import unwatched_islands
from workpack.electrical import charging_current
from workpack.model.plant import Cable, Load, Plant
from workpack.topology import Island, Topology, element_of


@dataclass(frozen=True)
class IslandSummary:
    id: str
    voltage: float | None
    earthing: str | None
    detectors: tuple[str, ...]
    item_count: int
    capacitance_per_phase: float | None  # F, each phase to earth
    capacitance_basis: str
    charging_current: float | None  # A in a solid ground, 3·ω·C0·V_LN
    joinable_by: tuple[str, ...]  # normally open devices that would join it to another


@dataclass(frozen=True)
class PlantSummary:
    name: str
    kind: str
    frequency_hz: float
    phase_sequence: tuple[str, str, str]
    element_count: int
    islands: tuple[IslandSummary, ...]
    warnings: tuple[str, ...]


def cable_capacitance_per_m(plant: Plant, cable: Cable) -> float | None:
    """Capacitance of one conductor to earth per metre, F/m, from the cable or its type."""
    if cable.capacitance_to_earth is not None:
        return cable.capacitance_to_earth
    for cable_type in plant.cable_types:
        if cable_type.id == cable.cable_type:
            return cable_type.capacitance_to_earth
    return None


def island_capacitance(plant: Plant, topology: Topology,
                       island: Island) -> tuple[float | None, str]:
    """Per-phase capacitance to earth of an island, F, and what the figure rests on."""
    cables = [topology.elements[n] for n in island.nodes
              if isinstance(topology.elements.get(n), Cable)]
    loads = [topology.elements[n] for n in island.nodes
             if isinstance(topology.elements.get(n), Load)]
    total = 0.0
    known = 0
    for cable in cables:
        assert isinstance(cable, Cable)
        per_m = cable_capacitance_per_m(plant, cable)
        if per_m is not None:
            total += per_m * cable.length
            known += 1
    lumped = [load.equipment_capacitance for load in loads
              if isinstance(load, Load) and load.equipment_capacitance]
    total += sum(lumped)
    if not known and not lumped:
        return None, "no cable or equipment capacitance data"
    basis = f"{known} of the {len(cables)} cables listed in the plant file"
    if lumped:
        basis += f" and {len(lumped)} equipment filters"
    return total, basis


def summarize(plant: Plant, topology: Topology) -> PlantSummary:
    islands = []
    for island in topology.normal_islands:
        capacitance, basis = island_capacitance(plant, topology, island)
        current = None
        if capacitance is not None and island.voltage is not None:
            current = charging_current(island.voltage, plant.plant.frequency, capacitance)
        joiners = sorted(
            device for device in topology.normally_open
            if any(topology.island_of(n).id != island.id
                   for n in topology.graph.neighbors(device))
            and (device in island.nodes or any(
                n in island.nodes for n in topology.graph.neighbors(device)))
        )
        islands.append(IslandSummary(
            id=island.id, voltage=island.voltage,
            earthing=island.earthing.value if island.earthing else None,
            detectors=tuple(d.id for d in island.detectors),
            item_count=len({element_of(n) for n in island.nodes}),
            capacitance_per_phase=capacitance, capacitance_basis=basis,
            charging_current=current, joinable_by=tuple(joiners),
        ))
    warnings = [f"insulated system {island_id} has no ground detector: each insulated "
                "system needs continuous ground indication"
                for island_id in unwatched_islands(topology)]
    return PlantSummary(
        name=plant.plant.name, kind=plant.plant.kind.value,
        frequency_hz=plant.plant.frequency, phase_sequence=plant.plant.sequence,
        element_count=len(topology.elements), islands=tuple(islands), warnings=tuple(warnings),
    )
