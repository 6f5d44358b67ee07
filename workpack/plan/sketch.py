"""The one-line sketch of a package, as routes: every way energy could reach the item
that the package deals with, drawn from its far end toward the item. Pure.

- ``lock``: for each isolation point, the nearest source beyond it, the point itself and
  the way on to the item; a point off the normal supply (a tie, a back-feed through a
  transformer's secondary, a heater supply) is drawn from its own far side, so the
  secondary bus and the ties behind it show.
- ``supply``: every normal supply path of the item.
- ``tie``: without an isolation, each normally open point that could feed a board of
  the normal supply (or the item), from its nearest source.
- ``secondary``: a transformer item on to its secondary bus, unless a lock route
  already shows that bus.
- ``feeder``: for a ground search, the searched board down to each feeder its first
  level opens, numbered with the package step that first opens it.

A route keeps the places a technician looks for: sources, boards, transformers, the
item, isolation points, normally open points and changeovers; cables and closed
breakers in between are left out.
"""

from __future__ import annotations

from collections import deque
from collections.abc import Iterable, Sequence

from workpack.isolation import IsolationPlan
from workpack.model.package import Sketch, SketchNode, SketchRoute, SketchRouteKind
from workpack.model.plant import Bus, Device, DeviceKind, Source, Transformer
from workpack.numbers import format_number, format_quantity
from workpack.plan.context import ELEMENT_KINDS
from workpack.topology import Topology, element_of

SearchOrder = Sequence[tuple[int, Sequence[str]]]  # (package step, devices it opens)


def package_sketch(topology: Topology, item_id: str, plan: IsolationPlan | None,
                   search_board: str | None = None,
                   search_order: SearchOrder = ()) -> Sketch | None:
    """The item's routes (see the module); None when there is nothing but the item."""
    locked = set(plan.devices) if plan else set()
    first_step: dict[str, int] = {}
    for number, devices in search_order:
        for device in devices:
            first_step.setdefault(device, number)
    builder = _Routes(topology, item_id, locked, first_step)
    if plan is not None:
        for point in plan.points:
            if point.blocks is None:  # a start or transfer block is a control, no place
                builder.lock_route(point.device, point.via, plan.devices)
    for path in topology.normal_supply_paths(item_id):
        builder.add("supply", [element_of(n) for n in path])
    if search_board is not None:  # what the search opens comes before the ties
        for device in sorted(first_step, key=lambda d: (first_step[d], d)):
            builder.feeder_route(search_board, device)
    if plan is None:
        builder.tie_routes()
    item = topology.elements[item_id]
    if isinstance(item, Transformer):
        builder.secondary_route(item)
    builder.node(item_id)
    return builder.sketch()


class _Routes:
    def __init__(self, topology: Topology, item_id: str, locked: set[str],
                 first_step: dict[str, int]) -> None:
        self.topology = topology
        self.item_id = item_id
        self.locked = locked
        self.first_step = first_step
        self.nodes: dict[str, SketchNode] = {}
        self.edges: dict[tuple[str, str], None] = {}
        self.routes: list[SketchRoute] = []

    def node(self, element_id: str) -> None:
        if element_id in self.nodes:
            return
        element = self.topology.elements[element_id]
        kind = "item" if element_id == self.item_id else ELEMENT_KINDS[type(element)]
        label, detail = element_id, ""
        if isinstance(element, Bus):
            label = f"{element_id} {format_quantity(element.voltage, 'V')}"
        elif isinstance(element, Transformer):
            detail = (f"{element.vector_group} {format_number(element.primary_voltage)}"
                      f"/{format_quantity(element.secondary_voltage, 'V')}")
        self.nodes[element_id] = SketchNode(
            id=element_id, label=label, kind=kind, detail=detail,
            isolate=element_id in self.locked,
            normally_open=element_id in self.topology.normally_open,
            search_step=self.first_step.get(element_id))

    def kept(self, element_id: str) -> bool:
        element = self.topology.elements[element_id]
        return (element_id == self.item_id or element_id in self.locked
                or element_id in self.first_step
                or element_id in self.topology.normally_open
                or isinstance(element, Source | Bus | Transformer)
                or (isinstance(element, Device)
                    and element.kind is DeviceKind.transfer_switch))

    def add(self, kind: SketchRouteKind, elements: Iterable[str]) -> None:
        """A route through ``elements`` (far end first), keeping what ``kept`` keeps."""
        chain = [e for e in dict.fromkeys(elements) if self.kept(e)]
        if len(chain) < 2:
            return
        route = SketchRoute(kind=kind, nodes=tuple(chain))
        if any(drawn.nodes == route.nodes for drawn in self.routes):
            return  # a lock on the normal supply: that route is drawn once
        self.routes.append(route)
        for element_id in chain:
            self.node(element_id)
        for supply, load in zip(chain, chain[1:], strict=False):
            self.edges.setdefault((supply, load))

    def nearest_source(self, start: str, avoid: Iterable[str]) -> list[str]:
        """Elements from the nearest source to ``start`` (a device's far side), walking
        every closable path without entering ``avoid`` (elements); [] when none."""
        topology = self.topology
        avoided = set(avoid)
        adjacency = topology.closable_adjacency
        switches = topology.one_input_at_a_time
        sources = topology.source_nodes
        first: tuple[str, str | None] = (topology.node_out(start), None)
        parent: dict[tuple[str, str | None], tuple[str, str | None] | None] = {first: None}
        queue: deque[tuple[str, str | None]] = deque([first])

        def chain_to(state: tuple[str, str | None]) -> list[str]:
            chain = []
            step: tuple[str, str | None] | None = state
            while step is not None:
                chain.append(element_of(step[0]))
                step = parent[step]
            return list(dict.fromkeys(chain))  # source first

        if first[0] in sources:
            return chain_to(first)
        while queue:
            state = queue.popleft()
            node, passed = state
            # Topology.onward, written out (a lock's route is walked for every package)
            blocked_inputs = switches.get(node) if passed == node else None
            for neighbour in adjacency.get(node, ()):
                if neighbour == passed or element_of(neighbour) in avoided or (
                        blocked_inputs and neighbour in blocked_inputs):
                    continue
                inputs = switches.get(neighbour)
                reached = (neighbour, neighbour if inputs and node in inputs else passed)
                if reached not in parent:
                    parent[reached] = state
                    if neighbour in sources:
                        # first in, first out: the first source put in is the nearest
                        return chain_to(reached)
                    queue.append(reached)
        return []

    def lock_route(self, device: str, via: Sequence[str], devices: Sequence[str]) -> None:
        item_side = {self.item_id, *via}
        others = set(devices) - {device}
        far = (self.nearest_source(device, item_side | others)
               or self.nearest_source(device, item_side) or [device])
        self.add("lock", [*far, *reversed(via), self.item_id])

    def tie_routes(self) -> None:
        """Normally open points feeding the item or a board of its normal supply."""
        fed = [self.item_id, *(n for n in self.nodes
                               if isinstance(self.topology.elements[n], Bus))]
        for element_id in fed:
            element = self.topology.elements[element_id]
            for supply in getattr(element, "from_", ()):
                if supply in self.topology.normally_open:
                    far = self.nearest_source(supply, [element_id]) or [supply]
                    self.add("tie", [*far, element_id])

    def secondary_route(self, transformer: Transformer) -> None:
        """The transformer on to the first bus on its secondary, if no route shows it."""
        children = self.topology.normal_children
        queue: deque[tuple[str, tuple[str, ...]]] = deque([(transformer.id, (transformer.id,))])
        seen = {transformer.id}
        while queue:
            element_id, path = queue.popleft()
            if element_id != transformer.id and isinstance(
                    self.topology.elements[element_id], Bus):
                if element_id not in self.nodes:
                    self.add("secondary", path)
                return
            for child in children.get(element_id, ()):
                if child not in seen:
                    seen.add(child)
                    queue.append((child, (*path, child)))

    def feeder_route(self, board: str, device: str) -> None:
        """The board down to a feeder the search opens, through the boards between."""
        for path in self.topology.normal_supply_paths(device):
            elements = [element_of(n) for n in path]
            if board in elements:
                self.add("feeder", elements[elements.index(board):])
                return
        self.add("feeder", [board, device])

    def sketch(self) -> Sketch | None:
        if len(self.nodes) < 2:
            return None
        return Sketch(nodes=tuple(self.nodes.values()), edges=tuple(self.edges),
                      routes=tuple(self.routes))
