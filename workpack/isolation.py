"""What to open and lock so that no source can reach an item.

The search walks outward from the item over every path that could carry
energy (normally open ties, changeovers, back-feed through transformers,
auxiliary heater and control supplies) and stops at the first lockable device
on each path: the nearest lockable device upstream of the item on that path.
Devices whose far side reaches no source are dropped, then every remaining
device is proven necessary: closing it alone would let a source reach the
item. A path that reaches a source with no lockable device on it is reported
as a hazard, never papered over. Pure: no file access.
"""

from __future__ import annotations

from collections import deque
from dataclasses import dataclass

from workpack.model.plant import (
    Bus,
    Cable,
    Device,
    Load,
    LoadKind,
    Source,
    SourceKind,
    Transformer,
)
from workpack.topology import (
    POWER,
    Topology,
    element_of,
)

# Common practice, not from a standard: a feeder this long holds enough charge
# after a test or a switch-off to be felt; discharge it to earth before touching.
LONG_CABLE_M = 100.0


@dataclass(frozen=True)
class IsolationPoint:
    """One device to open, lock and tag."""

    order: int
    device: str
    device_kind: str
    location: str | None
    reason: str  # which supply path it cuts
    voltage: float | None  # nominal V line-to-line on its supply side
    already_open: bool  # a normally open tie: lock it open, do not close it
    via: tuple[str, ...]  # the elements between the item and this device


@dataclass(frozen=True)
class VerifyPoint:
    """Where absence of voltage must be proven, and against what voltage class."""

    where: str
    conductors: str
    voltage: float | None
    wires: int = 3  # three phases, or the two conductors of a heater or control supply


@dataclass(frozen=True)
class Hazard:
    severity: str  # DANGER / WARNING / CAUTION
    text: str


@dataclass(frozen=True)
class IsolationPlan:
    item: str
    points: tuple[IsolationPoint, ...]
    verify: tuple[VerifyPoint, ...]
    stored_energy: tuple[str, ...]
    hazards: tuple[Hazard, ...]
    also_open: tuple[str, ...]  # non-lockable devices passed on the way: open and tag

    @property
    def devices(self) -> tuple[str, ...]:
        return tuple(point.device for point in self.points)

    @property
    def complete(self) -> bool:
        """True when every path from every source is cut by a locked device."""
        return not any(h.severity == "DANGER" for h in self.hazards)


def plan_isolation(topology: Topology, item_id: str) -> IsolationPlan:
    """Devices to lock open so that no source can reach ``item_id``."""
    if item_id not in topology.elements:
        raise KeyError(item_id)
    item = topology.elements[item_id]
    neighbours = topology.energy_neighbours(item_id)
    starts = topology.work_nodes(item_id)
    # Breadth-first, sorted: the nearest device on each path is found first and
    # the result never depends on set order.
    parent: dict[str, str | None] = {node: None for node in starts}
    queue = deque(sorted(starts))
    frontier: list[str] = []
    unprotected: list[str] = []
    passed_unlockable: set[str] = set()
    while queue:
        node = queue.popleft()
        for neighbour in neighbours(node):
            if neighbour in parent:
                continue
            parent[neighbour] = node
            element = topology.elements[element_of(neighbour)]
            if isinstance(element, Device) and element.id != item_id:
                if element.can_lock:
                    frontier.append(neighbour)
                    continue
                passed_unlockable.add(element.id)
            if isinstance(element, Source):
                unprotected.append(neighbour)
                continue
            queue.append(neighbour)

    region = {node for node in parent if node not in frontier}
    chosen = _necessary(topology, region, frontier)

    def path_to(node: str) -> tuple[str, ...]:
        chain: list[str] = []
        step = parent[node]
        while step is not None:
            chain.append(element_of(step))
            step = parent[step]
        deduplicated = list(dict.fromkeys(reversed(chain)))
        return tuple(deduplicated)

    def distance(node: str) -> int:
        return len(path_to(node))

    normal_path = {element_of(node) for path in topology.normal_supply_paths(item_id)
                   for node in path}

    def application_order(device_id: str) -> tuple[int, int, str]:
        # Interrupt the load first (closed devices on the normal supply), then
        # other closed devices, then lock the normally open ones where they are.
        if device_id in topology.normally_open:
            group = 2
        else:
            group = 0 if device_id in normal_path else 1
        return (group, distance(device_id), device_id)

    blocked = region | set(chosen)
    points: list[IsolationPoint] = []
    for order, device_id in enumerate(sorted(chosen, key=application_order), start=1):
        device = topology.elements[device_id]
        assert isinstance(device, Device)
        via = path_to(device_id)
        points.append(IsolationPoint(
            order=order, device=device_id, device_kind=device.kind.value,
            location=device.location,
            reason=_reason(topology, item_id, device_id, blocked, normal_path),
            voltage=topology.voltage_at(device_id),
            already_open=device_id in topology.normally_open, via=via,
        ))

    hazards = [_no_lock_hazard(topology, item_id, source, path_to(source))
               for source in sorted(unprotected)]
    hazards.extend(_item_hazards(topology, item_id))
    if isinstance(item, Source):
        if item.kind in (SourceKind.shore_connection, SourceKind.utility):
            hazards.append(Hazard("DANGER", f"{item_id} is itself a source fed from outside: "
                                            "have it isolated and locked at its far end (ashore "
                                            "or by the utility) before work"))
        else:
            hazards.append(Hazard("DANGER", f"{item_id} is itself a source: block its start "
                                            "and lock it out at its own controls as well"))
    dead = region - {n for n in region if isinstance(topology.elements[element_of(n)], Source)}
    return IsolationPlan(
        item=item_id,
        points=tuple(points),
        verify=_verify_points(topology, item_id, chosen, parent),
        stored_energy=_stored_energy(topology, dead),
        hazards=tuple(hazards),
        also_open=tuple(sorted(passed_unlockable & {element_of(n) for n in region})),
    )


def _necessary(topology: Topology, region: set[str], frontier: list[str]) -> list[str]:
    """Frontier devices with a source beyond them; each one kept is needed.

    A device is needed when a source reaches its far side without crossing the
    item's side (``region``) or another frontier device: closing it alone would
    put that source onto the item. Dropping a device whose far side is dead
    never makes another device's far side live (it only joins dead parts
    together), so checking each against the whole frontier gives the same
    answer as dropping them one at a time.
    """
    blocked = region | set(frontier)
    return sorted(d for d in frontier if _far_side_path(topology, d, blocked) is not None)


def _far_side_path(topology: Topology, device: str,
                   blocked: set[str]) -> tuple[str, ...] | None:
    """Shortest path from ``device`` to a source that avoids ``blocked``; device first."""
    view = topology.closable_view(POWER)
    parent: dict[str, str | None] = {device: None}
    queue = deque([device])
    while queue:
        node = queue.popleft()
        if node in topology.source_nodes:
            chain: list[str] = []
            step: str | None = node
            while step is not None:
                chain.append(step)
                step = parent[step]
            return tuple(reversed(chain))
        for neighbour in view.neighbors(node):
            if neighbour not in parent and (neighbour not in blocked or neighbour == device):
                parent[neighbour] = node
                queue.append(neighbour)
    return None


def _reason(topology: Topology, item_id: str, device_id: str, blocked: set[str],
            normal_path: set[str]) -> str:
    """Say in words which supply this device cuts."""
    if device_id in topology.auxiliary_feeds(item_id):
        item = topology.elements[item_id]
        kinds = [a.kind.value.replace("_", " ") for a in item.auxiliaries  # type: ignore[attr-defined]
                 if a.from_ == device_id]
        return f"{', '.join(kinds)} supply into {item_id}"
    path = _far_side_path(topology, device_id, blocked - {device_id})
    if device_id in normal_path:
        sources = sorted({element_of(p[0]) for p in topology.normal_supply_paths(item_id)
                          if device_id in {element_of(n) for n in p}})
        return "normal supply from " + ", ".join(sources)
    if path is None:
        return "possible supply"
    transformers = sorted({element_of(n) for n in path if n.endswith(":secondary")})
    ties = [element_of(n) for n in path
            if element_of(n) in topology.normally_open and element_of(n) != device_id]
    parts = [f"from {', '.join(_far_side_sources(topology, device_id, blocked - {device_id}))}"]
    if ties:
        parts.append("e.g. via normally open " + ", ".join(dict.fromkeys(ties)))
    if transformers:
        parts.append("back-feed through transformer " + ", ".join(transformers))
    tie = "normally open tie or alternate feed: " if device_id in topology.normally_open else ""
    return tie + "possible supply " + "; ".join(parts)


def _far_side_sources(topology: Topology, device: str, blocked: set[str]) -> list[str]:
    """Every source that could reach ``device`` without crossing ``blocked``."""
    view = topology.closable_view(POWER)
    seen = {device}
    queue = deque([device])
    found = []
    while queue:
        node = queue.popleft()
        if node in topology.source_nodes:
            found.append(node)
            continue
        for neighbour in view.neighbors(node):
            if neighbour not in seen and neighbour not in blocked:
                seen.add(neighbour)
                queue.append(neighbour)
    return sorted(found)


def _verify_points(topology: Topology, item_id: str, chosen: list[str],
                   parent: dict[str, str | None]) -> tuple[VerifyPoint, ...]:
    """Prove dead at the point of work, once per distinct supply arriving there."""
    points: list[VerifyPoint] = []
    item = topology.elements[item_id]
    for node in topology.work_nodes(item_id):
        if ":" in node:
            where = f"{node.split(':')[1]} terminals of {item_id}"
        elif isinstance(item, Bus):
            where = f"busbars of {item_id}"
        elif isinstance(item, Cable):
            where = f"both ends of cable {item_id}"
        elif isinstance(item, Device):
            where = f"line and load terminals of {item_id}"
        else:
            where = f"supply terminals of {item_id}"
        points.append(VerifyPoint(
            where=where,
            conductors="each phase-to-phase and each phase-to-earth",
            voltage=topology.voltage_at(node),
        ))
    if isinstance(item, Load):
        for auxiliary in item.auxiliaries:
            if auxiliary.from_ in topology.elements:
                points.append(VerifyPoint(
                    where=f"{auxiliary.kind.value.replace('_', ' ')} terminals of {item_id}",
                    conductors="between the supply conductors and each to earth",
                    voltage=auxiliary.voltage or topology.voltage_at(auxiliary.from_),
                    wires=2,
                ))
    return tuple(points)


def _stored_energy(topology: Topology, dead: set[str]) -> tuple[str, ...]:
    notes: list[str] = []
    for node in sorted(dead):
        element = topology.elements[element_of(node)]
        if isinstance(element, Cable) and element.length >= LONG_CABLE_M and node == element.id:
            notes.append(f"cable {element.id} is {element.length:.0f} m long: it holds charge; "
                         "discharge each conductor to earth before touching")
        if isinstance(element, Load) and element.kind is LoadKind.capacitor_bank:
            notes.append(f"{element.id} is a capacitor bank: wait for its discharge time, "
                         "then prove it discharged and short it to earth")
        if isinstance(element, Load) and element.equipment_capacitance:
            notes.append(f"{element.id} has filter capacitance to earth "
                         f"({element.equipment_capacitance * 1e9:.0f} nF per phase): "
                         "disconnect electronics before an insulation test")
        if isinstance(element, Transformer) and node == f"{element.id}:primary":
            notes.append(f"transformer {element.id}: energising either side energises the "
                         "other; both sides are in the isolation")
    return tuple(notes)


def _no_lock_hazard(topology: Topology, item_id: str, source: str,
                    via: tuple[str, ...]) -> Hazard:
    element = topology.elements[source]
    assert isinstance(element, Source)
    route = " → ".join((*via, source))
    return Hazard("DANGER", f"no lockable device between {item_id} and source {source} "
                            f"({element.kind.value}) on the path {route}: this path cannot be "
                            "locked out here; isolate at the source or do not start the work")


def _item_hazards(topology: Topology, item_id: str) -> list[Hazard]:
    """Sources that could appear on the item's own system if ties were closed."""
    hazards: list[Hazard] = []
    reach: set[str] = set()
    for node in topology.work_nodes(item_id):
        reach |= topology.sources_joined_with_ties_closed(node)
    for source in sorted(reach - {item_id}):
        element = topology.elements[source]
        assert isinstance(element, Source)
        if element.starts_automatically:
            hazards.append(Hazard("WARNING", f"{source} ({element.kind.value}) starts by "
                                             "itself on loss of supply: keep it locked out "
                                             "or its breaker locked open"))
        if element.kind in (SourceKind.battery, SourceKind.ups):
            hazards.append(Hazard("WARNING", f"{source} ({element.kind.value}) stays live "
                                             "with every breaker open: its own terminals "
                                             "are never dead"))
    return hazards
