"""What to open and lock so that no source can reach an item, and in which order.

The search walks outward from the item over every path that could carry
energy (normally open ties, changeovers, back-feed through transformers,
auxiliary heater and control supplies) and stops at the first lockable device
on each path: the nearest lockable device upstream of the item on that path.
An open-transition changeover is never crossed from one input to the other.
Devices whose far side reaches no source are dropped, then every remaining
device is proven necessary: closing it alone would let a source reach the
item. A path that reaches a source with no lockable device on it is reported
as a hazard, never papered over.

Order. Whatever could come on by itself once the normal supply is gone is
blocked first: the start of a generator that starts on a blackout (its start
block, then its breaker), a changeover's automatic transfer, and the routes
from UPSs, batteries, shore supplies and automatic changeovers. Then the other
ties, alternates, back-feeds and auxiliary supplies are locked; the normal
supply is opened last of all, so that nothing is switched off while something
else could still close onto the dead side. Pure: no file access.
"""

from __future__ import annotations

import weakref
from collections import deque
from dataclasses import dataclass, field, replace
from enum import StrEnum
from functools import cached_property

from workpack.model.package import SignalWord
from workpack.model.plant import (
    Bus,
    Cable,
    ControlBlock,
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

State = tuple[str, str | None]  # (node, open-transition changeover entered from an input)

# Common practice, not from a standard: a feeder this long holds enough charge
# after a test or a switch-off to be felt; discharge it to earth before touching.
LONG_CABLE_M = 100.0


@dataclass(frozen=True)
class IsolationPoint:
    """One device to open, lock and tag, or one control to set and lock (a block)."""

    order: int
    device: str  # device id, or the id of a start or transfer block
    device_kind: str  # circuit_breaker, …, start_block, transfer_block
    location: str | None
    reason: str  # which supply path it cuts, or what it stops
    voltage: float | None  # nominal V line-to-line on its supply side
    already_open: bool  # a normally open tie: lock it open, do not close it
    via: tuple[str, ...]  # the elements between the item and this device
    blocks: str | None = None  # a block: the source or changeover it stops
    how: str | None = None  # a block: what to set and how to lock it
    # Which group of the safe order it belongs to (STAGES): a merged isolation of
    # several places keeps every block and standby lock ahead of any normal supply.
    stage: int = 0


@dataclass(frozen=True)
class VerifyPoint:
    """Where absence of voltage must be proven, and against what voltage class."""

    where: str
    conductors: str
    voltage: float | None
    # three phases; three phases and a neutral; or the two conductors of a heater
    # or control supply
    wires: int = 3


class HazardKind(StrEnum):
    """What an isolation cannot do by locks alone, and so must print beside them."""

    no_lock = "no_lock"  # a path to a source with no lockable device on it
    source_outside = "source_outside"  # the item is a source fed from outside the plant
    source_itself = "source_itself"  # the item is a source: stop it and block its start
    starts_by_itself = "starts_by_itself"  # a generator that starts on a blackout
    stays_live = "stays_live"  # a battery or UPS: its own terminals are never dead
    changes_over_by_itself = "changes_over_by_itself"  # no transfer block named


@dataclass(frozen=True)
class Hazard:
    signal_word: SignalWord
    kind: HazardKind
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
        """The switching devices locked open, in order (blocks left out)."""
        return tuple(point.device for point in self.points if point.blocks is None)

    @property
    def complete(self) -> bool:
        """True when every path from every source is cut by a locked device."""
        return not any(h.signal_word is SignalWord.danger for h in self.hazards)


START_BLOCK, TRANSFER_BLOCK = "start_block", "transfer_block"
# The groups of the safe order, first to last.
STAGES = ("transfer block", "what comes on by itself", "other supplies", "normal supply")


def plan_isolation(topology: Topology, item_id: str) -> IsolationPlan:
    """Devices to lock open so that no source can reach ``item_id``, in a safe order."""
    if item_id not in topology.elements:
        raise KeyError(item_id)
    item = topology.elements[item_id]
    near = _walk_from_item(topology, item_id)
    parent, frontier, unprotected = near.parent, near.frontier, near.unprotected
    passed_unlockable = near.passed_unlockable
    region = near.region
    normal_paths = topology.normal_supply_paths(item_id)
    normal_path = {element_of(node) for path in normal_paths for node in path}
    walked = _far_sides_of(topology, item_id, near)
    auxiliary = set(topology.auxiliary_feeds(item_id))
    blocked = region | set(frontier)
    for candidate, far in walked.items():
        if far.sources and far.path is None and candidate not in normal_path and (
                candidate not in auxiliary):
            # The reason names the nearest source's path: the device's own walk, which
            # stops at the first source it meets.
            nearest = _far_side(topology, frontier[candidate], blocked - {candidate},
                                first_only=True)
            walked[candidate] = _FarSide(sources=far.sources, path=nearest.path)
    chosen = sorted(d for d, far in walked.items() if far.sources)

    paths: dict[State, tuple[str, ...]] = {}  # the sort key asks again and again

    def path_to(state: State) -> tuple[str, ...]:
        known = paths.get(state)
        if known is None:
            chain: list[str] = []
            step = parent[state]
            while step is not None:
                chain.append(element_of(step[0]))
                step = parent[step]
            known = paths[state] = tuple(dict.fromkeys(reversed(chain)))
        return known

    blocked = region | set(chosen)
    normal_sources: dict[str, set[str]] = {}
    for path in normal_paths:
        for node in path:
            normal_sources.setdefault(element_of(node), set()).add(path[0])
    beyond = {d: _FarSide(sources=tuple(sorted(normal_sources[d])), path=None)
              if d in normal_path else walked[d] for d in chosen}
    automatic = {d for d in chosen if d not in normal_path and (
        any(_source(topology, s).comes_on_by_itself for s in beyond[d].sources)
        or _leaves_by_changeover(topology, (*path_to(frontier[d]), d)))}
    # Sources whose start is blocked with the device: those right behind it (no
    # board in between). Further off, the locked device keeps them away and they
    # stay free to serve the rest of the plant.
    starters = {d: [s for s in _far_side(topology, frontier[d], blocked - {d},
                                         stop_at_boards=True).sources
                    if _needs_start_block(_source(topology, s))] for d in chosen}

    def application_order(device_id: str) -> tuple[int, int, bool, int, str]:
        if device_id in normal_path:
            group = 2
        else:
            group = 0 if device_id in automatic else 1
        return (group, 0 if starters[device_id] else 1,
                device_id not in topology.normally_open,
                len(path_to(frontier[device_id])), device_id)

    hazards: list[Hazard] = []
    entries: list[IsolationPoint] = []
    placed: set[str] = set()
    for block_id, switch in _transfer_blocks(topology, region):
        entries.append(_block_point(topology, block_id, switch))
    for device_id in sorted(chosen, key=application_order):
        stage = 1 + application_order(device_id)[0]
        device = topology.elements[device_id]
        assert isinstance(device, Device)
        start_blocks = [s for s in starters[device_id] if s not in placed]
        placed.update(start_blocks)
        point = IsolationPoint(
            order=0, device=device_id, device_kind=device.kind.value,
            location=device.location,
            reason=_reason(topology, item_id, device_id, beyond[device_id], normal_path),
            voltage=topology.voltage_at(device_id),
            already_open=device_id in topology.normally_open, via=path_to(frontier[device_id]),
            stage=stage,
        )
        blocks = [replace(_start_point(topology, s), stage=stage) for s in start_blocks]
        # A standby source's start is blocked before its breaker is touched; a source
        # that is the normal supply is switched off at its breaker first, off load.
        entries.extend([point, *blocks] if device_id in normal_path else [*blocks, point])
    if isinstance(item, Source) and _needs_start_block(item):
        # its breakers first, off load
        entries.append(replace(_start_point(topology, item_id), stage=len(STAGES) - 1))
    points = tuple(replace(point, order=order) for order, point in enumerate(entries, start=1))
    step_of = {point.device: point.order for point in points}

    hazards.extend(_no_lock_hazard(topology, item_id, element_of(node), path_to(state))
                   for node, state in sorted(unprotected.items()))
    hazards.extend(_self_starting(topology, item_id, chosen, beyond, step_of))
    hazards.extend(_unblocked_changeovers(topology, region, chosen, normal_path, step_of))
    if isinstance(item, Source):
        if item.kind in (SourceKind.shore_connection, SourceKind.utility):
            hazards.append(Hazard(SignalWord.danger, HazardKind.source_outside,
                                  f"{item_id} is itself a source fed from outside: have it "
                                  "isolated and locked at its far end (ashore or by the "
                                  "utility) before work"))
        elif (own := next((p.order for p in points if p.blocks == item_id), None)):
            hazards.append(Hazard(SignalWord.danger, HazardKind.source_itself,
                                  f"{item_id} is itself a source: it must be stopped, and its "
                                  f"start is blocked in step {own}; do not rely on its "
                                  "breakers alone"))
        else:
            hazards.append(Hazard(SignalWord.danger, HazardKind.source_itself,
                                  f"{item_id} is itself a source: block its start and lock "
                                  "it out at its own controls as well"))
    dead = region - {n for n in region if isinstance(topology.elements[element_of(n)], Source)}
    return IsolationPlan(
        item=item_id,
        points=points,
        verify=_verify_points(topology, item_id),
        stored_energy=_stored_energy(topology, dead),
        hazards=tuple(hazards),
        also_open=tuple(sorted(passed_unlockable & {element_of(n) for n in region})),
    )


@dataclass(frozen=True)
class _ItemSide:
    """The walk out from the item to the nearest lockable device on every path."""

    parent: dict[State, State | None]  # every state reached → the state it came from
    frontier: dict[str, State]  # nearest lockable devices → the state reaching them
    unprotected: dict[str, State]  # sources reached with no lockable device on the way
    passed_unlockable: set[str]  # devices passed that cannot be locked

    @cached_property
    def region(self) -> set[str]:
        """The item's side: every node reached but the devices that stop the walk."""
        return {node for node, _ in self.parent if node not in self.frontier}

    @cached_property
    def blocked(self) -> set[str]:
        """What no walk beyond a frontier device may cross."""
        return self.region | set(self.frontier)


def _walk_from_item(topology: Topology, item_id: str) -> _ItemSide:
    neighbours = topology.energy_neighbours(item_id)
    starts = topology.work_nodes(item_id)
    # Breadth-first, sorted: the nearest device on each path is found first and
    # the result never depends on set order.
    parent: dict[State, State | None] = {(node, None): None for node in sorted(starts)}
    queue = deque(parent)
    frontier: dict[str, State] = {}
    unprotected: dict[str, State] = {}
    passed_unlockable: set[str] = set()
    while queue:
        state = queue.popleft()
        for reached in topology.onward(*state, neighbours(state[0])):
            if reached in parent:
                continue
            parent[reached] = state
            node = reached[0]
            element = topology.elements[element_of(node)]
            if isinstance(element, Device) and element.id != item_id:
                if element.can_lock:
                    frontier.setdefault(node, reached)
                    continue
                passed_unlockable.add(element.id)
            if isinstance(element, Source):
                unprotected.setdefault(node, reached)
                continue
            queue.append(reached)
    return _ItemSide(parent, frontier, unprotected, passed_unlockable)


def locked_devices(topology: Topology, item_id: str) -> frozenset[str]:
    """The devices ``plan_isolation`` locks open for the item (``plan.devices``), without
    the rest of the plan: no order, reasons, blocks or hazards. For a caller that needs
    only which devices, many times (the final tests of a ground search)."""
    if item_id not in topology.elements:
        raise KeyError(item_id)
    walked = _far_sides_of(topology, item_id, _walk_from_item(topology, item_id))
    return frozenset(device for device, far in walked.items() if far.sources)


def _far_sides_of(topology: Topology, item_id: str, near: _ItemSide) -> dict[str, _FarSide]:
    """What reaches the far side of each device the walk from the item stopped at.

    A device is needed when a source reaches its far side without crossing the
    item's side or another frontier device: closing it alone would put that
    source onto the item. Dropping a device whose far side is dead never makes
    another device's far side live (it only joins dead parts together), so each
    is checked against the whole frontier, and what it keeps off stays the same.
    On the normal supply the first source found is enough; the rest of what such
    a device keeps off is the normal supply through it. The paths are left out
    (None) unless found on the way.
    """
    frontier = near.frontier
    blocked = near.blocked
    normal_paths = topology.normal_supply_paths(item_id)
    normal_path = {element_of(node) for path in normal_paths for node in path}

    def normal_supply_clear(device: str) -> _FarSide | None:
        # The normal supply itself, when its way up to the device is clear, shows
        # the device needed without a walk.
        for path in normal_paths:
            if device in path:
                upstream = path[:path.index(device)]
                if not blocked.intersection(upstream):
                    return _FarSide(sources=(path[0],), path=(device, *reversed(upstream)))
        return None

    walked: dict[str, _FarSide] = {}
    for candidate in frontier:
        if candidate in normal_path and (clear := normal_supply_clear(candidate)) is not None:
            walked[candidate] = clear
    searched = {d: state for d, state in frontier.items() if d not in walked}
    if not searched:  # every device is on a clear normal supply (most final tests)
        return walked
    for candidate, sources in _far_sides(topology, searched, blocked).items():
        if sources is None:  # the one search cannot stand in for this device's own walk
            walked[candidate] = _far_side(topology, searched[candidate],
                                          blocked - {candidate},
                                          first_only=candidate in normal_path)
        else:
            walked[candidate] = _FarSide(sources=sources, path=None)
    return walked


def _source(topology: Topology, node: str) -> Source:
    source = topology.elements[element_of(node)]
    assert isinstance(source, Source)
    return source


def _needs_start_block(source: Source) -> bool:
    return source.start_block is not None or source.starts_automatically


def _leaves_by_changeover(topology: Topology, chain: tuple[str, ...]) -> bool:
    """The route from the item leaves an automatic changeover by one of its inputs."""
    for here, there in zip(chain, chain[1:], strict=False):
        switch = topology.elements[here]
        if isinstance(switch, Device) and switch.changes_over_by_itself and (
            there in switch.from_
        ):
            return True
    return False


@dataclass(frozen=True)
class _FarSide:
    sources: tuple[str, ...]  # every source reached, sorted
    path: tuple[str, ...] | None  # nodes from the device to the nearest source


def _far_side(topology: Topology, start: State, blocked: set[str],
              stop_at_boards: bool = False, first_only: bool = False) -> _FarSide:
    """Sources that reach the device at ``start`` without crossing ``blocked``.

    With ``stop_at_boards`` the walk does not pass a bus or a normally open
    device: it finds only the sources right behind the device. With
    ``first_only`` it stops at the first source.

    The final tests of a ground search walk from the same devices again and again
    with blocked sets that differ only near each place of work, mostly where the
    walk never looks: a walk is kept with the nodes it looked at, and reused
    when the blocked nodes among those are the same (``_FarSideMemo``).
    """
    memo = _memo(topology).far_sides
    key = (start, stop_at_boards, first_only)
    known = memo.find(key, blocked)
    if known is not None:
        return known
    far, looked_at = _walk_far_side(topology, start, blocked, stop_at_boards, first_only)
    memo.keep(key, blocked, looked_at, far)
    return far


class _FarSideMemo:
    """Walks of ``_far_side`` of one topology, each reusable for other blocked sets.

    A walk reads ``blocked`` only to ask whether a neighbour of a node it steps from
    is blocked. Another blocked set gives every such answer the same, and so the same
    walk, when it holds the same nodes among those neighbours.
    """

    def __init__(self) -> None:
        self.walks: dict[tuple[State, bool, bool],
                         list[tuple[frozenset[str], frozenset[str], _FarSide]]] = {}

    def find(self, key: tuple[State, bool, bool], blocked: set[str]) -> _FarSide | None:
        for looked_at, asked, far in self.walks.get(key, ()):
            if looked_at.intersection(blocked) == asked:
                return far
        return None

    def keep(self, key: tuple[State, bool, bool], blocked: set[str],
             looked_at: frozenset[str], far: _FarSide) -> None:
        self.walks.setdefault(key, []).append((looked_at, looked_at.intersection(blocked),
                                               far))


@dataclass
class _Piece:
    """A finished walk of ``_Pieces._cut``: a whole piece, and what tells it is the same
    piece for another blocked set (the blocked nodes among those it looked at)."""

    looked_at: frozenset[str]
    asked: frozenset[str]
    members: frozenset[str]
    sources: int  # the sources next to it that are not blocked, as bits
    steps: tuple[tuple[str, str], ...]  # (member, open-transition changeover next to it)
    beside: tuple[str, ...]  # the blocked nodes next to its members, in walk order
    next_to: dict[str, int]  # source → members next to it


@dataclass
class _Memo:
    """What the isolations of one topology keep for each other: they are planned many
    times a day (every final test of a ground search), around the same devices."""

    far_sides: _FarSideMemo = field(default_factory=_FarSideMemo)
    pieces: dict[str, list[_Piece]] = field(default_factory=dict)  # by a node next to a cut


_MEMOS: weakref.WeakKeyDictionary[Topology, _Memo] = weakref.WeakKeyDictionary()


def _memo(topology: Topology) -> _Memo:
    memo = _MEMOS.get(topology)
    if memo is None:
        memo = _MEMOS[topology] = _Memo()
    return memo


def _walk_far_side(topology: Topology, start: State, blocked: set[str],
                   stop_at_boards: bool, first_only: bool,
                   ) -> tuple[_FarSide, frozenset[str]]:
    """``_far_side``'s walk, and the nodes it looked at (asked whether blocked)."""
    adjacency = topology.closable_adjacency
    switches = topology.one_input_at_a_time
    sources = topology.source_nodes
    device = start[0]
    parent: dict[State, State | None] = {start: None}
    queue = deque([start])
    found: list[str] = []
    nearest: State | None = None
    looked_at: set[str] = set()
    while queue:
        state = queue.popleft()
        node = state[0]
        if node in sources and node != device:
            found.append(node)
            nearest = nearest or state
            if first_only:
                break
            continue
        if stop_at_boards and node != device and (
            node in topology.normally_open
            or isinstance(topology.elements[element_of(node)], Bus)
        ):
            continue
        # The step of Topology.onward, written out: every chosen device walks here for
        # its nearest source; the property tests in tests/test_isolation.py hold this
        # walk, the one search (_far_sides) and the planner to an independent model.
        looked_at.update(adjacency[node])
        passed = state[1]
        blocked_inputs = switches.get(node) if passed == node else None
        for neighbour in adjacency[node]:
            if neighbour in blocked or neighbour == passed or (
                blocked_inputs and neighbour in blocked_inputs
            ):
                continue
            inputs = switches.get(neighbour)
            reached = (neighbour, neighbour if inputs and node in inputs else passed)
            if reached not in parent:
                parent[reached] = state
                if first_only and neighbour in sources:
                    # The queue is first in, first out: the first source put in is the
                    # first taken out, so stopping here finds the same one by the same
                    # path, and asks about fewer nodes (more walks are reused).
                    found.append(neighbour)
                    nearest = reached
                    queue.clear()
                    break
                queue.append(reached)
    path: tuple[str, ...] | None = None
    if nearest is not None:
        chain: list[str] = []
        step: State | None = nearest
        while step is not None:
            chain.append(step[0])
            step = parent[step]
        path = tuple(reversed(chain))
    return _FarSide(sources=tuple(sorted(set(found))), path=path), frozenset(looked_at)


def _far_sides(topology: Topology, starts: dict[str, State],
               blocked: set[str]) -> dict[str, tuple[str, ...] | None]:
    """Every source that reaches each device's far side: one search for all devices.

    The answer for a device is what ``_far_side`` from its ``start`` state, with
    ``blocked`` less the device itself, would find; the devices are in ``blocked``.
    A walk state is (node, open-transition changeover entered from an input), as in
    ``Topology.onward``. Steps between nodes that are neither sources nor such
    changeovers go both ways and keep the state's changeover, so the states of one
    piece of ``Topology.closable_parts`` (cut again by the blocked nodes) with one
    changeover form a group that reaches the same sources. The steps into and out of
    the changeovers, and out of the devices, join the groups one way; the sources of
    a device are those of every group it reaches, collected over the strongly
    connected parts of that small graph of groups, sinks first.

    The pieces come from ``_Pieces``: of each part the blocked nodes cut, every piece
    but one is walked and the one left is known as the rest of the part, so the
    search costs about what the blocked nodes cut off, not the plant.

    ``None`` for a device that a walk could enter again in another state (its own
    walk does not treat it as blocked): the caller walks that one on its own.
    """
    adjacency = topology.closable_adjacency
    switches = topology.one_input_at_a_time
    source_nodes = topology.source_nodes
    order = topology.closable_parts.source_order
    bit = topology.closable_parts.source_bit
    pieces = _Pieces(topology, blocked, bit, starts)
    label: dict[tuple[int, str | None], int] = {}  # (piece, changeover entered) → group
    changeover_groups: dict[State, int] = {}
    joined: list[list[int]] = []  # group → groups one step on
    reached: list[int] = []  # group → sources one step on, as bits
    pending: list[tuple[int, State]] = []  # (group, a state one step on from it)
    suspect: set[str] = set()

    def reenters(device: str, state: State) -> None:
        """A step into a device in another state than it starts in: only harmless when
        nothing lies beyond that state."""
        if state != starts[device] and topology.onward(
                *state, (n for n in adjacency[device] if n not in blocked)):
            suspect.add(device)

    def group() -> int:
        joined.append([])
        reached.append(0)
        return len(joined) - 1

    def onward(index: int, state: State) -> None:
        for step in topology.onward(*state, adjacency[state[0]]):
            if step[0] in blocked:
                if step[0] in starts:
                    reenters(step[0], step)
            else:
                pending.append((index, step))

    begins = {}
    for device, state in starts.items():
        begins[device] = group()
        onward(begins[device], state)
    while pending:
        from_group, state = pending.pop()
        node, passed = state
        if node in source_nodes:
            reached[from_group] |= bit[node]
            continue
        if node in switches:  # an open-transition changeover: a group of its own
            target = changeover_groups.get(state)
            if target is None:
                target = changeover_groups[state] = group()
                onward(target, state)
        else:
            piece = pieces.of(node)
            target = label.get((piece, passed))
            if target is None:
                target = label[(piece, passed)] = group()
                sources, steps, touching = pieces.contents(piece)
                reached[target] |= sources
                for member, switch in steps:
                    if switch == passed:
                        continue
                    step = (switch, switch if member in switches[switch] else passed)
                    if switch in blocked:
                        if switch in starts:
                            reenters(switch, step)
                    else:
                        pending.append((target, step))
                for device in touching:
                    reenters(device, (device, passed))
        joined[from_group].append(target)
    totals = _reachable_bits(joined, reached, list(begins.values()))
    return {device: None if device in suspect else _named(totals[index], order)
            for device, index in begins.items()}


class _Pieces:
    """The parts of ``Topology.closable_parts`` cut again by the blocked nodes.

    A part holding no blocked node is one piece, known in advance. A part holding
    some falls into pieces, each next to a blocked node: they are walked from
    there all at once, a step each in turn, joining walks that meet, until one
    walk at most is left unfinished; that one is the rest of the part, known as
    the part less what was walked and blocked. So the work is about the size of
    what the blocked nodes cut off, not of the plant.

    A piece's contents: the sources next to it (bits; blocked ones left out), the
    steps from its members to open-transition changeovers, and the start devices
    next to it (blocked, but a walk from one may step back into it).
    """

    def __init__(self, topology: Topology, blocked: set[str], bit: dict[str, int],
                 starts: dict[str, State]) -> None:
        self.parts = topology.closable_parts
        self.adjacency = topology.closable_adjacency
        self.known = _memo(topology).pieces
        self.source_nodes = topology.source_nodes
        self.blocked = blocked
        self.bit = bit
        self.starts = starts
        self.blocked_sources = 0
        for node in blocked & topology.source_nodes:
            self.blocked_sources |= bit[node]
        count = len(self.parts.sources)
        self.walked: dict[str, int] = {}  # node in a walked piece → piece (count and up)
        self.taken: list[tuple[int, _Piece]] = []  # pieces walked before, numbered here
        self.found: dict[int, tuple[int, list[tuple[str, str]], list[str]]] = {}
        self.rests: dict[int, tuple[int, list[tuple[str, str]], list[str]]] = {}
        cut: dict[int, list[str]] = {}
        for node in sorted(blocked):
            part = self.parts.part_of.get(node)
            if part is not None:
                cut.setdefault(part, []).append(node)
        self.next_piece = count
        for part, inside in cut.items():
            self._cut(part, inside)

    def of(self, node: str) -> int:
        """The piece of a node that is neither blocked, a source nor a changeover."""
        piece = self.walked.get(node)
        if piece is None:
            piece = next((number for number, taken in self.taken if node in taken.members),
                         None)
        return self.parts.part_of[node] if piece is None else piece

    def contents(self, piece: int) -> tuple[int, list[tuple[str, str]], list[str]]:
        if piece in self.found:
            return self.found[piece]
        if piece in self.rests:
            return self.rests[piece]
        return (self.parts.source_bits[piece] & ~self.blocked_sources,
                list(self.parts.changeovers[piece]), [])

    def _cut(self, part: int, inside: list[str]) -> None:
        """Walk the pieces next to the blocked nodes ``inside`` the part, a step each in
        turn, until at most one walk is unfinished."""
        part_of, adjacency, blocked = self.parts.part_of, self.adjacency, self.blocked
        owner: dict[str, int] = {}  # node → the walk that reached it first
        merged: dict[int, int] = {}  # walk → the walk it joined
        queues: dict[int, deque[str]] = {}
        members: dict[int, list[str]] = {}

        def root(walk: int) -> int:
            while walk in merged:
                walk = merged[walk]
            return walk

        known: list[_Piece] = []
        begun: list[str] = []
        for node in inside:
            for neighbour in adjacency[node]:
                if neighbour in part_of and neighbour not in blocked and (
                        neighbour not in owner):
                    if any(neighbour in piece.members for piece in known):
                        continue
                    piece = self._known(neighbour)
                    if piece is not None:  # a piece walked for another isolation
                        known.append(piece)
                        continue
                    begun.append(neighbour)
                    walk = len(queues)
                    owner[neighbour] = walk
                    queues[walk] = deque([neighbour])
                    members[walk] = [neighbour]
        active = list(queues)
        finished: list[int] = []
        while len(active) > 1:
            still: list[int] = []
            for walk in active:
                if walk in merged:
                    continue
                queue = queues[walk]
                if not queue:
                    finished.append(walk)
                    continue
                node = queue.popleft()
                for neighbour in adjacency[node]:
                    if neighbour not in part_of or neighbour in blocked:
                        continue
                    other = owner.get(neighbour)
                    if other is None:
                        owner[neighbour] = walk
                        queue.append(neighbour)
                        members[walk].append(neighbour)
                    elif (other := root(other)) != walk:
                        # two walks met: one piece; the other walk goes on as part of this
                        merged[other] = walk
                        queue.extend(queues.pop(other))
                        members[walk].extend(members.pop(other))
                still.append(walk)
            active = [walk for walk in still if walk not in merged]
        for piece in known:
            self._take(self.next_piece, piece)
            self.next_piece += 1
        walked: list[_Piece] = []
        for walk in finished:
            walked.append(self._found(self.next_piece, members[walk]))
            self._keep(walked[-1], begun)
            self.next_piece += 1
        if active:
            self._rest(part, inside, [*known, *walked])

    def _known(self, node: str) -> _Piece | None:
        """The whole piece of ``node`` if another isolation walked it with the same
        blocked nodes around it."""
        for piece in self.known.get(node, ()):
            if piece.looked_at.intersection(self.blocked) == piece.asked:
                return piece
        return None

    def _keep(self, piece: _Piece, begun: list[str]) -> None:
        """Keep a walked piece under each node a walk began at."""
        for node in begun:
            if node in piece.members:
                self.known.setdefault(node, []).append(piece)

    def _take(self, number: int, piece: _Piece) -> None:
        self.taken.append((number, piece))
        self.found[number] = (piece.sources, list(piece.steps),
                              [node for node in piece.beside if node in self.starts])

    def _found(self, piece: int, nodes: list[str]) -> _Piece:
        """Number a walked piece and note what lies next to its members."""
        adjacency, source_nodes, part_of = self.adjacency, self.source_nodes, self.parts.part_of
        blocked, bit = self.blocked, self.bit
        sources = 0
        steps: list[tuple[str, str]] = []
        beside: list[str] = []  # the blocked nodes next to it
        looked_at: set[str] = set(nodes)
        next_to: dict[str, int] = {}
        for node in nodes:
            self.walked[node] = piece
            around = adjacency[node]
            looked_at.update(around)
            for neighbour in around:
                if neighbour in source_nodes:
                    next_to[neighbour] = next_to.get(neighbour, 0) + 1
                    if neighbour not in blocked:
                        sources |= bit[neighbour]
                elif neighbour not in part_of:  # a changeover, blocked or not
                    steps.append((node, neighbour))
                elif neighbour in blocked:
                    beside.append(neighbour)
        self.found[piece] = (sources, steps, [n for n in beside if n in self.starts])
        return _Piece(frozenset(looked_at), frozenset(looked_at & blocked), frozenset(nodes),
                      sources, tuple(steps), tuple(beside), next_to)

    def _rest(self, part: int, inside: list[str], walked: list[_Piece]) -> None:
        """The unfinished walk's piece: the part less the blocked and walked nodes."""
        less: dict[str, int] = {}  # source → members next to it that are not in the rest
        blocked = set(inside)
        for node in blocked:
            for neighbour in self.adjacency[node]:
                if neighbour in self.source_nodes:
                    less[neighbour] = less.get(neighbour, 0) + 1
        for piece in walked:  # pieces do not overlap each other or the blocked nodes
            for neighbour, count in piece.next_to.items():
                less[neighbour] = less.get(neighbour, 0) + count

        gone = set(blocked)  # asked for every changeover of the part: one set, not a scan
        for piece in walked:
            gone |= piece.members

        counts = self.parts.sources[part]
        sources = self.parts.source_bits[part]
        for node, count in less.items():
            if count >= counts[node]:  # every member next to it is blocked or walked
                sources &= ~self.bit[node]
        steps = [(member, switch) for member, switch in self.parts.changeovers[part]
                 if member not in gone]
        touching = sorted({node for node in inside if node in self.starts and any(
            neighbour in self.parts.part_of and neighbour not in gone
            for neighbour in self.adjacency[node])})
        self.rests[part] = (sources & ~self.blocked_sources, steps, touching)


def _named(bits: int, order: tuple[str, ...]) -> tuple[str, ...]:
    """The sources whose bits are set, in ``order``."""
    names = []
    while bits:
        lowest = bits & -bits
        names.append(order[lowest.bit_length() - 1])
        bits ^= lowest
    return tuple(names)


def _reachable_bits(joined: list[list[int]], own: list[int], roots: list[int]) -> list[int]:
    """For each group reachable from ``roots``: the bits of every group it reaches.

    Tarjan's strongly connected components, iterative; a component is finished
    after every component it reaches, so its bits are complete when it closes.
    """
    count = len(joined)
    index = [-1] * count
    low = [0] * count
    on_stack = [False] * count
    total = [0] * count
    stack: list[int] = []
    counter = 0
    for root in roots:
        if index[root] >= 0:
            continue
        work = [(root, 0)]
        index[root] = low[root] = counter
        counter += 1
        stack.append(root)
        on_stack[root] = True
        while work:
            node, position = work[-1]
            successors = joined[node]
            if position < len(successors):
                work[-1] = (node, position + 1)
                nxt = successors[position]
                if index[nxt] < 0:
                    index[nxt] = low[nxt] = counter
                    counter += 1
                    stack.append(nxt)
                    on_stack[nxt] = True
                    work.append((nxt, 0))
                elif on_stack[nxt]:
                    low[node] = min(low[node], index[nxt])
                continue
            work.pop()
            if work:
                parent = work[-1][0]
                low[parent] = min(low[parent], low[node])
            if low[node] == index[node]:
                members = []
                while True:
                    member = stack.pop()
                    on_stack[member] = False
                    members.append(member)
                    if member == node:
                        break
                bits = 0
                for member in members:
                    bits |= own[member]
                    for nxt in joined[member]:
                        if not on_stack[nxt]:
                            bits |= total[nxt]
                for member in members:
                    total[member] = bits
    return total


def _start_point(topology: Topology, source_id: str) -> IsolationPoint:
    """The step that stops a source starting by itself: its declared block, or its
    own controls when the inventory names none."""
    source = topology.elements[source_id]
    assert isinstance(source, Source)
    block = source.start_block
    stops = (f"stops {source.label} starting by itself" if source.starts_automatically
             else f"stops {source.label} putting out power")
    if block is None:
        return IsolationPoint(
            order=0, device=f"{source_id}:start", device_kind=START_BLOCK,
            location=source.location, reason=stops,
            voltage=source.voltage, already_open=False, via=(), blocks=source_id,
            how="no start block is named in the inventory: block the start at the "
                "source's own controls as its maker's instructions say, and lock or tag "
                "that control")
    return IsolationPoint(
        order=0, device=block.id, device_kind=START_BLOCK,
        location=block.location or source.location, reason=stops, voltage=source.voltage,
        already_open=False, via=(), blocks=source_id, how=block.how)


def _block_point(topology: Topology, block: ControlBlock, switch: Device) -> IsolationPoint:
    return IsolationPoint(
        order=0, device=block.id, device_kind=TRANSFER_BLOCK,
        location=block.location or switch.location,
        reason=f"stops changeover {switch.label} transferring by itself",
        voltage=topology.voltage_at(switch.id), already_open=False, via=(), blocks=switch.id,
        how=block.how)


def _transfer_blocks(topology: Topology,
                     region: set[str]) -> list[tuple[ControlBlock, Device]]:
    """Declared transfer blocks of automatic changeovers inside the isolated part."""
    found = []
    for node in sorted(region):
        switch = topology.elements[element_of(node)]
        if isinstance(switch, Device) and switch.changes_over_by_itself and (
            switch.transfer_block is not None
        ):
            found.append((switch.transfer_block, switch))
    return found


def _reason(topology: Topology, item_id: str, device_id: str, far: _FarSide,
            normal_path: set[str]) -> str:
    """Say in words which supply this device cuts."""
    if device_id in topology.auxiliary_feeds(item_id):
        item = topology.elements[item_id]
        kinds = [a.kind.value.replace("_", " ") for a in item.auxiliaries  # type: ignore[attr-defined]
                 if a.from_ == device_id]
        return f"{', '.join(kinds)} supply into {item_id}"
    if device_id in normal_path:
        sources = sorted({element_of(p[0]) for p in topology.normal_supply_paths(item_id)
                          if device_id in {element_of(n) for n in p}})
        return "normal supply from " + ", ".join(sources)
    if far.path is None:
        return "possible supply"
    path = far.path
    transformers = sorted({element_of(n) for n in path if n.endswith(":secondary")})
    ties = [element_of(n) for n in path
            if element_of(n) in topology.normally_open and element_of(n) != device_id]
    parts = [f"from {', '.join(far.sources)}"]
    if ties:
        parts.append("e.g. via normally open " + ", ".join(dict.fromkeys(ties)))
    if transformers:
        parts.append("back-feed through transformer " + ", ".join(transformers))
    tie = "normally open tie or alternate feed: " if device_id in topology.normally_open else ""
    return tie + "possible supply " + "; ".join(parts)


def _self_starting(topology: Topology, item_id: str, chosen: list[str],
                   beyond: dict[str, _FarSide], step_of: dict[str, int]) -> list[Hazard]:
    """What the technician must know about sources that come on by themselves.

    A generator that starts by itself is worth a warning where this isolation
    darkens the board it starts for: it will start during the work.
    """
    hazards: list[Hazard] = []
    cut_by: dict[str, list[str]] = {}
    for device in chosen:
        for reached in beyond[device].sources:
            cut_by.setdefault(reached, []).append(device)
    for source_id, devices in sorted(cut_by.items()):
        source = _source(topology, source_id)
        kind = source.kind.value
        locks = ", ".join(f"{d} (step {step_of[d]})" for d in devices) + (
            " locked open keeps" if len(devices) == 1 else " locked open keep")
        if source.starts_automatically:
            own = step_of.get(f"{source_id}:start")
            if own is not None:
                hazards.append(Hazard(
                    SignalWord.warning, HazardKind.starts_by_itself,
                    f"{source_id} ({kind}) starts by itself on loss of supply and the "
                    f"inventory names no start block for it: in step {own} block its start "
                    "at its own controls as its maker's instructions say, before anything "
                    "is switched off"))
            elif source.start_block is None or source.start_block.id not in step_of:
                opened = set(chosen)
                dark = sorted(board for board in _boards_of(topology, source_id)
                              if board in topology.kept_live
                              and not topology.stays_live(board, opened))
                if dark:
                    hazards.append(Hazard(
                        SignalWord.warning, HazardKind.starts_by_itself,
                        f"{source_id} ({kind}) starts by itself when {', '.join(dark)} "
                        f"goes dead in this isolation: {locks} it off {item_id}"))
        if source.kind in (SourceKind.battery, SourceKind.ups):
            hazards.append(Hazard(
                SignalWord.warning, HazardKind.stays_live,
                f"{source_id} ({kind}) stays live with every breaker open: its own "
                f"terminals are never dead; {locks} it off {item_id}"))
    return hazards


def _boards_of(topology: Topology, source_id: str) -> set[str]:
    """The boards a source connects to: the first buses on its side of any device."""
    view = topology.closable_view(POWER)
    seen = {source_id}
    stack = [source_id]
    boards: set[str] = set()
    while stack:
        node = stack.pop()
        for neighbour in view.neighbors(node):
            if neighbour in seen or neighbour in topology.source_nodes:
                continue
            seen.add(neighbour)
            if isinstance(topology.elements[element_of(neighbour)], Bus):
                boards.add(neighbour)
            else:
                stack.append(neighbour)
    return boards


def _unblocked_changeovers(topology: Topology, region: set[str], chosen: list[str],
                           normal_path: set[str], step_of: dict[str, int]) -> list[Hazard]:
    """Automatic changeovers in the isolated part with no transfer block named."""
    hazards: list[Hazard] = []
    for node in sorted(region):
        switch = topology.elements[element_of(node)]
        if not (isinstance(switch, Device) and switch.changes_over_by_itself) or (
            switch.transfer_block is not None
        ):
            continue
        first_normal = min((step_of[d] for d in chosen if d in normal_path), default=None)
        before = f" before step {first_normal}" if first_normal else ""
        hazards.append(Hazard(
            SignalWord.warning, HazardKind.changes_over_by_itself,
            f"{switch.id} changes over by itself and the inventory names no transfer block "
            f"for it: set it to manual (no automatic transfer) at its own controls as its "
            f"maker's instructions say{before}"))
    return hazards


PHASES = "each phase-to-phase and each phase-to-earth"
PHASES_AND_NEUTRAL = ("each phase-to-phase, each phase-to-neutral, each phase-to-earth and "
                      "neutral-to-earth")


def _verify_points(topology: Topology, item_id: str) -> tuple[VerifyPoint, ...]:
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
        neutral = _has_neutral(topology, node)
        points.append(VerifyPoint(
            where=where, conductors=PHASES_AND_NEUTRAL if neutral else PHASES,
            voltage=topology.voltage_at(node), wires=4 if neutral else 3,
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


def _has_neutral(topology: Topology, node: str) -> bool:
    """A neutral conductor arrives at this node.

    Its system carries a neutral (a wye secondary with the neutral brought out, or
    a four-wire board), or it is the primary of a transformer with a primary
    neutral terminal (YN, ZN). A three-phase motor takes no neutral (common
    practice); anything else on a system with a neutral is treated as having one,
    the cautious side: a neutral left untested can be live from another circuit.
    """
    element = topology.elements[element_of(node)]
    if isinstance(element, Load) and element.kind is LoadKind.motor:
        return False
    if isinstance(element, Transformer) and node.endswith(":primary") and (
        element.vector_group.startswith(("YN", "ZN"))
    ):
        return True
    return topology.island_of(node).neutral


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
    return Hazard(SignalWord.danger, HazardKind.no_lock,
                  f"no lockable device between {item_id} and source {source} "
                  f"({element.kind.value}) on the path {route}: this path cannot be locked "
                  "out here; isolate at the source or do not start the work")
