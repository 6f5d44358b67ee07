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


def island_capacitance(plant: Plant, topology: Topology,
                       island: Island) -> tuple[float | None, str]:
    """Per-phase capacitance to earth of an island, F, and what the figure rests on."""
    cables: list[Cable] = []
    loads: list[Load] = []
    for node in island.nodes:  # one pass; each list keeps the island's order
        element = topology.elements.get(node)
        if isinstance(element, Cable):
            cables.append(element)
        elif isinstance(element, Load):
            loads.append(element)
    by_type: dict[str, float] = {}  # cable type → F/m; the first of an id counts
    for cable_type in plant.cable_types:
        by_type.setdefault(cable_type.id, cable_type.capacitance_to_earth)
    total = 0.0
    known = 0
    for cable in cables:
        per_m = cable.capacitance_to_earth
        if per_m is None and cable.cable_type is not None:
            per_m = by_type.get(cable.cable_type)
        if per_m is not None:
            total += per_m * cable.length
            known += 1
    lumped = [load.equipment_capacitance for load in loads if load.equipment_capacitance]
    total += sum(lumped)
    if not known and not lumped:
        return None, "no cable or equipment capacitance data"
    basis = f"{known} of the {len(cables)} cables listed in the plant file"
    if lumped:
        basis += f" and {len(lumped)} equipment filters"
    return total, basis


def joinable_by(topology: Topology) -> dict[str, list[str]]:
    """Island id → the normally open devices that would join it to another island.

    A device counts for every island it sits in or touches, when anything it
    touches lies in another island. One pass over the devices and their
    neighbours: linear in the plant.
    """
    joiners: dict[str, list[str]] = {}
    for device in sorted(topology.normally_open):
        around = [topology.island_of(n).id for n in topology.graph.neighbors(device)]
        for island_id in dict.fromkeys([topology.island_of(device).id, *around]):
            if any(other != island_id for other in around):
                joiners.setdefault(island_id, []).append(device)
    return joiners


def summarize(plant: Plant, topology: Topology) -> PlantSummary:
    islands = []
    joiners_of = joinable_by(topology)
    for island in topology.normal_islands:
        capacitance, basis = island_capacitance(plant, topology, island)
        current = None
        if capacitance is not None and island.voltage is not None:
            current = charging_current(island.voltage, plant.plant.frequency, capacitance)
        joiners = joiners_of.get(island.id, [])
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
