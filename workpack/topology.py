"""The plant as a graph: galvanic islands, supply paths, who watches what.

Nodes are element ids; a transformer is two nodes, ``T:primary`` and
``T:secondary``, joined by a *magnetic* edge, because it passes energy but
not a ground fault. Edges:

- ``wiring``: an element and what it names in ``from`` (``supply`` attribute
  names the supply-side node);
- ``changeover``: a transfer switch and its alternate supply (normally open);
- ``magnetic``: the two sides of a transformer;
- ``auxiliary``: an item and the device feeding its heater or control power.

An open-transition (break-before-make) changeover never joins its inputs: energy
passes from either input to its load side, or from its load side to either
input, never from one input to the other. No plain graph says that, so walks
that ask where energy could go step with ``Topology.onward``, which carries the
changeover a walk has entered from an input.

The graph is built in sorted order, so nothing depends on hash seeds. Pure:
no file access.
"""

from __future__ import annotations

from collections.abc import Callable, Collection, Iterable, Iterator
from dataclasses import dataclass
from functools import cached_property
from itertools import islice

import networkx as nx

from workpack.model.plant import (
    Bus,
    Detector,
    Device,
    DeviceKind,
    Earthing,
    Element,
    FedElement,
    Load,
    Plant,
    SecondaryNeutral,
    Source,
    Transformer,
)

WIRING, CHANGEOVER, MAGNETIC, AUXILIARY = "wiring", "changeover", "magnetic", "auxiliary"
GALVANIC = frozenset({WIRING, CHANGEOVER})
POWER = frozenset({WIRING, CHANGEOVER, MAGNETIC})
EVERY = frozenset({WIRING, CHANGEOVER, MAGNETIC, AUXILIARY})
PATH_LIMIT = 64  # enough to show a person; beyond that the plant is a mesh


def primary(transformer_id: str) -> str:
    return f"{transformer_id}:primary"


def secondary(transformer_id: str) -> str:
    return f"{transformer_id}:secondary"


def element_of(node: str) -> str:
    """The element id behind a graph node."""
    # most nodes are their element: no new string for them (asked millions of times)
    return node if ":" not in node else node.split(":", 1)[0]


_NO_DATA: dict[str, object] = {}  # shared by every node and edge of a conducting view


class _ConductingView(nx.Graph):  # type: ignore[misc]
    """A switching state's graph: structure only, made from its adjacency at once.

    Its nodes and edges share one empty data dict instead of one each (views are
    frozen, nothing is ever written to it): a large plant holds several views at
    once. The adjacency is handed in whole, in the order ``add_edges_from`` would
    have made it, instead of edge by edge through networkx's checks.
    """

    def __init__(self, nodes: Iterable[str] = (),
                 adjacency: dict[str, dict[str, object]] | None = None) -> None:
        super().__init__()  # networkx makes an empty one of these for subgraphs and copies
        if adjacency is not None:
            self._node = dict.fromkeys(nodes, _NO_DATA)
            self._adj = adjacency


@dataclass(frozen=True)
class Island:
    """A galvanically connected group of elements in one switching state."""

    id: str  # named after its first bus (or node) in sorted order
    nodes: tuple[str, ...]
    voltage: float | None  # V line-to-line, from its buses or sources
    earthing: Earthing | None
    detectors: tuple[Detector, ...]
    buses: tuple[str, ...]
    sources: tuple[str, ...]
    transformer_fed: bool = False  # holds a transformer secondary
    neutral: bool = False  # a neutral conductor is distributed: 3 phases + N

    @property
    def elements(self) -> tuple[str, ...]:
        return tuple(sorted({element_of(n) for n in self.nodes}))


@dataclass(frozen=True)
class ClosableParts:
    """The closable power graph cut at sources and open-transition changeovers
    (``Topology.closable_parts``)."""

    part_of: dict[str, int]  # node (neither a source nor such a changeover) → its part
    sources: tuple[dict[str, int], ...]  # part → source next to it → members next to it
    changeovers: tuple[tuple[tuple[str, str], ...], ...]  # part → (member, changeover next)
    source_order: tuple[str, ...]  # every source, sorted: bit i of a set of sources is this
    source_bit: dict[str, int]  # source → its bit
    source_bits: tuple[int, ...]  # part → the sources next to it, as bits


class Topology:
    """Graph queries over one plant. Build once, ask many times."""

    def __init__(self, plant: Plant):
        self.plant = plant
        self.elements: dict[str, Element] = plant.index()
        self.graph = nx.Graph()
        self._closable: dict[frozenset[str], nx.Graph] = {}
        self._normal: dict[frozenset[str], nx.Graph] = {}
        self._supply_paths: dict[str, tuple[tuple[str, ...], ...]] = {}  # asked again and again
        # node → its normal supply paths, or None where there are PATH_LIMIT or more
        self._paths_to: dict[str, tuple[tuple[str, ...], ...] | None] = {}
        self._below: dict[str, tuple[str, ...]] = {}  # so is every lock's subtree
        self._auxiliary_feeds: dict[str, tuple[str, ...]] = {}
        self._build()

    # --- construction ---------------------------------------------------------------------

    def node_in(self, element_id: str) -> str:
        """The node where an element receives supply (a transformer's primary)."""
        element = self.elements[element_id]
        return primary(element_id) if isinstance(element, Transformer) else element_id

    def node_out(self, element_id: str) -> str:
        """The node an element feeds onward from (a transformer's secondary)."""
        element = self.elements[element_id]
        return secondary(element_id) if isinstance(element, Transformer) else element_id

    def _build(self) -> None:
        graph = self.graph
        for element_id in sorted(self.elements):
            element = self.elements[element_id]
            if isinstance(element, Transformer):
                graph.add_node(primary(element_id), element=element_id, side="primary")
                graph.add_node(secondary(element_id), element=element_id, side="secondary")
                graph.add_edge(primary(element_id), secondary(element_id), kind=MAGNETIC)
            else:
                graph.add_node(element_id, element=element_id, side="")
        for element_id in sorted(self.elements):
            element = self.elements[element_id]
            if isinstance(element, FedElement):
                for position, supply_id in enumerate(element.from_):
                    if supply_id not in self.elements:
                        continue  # reported by the checks; the graph stays usable
                    kind = WIRING
                    if (isinstance(element, Device) and element.kind is DeviceKind.transfer_switch
                            and position > 0):
                        kind = CHANGEOVER
                    graph.add_edge(self.node_out(supply_id), self.node_in(element_id),
                                   kind=kind, supply=self.node_out(supply_id))
            if isinstance(element, Load):
                for auxiliary in element.auxiliaries:
                    if auxiliary.from_ in self.elements:
                        graph.add_edge(self.node_out(auxiliary.from_), element_id,
                                       kind=AUXILIARY, supply=self.node_out(auxiliary.from_),
                                       auxiliary=auxiliary.kind.value)

    # --- switching state ------------------------------------------------------------------

    @cached_property
    def normally_open(self) -> frozenset[str]:
        return frozenset(d.id for d in self.plant.devices if d.normally == "open")

    def view(self, kinds: frozenset[str], open_devices: Iterable[str] = (),
             changeovers_closed: bool = False) -> nx.Graph:
        """The graph as it conducts with ``open_devices`` open (a new, frozen graph).

        An open device stays attached to its supply side and is cut from its
        load side, so it belongs to the island it is fed from.
        """
        opened = frozenset(open_devices)
        if not opened and changeovers_closed:
            return self.closable_view(kinds)
        return self._conducting(kinds, opened, changeovers_closed)

    def _conducting(self, kinds: frozenset[str], opened: frozenset[str],
                    changeovers_closed: bool) -> nx.Graph:
        # A materialized graph: filtered views call back into Python per edge,
        # and the planner walks these graphs many times.
        adjacency: dict[str, dict[str, object]] = {node: {} for node in self.graph}
        for u, v, kind, supply in self._edge_list:
            if kind in kinds and (changeovers_closed or kind != CHANGEOVER) and (
                    supply not in opened):
                adjacency[u][v] = adjacency[v][u] = _NO_DATA
        return nx.freeze(_ConductingView(self.graph, adjacency))

    @cached_property
    def _edge_list(self) -> list[tuple[str, str, str, str | None]]:
        """Every edge of the graph in its order: (u, v, kind, supply node)."""
        return [(u, v, data["kind"], data.get("supply"))
                for u, v, data in self.graph.edges(data=True)]

    def normal_view(self, kinds: frozenset[str] = GALVANIC) -> nx.Graph:
        """The graph as it conducts in the normal switching state."""
        if kinds not in self._normal:
            self._normal[kinds] = self._conducting(kinds, self.normally_open, False)
        return self._normal[kinds]

    def closable_view(self, kinds: frozenset[str] = EVERY) -> nx.Graph:
        """Every path someone could close: ties, changeovers, back-feeds, auxiliaries."""
        if kinds not in self._closable:
            self._closable[kinds] = self._conducting(kinds, frozenset(), True)
        return self._closable[kinds]

    @cached_property
    def one_input_at_a_time(self) -> dict[str, frozenset[str]]:
        """Open-transition changeover → the nodes of its inputs, which it never joins."""
        return {device.id: frozenset(self.node_out(s) for s in device.from_
                                     if s in self.elements)
                for device in self.plant.devices
                if device.kind is DeviceKind.transfer_switch and not device.joins_inputs}

    @cached_property
    def closable_adjacency(self) -> dict[str, tuple[str, ...]]:
        """Node → its neighbours in ``closable_view(POWER)``, in the graph's sorted build
        order (plain tuples: the walks of the planner read them millions of times)."""
        return {node: tuple(neighbours)
                for node, neighbours in self.closable_view(POWER).adjacency()}

    @cached_property
    def closable_parts(self) -> ClosableParts:
        """``closable_view(POWER)`` cut at its sources and open-transition changeovers.

        Every other node is in one part: the nodes joined to it without passing a
        source or such a changeover. Within a part a walk steps both ways whatever
        changeover it last entered, so the part reaches what any of its nodes reaches.
        """
        adjacency = self.closable_adjacency
        cut = self.source_nodes | self.one_input_at_a_time.keys()
        part_of: dict[str, int] = {}
        sources: list[dict[str, int]] = []
        changeovers: list[tuple[tuple[str, str], ...]] = []
        for start in adjacency:
            if start in cut or start in part_of:
                continue
            number = len(sources)
            part_of[start] = number
            touching: dict[str, int] = {}
            steps: list[tuple[str, str]] = []
            stack = [start]
            while stack:
                node = stack.pop()
                for neighbour in adjacency[node]:
                    if neighbour in self.source_nodes:
                        touching[neighbour] = touching.get(neighbour, 0) + 1
                    elif neighbour in cut:
                        steps.append((node, neighbour))
                    elif neighbour not in part_of:
                        part_of[neighbour] = number
                        stack.append(neighbour)
            sources.append(touching)
            changeovers.append(tuple(steps))
        order = tuple(sorted(self.source_nodes))
        bit = {node: 1 << index for index, node in enumerate(order)}
        bits = tuple(sum(bit[node] for node in touching) for touching in sources)
        return ClosableParts(part_of, tuple(sources), tuple(changeovers), order, bit, bits)

    def onward(self, node: str, passed: str | None,
               neighbours: Iterable[str]) -> list[tuple[str, str | None]]:
        """One step of a walk that respects open-transition changeovers.

        A walk state is (node, passed): ``passed`` is the open-transition changeover
        the walk last entered from one of its inputs. From that changeover the walk
        goes on to its load side only, and never enters it again (which would join
        its inputs through its own load side). Returns the states one step on.
        """
        switches = self.one_input_at_a_time
        blocked_inputs = switches.get(node) if passed == node else None
        found = []
        for neighbour in neighbours:
            if neighbour == passed or (blocked_inputs and neighbour in blocked_inputs):
                continue
            inputs = switches.get(neighbour)
            found.append((neighbour, neighbour if inputs and node in inputs else passed))
        return found

    def _crosses_open_transition(self, path: Iterable[str]) -> bool:
        """A simple path that goes from one input of an open-transition changeover to another."""
        nodes = list(path)
        for before, middle, after in zip(nodes, nodes[1:], nodes[2:], strict=False):
            inputs = self.one_input_at_a_time.get(middle)
            if inputs and before in inputs and after in inputs:
                return True
        return False

    @cached_property
    def normal_children(self) -> dict[str, list[str]]:
        """Element id → the elements it feeds in the normal state (across banks too)."""
        children: dict[str, list[str]] = {}
        for element_id in sorted(self.elements):
            element = self.elements[element_id]
            if not isinstance(element, FedElement):
                continue
            supplies = element.from_[:1] if (
                isinstance(element, Device) and element.kind is DeviceKind.transfer_switch
            ) else element.from_
            for supply in supplies:
                if supply in self.elements and supply not in self.normally_open:
                    children.setdefault(supply, []).append(element_id)
        return children

    @cached_property
    def kept_live(self) -> frozenset[str]:
        """Nodes live in the normal switching state from sources that run without
        starting by themselves (a standby generator's board is dead until it starts)."""
        return self.kept_live_without(())

    def kept_live_without(self, opened: Iterable[str]) -> frozenset[str]:
        """``kept_live`` with the devices ``opened`` open as well."""
        adjacency = self.normal_adjacency
        cut = set(opened)
        starts = [s.id for s in self.plant.sources if not s.starts_automatically]
        seen = set(starts)
        stack = list(starts)
        while stack:
            node = stack.pop()
            if node in cut:
                continue  # an open device stays live on its supply side, feeds nothing on
            for neighbour in adjacency[node]:
                if neighbour not in seen:
                    seen.add(neighbour)
                    stack.append(neighbour)
        return frozenset(seen)

    @cached_property
    def normal_adjacency(self) -> dict[str, tuple[str, ...]]:
        """Node → its neighbours in ``normal_view(POWER)`` (plain tuples, for walks)."""
        return {node: tuple(neighbours)
                for node, neighbours in self.normal_view(POWER).adjacency()}

    def stays_live(self, node: str, opened: Collection[str]) -> bool:
        """``node`` is in ``kept_live_without(opened)``, asked from the node's side: the
        walk ends at the first source that runs without starting by itself, so it
        costs what lies around the node, not the plant."""
        adjacency = self.normal_adjacency
        sources = {s.id for s in self.plant.sources if not s.starts_automatically}
        if node in sources:
            return True
        seen = {node}
        stack = [node]  # the node itself is asked about, open or not: walk on from it
        while stack:
            here = stack.pop()
            for neighbour in adjacency[here]:
                if neighbour in sources:
                    return True
                if neighbour not in seen:
                    seen.add(neighbour)
                    if neighbour not in opened:  # open: live on its supply side, no further
                        stack.append(neighbour)
        return False

    def below(self, element_id: str) -> list[str]:
        """Every element that loses supply when ``element_id`` opens (normal state,
        across transformer banks), nearest first in walk order. Walked once per element:
        a ground search's final tests lock the same upstream devices again and again."""
        known = self._below.get(element_id)
        if known is None:
            known = self._below[element_id] = tuple(self._walk_below(element_id))
        return list(known)

    def _walk_below(self, element_id: str) -> list[str]:
        found: list[str] = []
        stack = [element_id]
        seen = {element_id}
        while stack:
            node = stack.pop()
            for child in self.normal_children.get(node, ()):
                if child not in seen:
                    seen.add(child)
                    found.append(child)
                    stack.append(child)
        return found

    # --- islands --------------------------------------------------------------------------

    def islands(self, open_devices: Iterable[str] | None = None) -> list[Island]:
        """Galvanic islands in a switching state (the normal one by default)."""
        view = (self.normal_view(GALVANIC) if open_devices is None
                else self.view(GALVANIC, open_devices))
        found = [self._island(sorted(component)) for component in nx.connected_components(view)]
        return sorted(found, key=lambda island: island.id)

    @cached_property
    def normal_islands(self) -> list[Island]:
        return self.islands()

    @cached_property
    def _island_by_node(self) -> dict[str, Island]:
        return {node: island for island in self.normal_islands for node in island.nodes}

    def island_of(self, node: str) -> Island:
        """The normal-state island a node belongs to."""
        return self._island_by_node[node]

    @cached_property
    def _file_order(self) -> dict[str, int]:
        return {element_id: index for index, element_id in enumerate(self.elements)}

    def _island(self, nodes: list[str]) -> Island:
        # Buses and sources in file order: the island takes the name of the
        # board the supervisor put first, not the alphabetically first.
        in_order = sorted({element_of(n) for n in nodes}, key=self._file_order.__getitem__)
        buses = [self.elements[n] for n in in_order if isinstance(self.elements[n], Bus)]
        sources = [self.elements[n] for n in in_order if isinstance(self.elements[n], Source)]
        voltage: float | None = None
        earthing: Earthing | None = None
        if buses:
            first = buses[0]
            assert isinstance(first, Bus)
            voltage, earthing = first.voltage, first.earthing
        elif sources:
            first_source = sources[0]
            assert isinstance(first_source, Source)
            voltage = first_source.voltage
        else:
            voltage = self._transformer_side_voltage(nodes)
        for node in nodes:
            if node.endswith(":secondary"):
                transformer = self.elements[element_of(node)]
                assert isinstance(transformer, Transformer)
                if transformer.secondary_neutral is SecondaryNeutral.grounded:
                    earthing = Earthing.solid
        # A wye secondary whose neutral is brought out (grounded or not) or a board
        # declared four-wire puts a neutral conductor into the whole system.
        neutral = any(isinstance(b, Bus) and b.four_wire for b in buses) or any(
            node.endswith(":secondary") and _secondary_neutral_out(self.elements[element_of(node)])
            for node in nodes)
        detectors = tuple(b.detector for b in buses if isinstance(b, Bus) and b.detector)
        watched = [b.id for b in buses if isinstance(b, Bus) and b.detector]
        name = (watched or [b.id for b in buses] or [s.id for s in sources] or nodes)[0]
        return Island(id=name, nodes=tuple(nodes), voltage=voltage, earthing=earthing,
                      detectors=detectors, buses=tuple(b.id for b in buses),
                      sources=tuple(s.id for s in sources),
                      transformer_fed=any(n.endswith(":secondary") for n in nodes),
                      neutral=neutral)

    def _transformer_side_voltage(self, nodes: list[str]) -> float | None:
        for node in nodes:
            side = self.graph.nodes[node]["side"]
            if side:
                transformer = self.elements[element_of(node)]
                assert isinstance(transformer, Transformer)
                return (transformer.primary_voltage if side == "primary"
                        else transformer.secondary_voltage)
        return None

    def voltage_at(self, node: str) -> float | None:
        """Nominal line-to-line voltage of the normal-state island holding ``node``, V."""
        return self.island_of(node).voltage

    def watched_by(self, detector_id: str) -> Island | None:
        for island in self.normal_islands:
            if any(d.id == detector_id for d in island.detectors):
                return island
        return None

    # --- sources and paths ----------------------------------------------------------------

    @cached_property
    def source_nodes(self) -> frozenset[str]:
        return frozenset(s.id for s in self.plant.sources)

    def normal_supply_paths(self, element_id: str) -> list[tuple[str, ...]]:
        """Paths that feed the element in the normal state, source first.

        Follows ``from`` upward through normally closed devices and the normal
        side of transfer switches, through transformers to their primary.
        """
        known = self._supply_paths.get(element_id)
        if known is None:
            known = self._supply_paths[element_id] = tuple(self._normal_supply_paths(element_id))
        return list(known)

    def _normal_supply_paths(self, element_id: str) -> list[tuple[str, ...]]:
        start = self.node_in(element_id)
        known = self._built_paths_to(start)
        if known is not None:
            return sorted(known)
        return self._walked_supply_paths(start)

    def _upward(self, node: str) -> list[str]:
        """The nodes one step up a normal supply path from ``node``."""
        element = self.elements[element_of(node)]
        if node.endswith(":secondary"):
            return [primary(element.id)]
        if isinstance(element, FedElement):
            supplies = element.from_[:1] if (
                isinstance(element, Device) and element.kind is DeviceKind.transfer_switch
            ) else element.from_
            return [self.node_out(s) for s in supplies if s in self.elements]
        return []

    def _built_paths_to(self, start: str) -> tuple[tuple[str, ...], ...] | None:
        """Every normal supply path to ``start``, each node's built once from those of the
        nodes above it and kept for the next element: a deep board costs its depth, not
        its depth squared, and every element below it reuses it. None when a ring of
        normal supplies is met or PATH_LIMIT paths are reached on the way: then only
        ``_walked_supply_paths`` gives the same answer (it skips what a ring repeats and
        keeps the first PATH_LIMIT paths it meets)."""
        memo = self._paths_to
        if start in memo:
            return memo[start]
        sources = self.source_nodes
        open_elements = self.normally_open
        ups: dict[str, list[str]] = {}
        on_way: set[str] = set()  # entered and not yet finished: a node met again is a ring
        stack: list[tuple[str, bool]] = [(start, False)]
        while stack:
            node, entered = stack.pop()
            if not entered:
                if node in memo:
                    continue
                if node in on_way:
                    return None
                if node in sources:
                    memo[node] = ((node,),)
                    continue
                above = [up for up in self._upward(node)
                         if element_of(up) not in open_elements]
                if node in above or any(up in on_way for up in above):
                    return None
                ups[node] = above
                on_way.add(node)
                stack.append((node, True))
                stack.extend((up, False) for up in above if up not in memo)
                continue
            on_way.discard(node)
            paths: list[tuple[str, ...]] = []
            for up in ups[node]:
                known = memo[up]
                if known is None:
                    paths = []
                    break
                paths += [(*path, node) for path in known]
            else:
                if len(paths) < PATH_LIMIT:
                    memo[node] = tuple(paths)
                    continue
            memo[node] = None
        return memo[start]

    def _walked_supply_paths(self, start: str) -> list[tuple[str, ...]]:
        paths: list[tuple[str, ...]] = []
        stack: list[tuple[str, tuple[str, ...]]] = [(start, (start,))]
        while stack and len(paths) < PATH_LIMIT:
            node, path = stack.pop()
            element = self.elements[element_of(node)]
            if isinstance(element, Source):
                paths.append(tuple(reversed(path)))
                continue
            upward = self._upward(node)
            for up in sorted(upward, reverse=True):
                if up in path or element_of(up) in self.normally_open:
                    continue
                stack.append((up, (*path, up)))
        return sorted(paths)

    def possible_supply_paths(self, element_id: str,
                              limit: int = PATH_LIMIT) -> list[tuple[str, ...]]:
        """Every way a source could reach the element if anything closable were closed.

        Includes normally open ties, changeovers, back-feed through transformers
        and auxiliary supplies; never from one input of an open-transition
        changeover to the other. Source first. At most ``limit`` paths.
        """
        view = self.closable_view(POWER)
        targets = set(self.source_nodes)
        found: list[tuple[str, ...]] = []

        def physical(walker: Iterator[list[str]]) -> Iterator[list[str]]:
            return (p for p in walker if not self._crosses_open_transition(p))

        for start in self.work_nodes(element_id):
            walker: Iterator[list[str]] = nx.all_simple_paths(view, start, targets)
            found.extend(tuple(reversed(p)) for p in islice(physical(walker), limit))
        for feed in self.auxiliary_feeds(element_id):
            walker = nx.all_simple_paths(view, feed, targets)
            found.extend((*reversed(p), element_id) for p in islice(physical(walker), limit))
        return sorted(set(found))[:limit]

    def work_nodes(self, element_id: str) -> list[str]:
        """The nodes a person works on for this element (both sides of a transformer)."""
        element = self.elements[element_id]
        if isinstance(element, Transformer):
            return [primary(element_id), secondary(element_id)]
        return [element_id]

    def auxiliary_feeds(self, element_id: str) -> list[str]:
        """Devices feeding the element's heater or control power from elsewhere."""
        known = self._auxiliary_feeds.get(element_id)
        if known is None:  # asked for every device of every isolation
            known = self._auxiliary_feeds[element_id] = tuple(sorted(
                neighbour for neighbour in self.graph.neighbors(element_id)
                if self.graph.edges[element_id, neighbour]["kind"] == AUXILIARY
            ) if element_id in self.graph else ())
        return list(known)

    def energy_neighbours(self, item_id: str) -> Callable[[str], list[str]]:
        """Neighbours over which energy could reach ``item_id``, all closable closed.

        An auxiliary supply enters only the item that owns it: the heater of a
        motor does not connect the motor's winding to the heater's panel.
        """
        adjacency = self.closable_adjacency
        starts = set(self.work_nodes(item_id))
        feeds = self.auxiliary_feeds(item_id)

        def neighbours(node: str) -> list[str]:
            # Adjacency keeps the sorted order the graph was built in: deterministic
            # without sorting on every step of a walk.
            found = list(adjacency[node])
            if node in starts:
                found += [f for f in feeds if f not in found]
            return found

        return neighbours


def _secondary_neutral_out(element: Element) -> bool:
    return (isinstance(element, Transformer)
            and element.secondary_neutral is not SecondaryNeutral.not_brought_out)
