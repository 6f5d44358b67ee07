"""Named consistency checks of a validated plant: what the schema alone cannot see.

Each check returns ``Mismatch``s: a field path (section, index, field) and a
message. The loader turns the paths into file:line:col. Pure: no file access.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass

import networkx as nx

from workpack.errors import did_you_mean
from workpack.model.findings import BreakerTripped, Findings, LampsSeen, Megger, TransformerUnit
from workpack.model.plant import (
    SECTIONS,
    Bus,
    Cable,
    Device,
    Earthing,
    Element,
    FedElement,
    Load,
    Plant,
    Source,
    Transformer,
)
from workpack.topology import POWER, Topology, element_of

# Common practice: nameplates of one system differ by a few per cent (450 V
# generators on a 440 V bus, 460 V motors on 480 V); more than 5 % is a mistake.
VOLTAGE_TOLERANCE = 0.05

Path = tuple[str | int, ...]


@dataclass(frozen=True)
class Mismatch:
    path: Path
    message: str
    related: Path | None = None  # another place the message refers to ("first given at")


def locations(plant: Plant) -> dict[str, Path]:
    """Element id → (section, index) of its entry in the file."""
    places: dict[str, Path] = {}
    for section in SECTIONS:
        for index, element in enumerate(getattr(plant, section)):
            places.setdefault(element.id, (section, index))
    return places


def check_unique_ids(plant: Plant) -> Iterator[Mismatch]:
    seen: dict[str, Path] = {}
    for section in SECTIONS:
        for index, element in enumerate(getattr(plant, section)):
            ids: list[tuple[str, Path]] = [(element.id, (section, index, "id"))]
            if isinstance(element, Bus) and element.detector:
                ids.append((element.detector.id, (section, index, "detector", "id")))
            # start and transfer blocks are lock points with their own ids on the records
            if isinstance(element, Source) and element.start_block:
                ids.append((element.start_block.id, (section, index, "start_block", "id")))
            if isinstance(element, Device) and element.transfer_block:
                ids.append((element.transfer_block.id,
                            (section, index, "transfer_block", "id")))
            for element_id, path in ids:
                if element_id in seen:
                    yield Mismatch(path, f"id {element_id!r} is already used; ids must be "
                                         "unique", related=seen[element_id])
                else:
                    seen[element_id] = path


def check_references(plant: Plant) -> Iterator[Mismatch]:
    known = plant.index()
    cable_types = {t.id for t in plant.cable_types}
    for section in SECTIONS:
        for index, element in enumerate(getattr(plant, section)):
            if isinstance(element, FedElement):
                for position, supply in enumerate(element.from_):
                    path: Path = (section, index, "from") if len(element.from_) == 1 else (
                        section, index, "from", position)
                    if supply not in known:
                        yield Mismatch(path, f"unknown element {supply!r}"
                                            f"{did_you_mean(supply, known)}")
                    elif isinstance(known[supply], Load):
                        yield Mismatch(path, f"{supply!r} is a load and feeds nothing; "
                                            "name the device or bus that supplies "
                                            f"{element.id}")
                    elif supply == element.id:
                        yield Mismatch(path, f"{element.id} cannot feed itself")
            if isinstance(element, Load):
                for position, auxiliary in enumerate(element.auxiliaries):
                    path = (section, index, "auxiliaries", position, "from")
                    if auxiliary.from_ not in known:
                        yield Mismatch(path, f"unknown element {auxiliary.from_!r}"
                                            f"{did_you_mean(auxiliary.from_, known)}")
                    elif not isinstance(known[auxiliary.from_], Device):
                        yield Mismatch(path, f"{auxiliary.from_!r} is a "
                                            f"{type(known[auxiliary.from_]).__name__.lower()}; "
                                            "an auxiliary supply is fed from a device "
                                            "(its breaker or fuse)")
            if isinstance(element, Cable) and element.cable_type is not None and (
                element.cable_type not in cable_types
            ):
                yield Mismatch((section, index, "cable_type"),
                              f"unknown cable type {element.cable_type!r}"
                              f"{did_you_mean(element.cable_type, cable_types)}; "
                              "define it under cable_types")


def check_feeds_something(plant: Plant) -> Iterator[Mismatch]:
    """Every source and device feeds something: a dead end hides a supply.

    A shore breaker that no board names in its ``from`` is a supply the
    isolation planner never sees; a spare way is better left out of the file.
    """
    fed_from = {supply for element in plant.elements() if isinstance(element, FedElement)
                for supply in element.from_}
    fed_from |= {auxiliary.from_ for load in plant.loads for auxiliary in load.auxiliaries}
    for section in ("sources", "devices"):
        for index, element in enumerate(getattr(plant, section)):
            if element.id in fed_from:
                continue
            what = "source" if section == "sources" else element.kind.value.replace("_", " ")
            yield Mismatch((section, index, "id"),
                           f"{element.id} feeds nothing: no element names this {what} in "
                           "its 'from' (nor as an auxiliary supply), so an isolation would "
                           "never see the supply behind it; name it in the 'from' of what it "
                           "feeds, or leave a spare way out of the inventory")


def check_voltages(plant: Plant, topology: Topology) -> Iterator[Mismatch]:
    """Every element of an island agrees with the island's voltage; transformers match."""
    places = locations(plant)
    for island in topology.normal_islands:
        if island.voltage is None:
            continue
        reference = island.buses[0] if island.buses else None
        for element_id in island.elements:
            element = topology.elements[element_id]
            rated = _rated_voltage(element)
            if rated is None or isinstance(element, Transformer):
                continue
            if not _close(rated, island.voltage):
                field = "rated_voltage" if isinstance(element, Load) else "voltage"
                yield Mismatch((*places[element_id], field),
                              f"{_volts(rated)} does not match the {_volts(island.voltage)} "
                              f"system it is connected to (island of {reference or island.id})")
    for index, transformer in enumerate(plant.transformers):
        for side, node, rated in (
            ("primary_voltage", f"{transformer.id}:primary", transformer.primary_voltage),
            ("secondary_voltage", f"{transformer.id}:secondary", transformer.secondary_voltage),
        ):
            if node not in topology.graph:
                continue
            island = topology.island_of(node)
            if island.buses and island.voltage is not None and not _close(rated, island.voltage):
                yield Mismatch(("transformers", index, side),
                              f"{_volts(rated)} does not match bus {island.buses[0]} "
                              f"({_volts(island.voltage)}) on its {side.split('_')[0]} side")


def check_earthing(plant: Plant, topology: Topology) -> Iterator[Mismatch]:
    places = locations(plant)
    for island in topology.normal_islands:
        buses = [topology.elements[b] for b in island.buses]
        if not buses:
            continue
        first = buses[0]
        assert isinstance(first, Bus)
        grounded = [element_of(n) for n in island.nodes if n.endswith(":secondary") and
                    _neutral_grounded(topology.elements[element_of(n)])]
        for bus in buses:
            assert isinstance(bus, Bus)
            if bus.earthing is not first.earthing:
                yield Mismatch((*places[bus.id], "earthing"),
                              f"{bus.earthing} but {first.id}, on the same galvanic system, is "
                              f"{first.earthing}")
            elif grounded and bus.earthing is Earthing.insulated:
                yield Mismatch((*places[bus.id], "earthing"),
                              f"insulated, but it is fed from {grounded[0]} whose secondary "
                              "neutral is grounded: that makes the system solidly grounded")


def check_fed(plant: Plant, topology: Topology) -> Iterator[Mismatch]:
    """Every element can be reached from some source (with everything closable closed)."""
    places = locations(plant)
    view = topology.closable_view(POWER)
    for component in sorted(nx.connected_components(view), key=min):
        if component & topology.source_nodes:
            continue
        members = sorted({element_of(n) for n in component}, key=lambda e: places[e])
        first = members[0]
        others = len(members) - 1
        tail = f" (nor do the {others} elements connected to it)" if others else ""
        yield Mismatch((*places[first], "from") if not isinstance(
            topology.elements[first], Source) else places[first],
            f"{first} is fed from nowhere: no source reaches it{tail}")


def check_loops(plant: Plant, topology: Topology) -> Iterator[Mismatch]:
    """A closed loop must pass through a normally open device (radial operation)."""
    places = locations(plant)
    # In the normal state an open device hangs on its supply side only, and a
    # transfer switch on its normal side: neither can close a loop.
    view = topology.normal_view(POWER)
    for cycle in sorted(sorted(c) for c in nx.cycle_basis(view)):
        members = sorted({element_of(n) for n in cycle}, key=lambda e: places[e])
        yield Mismatch((*places[members[-1]], "from"),
                      "closed loop through " + ", ".join(members) +
                      " with no normally open device: mark one of its devices "
                      "'normally: open'")


def run_checks(plant: Plant) -> tuple[list[Mismatch], Topology | None]:
    """All checks; the topology is returned when the references allow building it."""
    found = list(check_unique_ids(plant)) + list(check_references(plant))
    if found:
        return found, None
    found.extend(check_feeds_something(plant))
    topology = Topology(plant)
    for check in (check_fed, check_loops, check_voltages, check_earthing):
        found.extend(check(plant, topology))
    return found, topology


def unwatched_islands(topology: Topology) -> list[str]:
    """Insulated islands with a bus but no ground detector (each needs one)."""
    return [island.id for island in topology.normal_islands
            if island.buses and island.earthing is Earthing.insulated and not island.detectors]


def _rated_voltage(element: Element) -> float | None:
    if isinstance(element, Bus | Source):
        return element.voltage
    if isinstance(element, Load):
        return element.rated_voltage
    return None


def _neutral_grounded(element: Element) -> bool:
    return isinstance(element, Transformer) and element.secondary_neutral.value == "grounded"


def _close(a: float, b: float) -> bool:
    return abs(a - b) <= VOLTAGE_TOLERANCE * max(a, b)


def _volts(value: float) -> str:
    return f"{value:g} V"



def check_findings(findings: Findings, topology: Topology) -> Iterator[Mismatch]:
    """Every finding names a known place, the plant's phase labels, and fits its kind."""
    detectors = {d.id: island for island in topology.normal_islands for d in island.detectors}
    known = set(topology.elements) | set(detectors)
    labels = set(topology.plant.plant.phase_labels)
    for index, finding in enumerate(findings.findings):
        base: Path = ("findings", index)
        if finding.where not in known:
            yield Mismatch((*base, "where"), f"unknown element or detector {finding.where!r}"
                                              f"{did_you_mean(finding.where, known)}")
            continue
        # Not `lamps or volts`: an empty {} of lamps must be checked, not skipped.
        per_phase = getattr(finding, "lamps", getattr(finding, "volts", None))
        if per_phase is not None:
            field = "lamps" if isinstance(finding, LampsSeen) else "volts"
            if set(per_phase) != labels:
                yield Mismatch((*base, field),
                               f"phases {sorted(per_phase)} do not match the plant's phase "
                               f"labels {sorted(labels)}; give one value for each")
        element = topology.elements.get(finding.where)
        if isinstance(finding, TransformerUnit) and not (
            isinstance(element, Transformer) and element.construction.value ==
            "bank_of_single_phase"
        ):
            yield Mismatch((*base, "where"), f"{finding.where!r} is not a bank of single-phase "
                                              "transformers")
        if isinstance(finding, BreakerTripped) and not isinstance(element, Device):
            yield Mismatch((*base, "where"), f"{finding.where!r} is not a switching device")
        if isinstance(finding, Megger) and element is None:
            yield Mismatch((*base, "where"), "an insulation test is made on an element, "
                                              f"not on detector {finding.where!r}")
