"""Where to look for a ground: the plant turned into a search, and the search into steps.

The galvanic system whose detector shows the ground is read as a tree of
feeders that can be opened (breakers and switches, in the normal state), each
with the chance that the ground lies downstream of it and the cost of opening
it for a minute. The chance comes from what the feeder supplies (wet spaces,
deck machinery, heaters, long or old cables, recent work, past grounds:
factors from rules/search-weights.yaml, each with its basis); the cost from
what goes dead (by vitality), the transfer of a vital load to its alternate
supply first, or the permission a vital load without one needs. The order
comes from ``search_core``; this module builds its input and gathers its output,
and ``search_wording`` words it. A feeder that would drop two vital loads with no
alternate at once is never opened whole: its own circuits are tried instead. Pure:
no file access.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, replace
from functools import cached_property
from typing import NamedTuple

from workpack.diagnose import insulation_tests
from workpack.electrical import dc_test_voltage, line_to_neutral, minimum_insulation_resistance
from workpack.electrical.standards import CodeSet
from workpack.isolation import STAGES, IsolationPlan, IsolationPoint, plan_isolation
from workpack.model.findings import Findings
from workpack.model.plant import (
    Bus,
    Cable,
    Device,
    DeviceKind,
    Element,
    Load,
    Transformer,
    Vitality,
)
from workpack.model.weights import SearchWeights
from workpack.search_core import Branch, Candidate, LevelPlan, SearchPlan, plan_search
from workpack.search_wording import (
    already_open_note,
    cleared_indication,
    not_opened_note,
    weights_used,
)
from workpack.topology import Island, Topology, element_of

# Devices a search may open for a minute; a fuse is drawn (and put back) the same way.
OPENABLE = frozenset({DeviceKind.circuit_breaker, DeviceKind.switch, DeviceKind.disconnector,
                      DeviceKind.fuse})


@dataclass(frozen=True)
class CandidateFacts:
    """Why a feeder is where it is in the order."""

    id: str
    label: str
    location: str | None
    weight: float  # sum of its elements' likelihood weights
    prior: float  # chance the ground is downstream of it, given a ground on the system
    reasons: tuple[str, ...]  # factors that raised its weight, with their basis
    cost_minutes: float  # opening it alone, without the observation
    dead_loads: tuple[str, ...]
    transfer_loads: tuple[str, ...]  # vital loads moved to their alternate supply first
    permission_loads: tuple[str, ...]  # vital loads with no alternate: permission needed
    moves_ground_with_it: tuple[str, ...]  # transferred loads whose alternate is this system


@dataclass(frozen=True)
class SearchStep:
    """One step of a board's search: open, watch the detector, go where the outcome
    leads (``search_wording.step_words`` words it)."""

    level: str
    number: int  # from 1 on each board
    open_devices: tuple[str, ...]
    where: tuple[str, ...]  # location of each opened device
    transfer_first: tuple[str, ...]
    permission_for: tuple[str, ...]
    dead_loads: tuple[str, ...]
    moves_ground_with_it: tuple[str, ...]  # transferred loads whose alternate is this system
    minutes: float
    probability: float  # of reaching this step, given its level is searched
    on_clear: Branch  # where each outcome leads
    on_stay: Branch


@dataclass(frozen=True)
class SectionTest:
    """Insulation test of one section of the circuit where the ground was narrowed to."""

    element: str
    label: str
    code_set: str  # the tables that set its test voltage and minimum
    test_voltage_v: tuple[float, float]  # DC, a range where the table gives one
    minimum_ohm: float
    reference_c: float | None
    basis: str
    # A heater or control circuit inside another item's enclosure: its kind; the test is
    # made in ``element``'s terminal box, where every supply of ``element`` arrives.
    circuit: str | None = None


@dataclass(frozen=True)
class FinalTests:
    """Where a search ends: isolate the circuit, then test its sections.

    ``places``: where the tests are made; ``final_test_isolation`` locks every supply
    that reaches any of them, the main supply of a motor whose heater circuit is tested
    included (computed on demand: a search of hundreds of feeders ends at one)."""

    feeder: str
    sections: tuple[SectionTest, ...]
    places: tuple[str, ...]


@dataclass(frozen=True)
class FaultSearch:
    island: str
    board: str
    detectors: tuple[str, ...]
    system_voltage_v: float
    healthy_phase_to_earth_v: float  # V_LL/√3: what a cleared indication reads
    cleared: str  # what the detectors show once the ground is no longer connected
    as_found_v: Mapping[str, float] | None  # what they show while it still is
    steps: tuple[SearchStep, ...]
    candidates: tuple[CandidateFacts, ...]
    levels: tuple[LevelPlan, ...]
    expected_minutes: float
    lower_bound_minutes: float
    gap: float
    final_tests: tuple[FinalTests, ...]
    notes: tuple[str, ...]
    weights_used: tuple[str, ...]  # every factor and cost with its basis, for the plan

    @cached_property
    def searched_boards(self) -> frozenset[str]:
        """The boards with steps of their own: asked once for every step worded."""
        return frozenset(step.level for step in self.steps)


def plan_fault_search(
    topology: Topology,
    place: str,
    weights: SearchWeights,
    standards: Mapping[str, CodeSet],
    today: dt.date,
    past_grounds: Mapping[str, int] | None = None,
    as_found_v: Mapping[str, float] | None = None,
    one_at_a_time: bool = False,
    exclude: frozenset[str] = frozenset(),
) -> FaultSearch:
    """The search for a ground shown by the detector (or on the system) named ``place``.

    ``exclude``: devices already open (tripped, or locked by another job): never opened
    and never closed by the search."""
    island, board = _board(topology, place)
    builder = _TreeBuilder(topology, island, weights, today, past_grounds or {}, exclude)
    root = builder.root(board)
    plan: SearchPlan = plan_search(root, max_group_size=1 if one_at_a_time else None)
    voltage = island.voltage or 0.0
    healthy = line_to_neutral(voltage)
    facts = tuple(builder.facts[c] for c in sorted(builder.facts))
    steps = tuple(step for level in plan.levels for step in _steps(level, builder))
    final = tuple(_final_tests(topology, builder, leaf, standards)
                  for leaf in sorted(builder.leaves))
    return FaultSearch(
        island=island.id, board=board, detectors=tuple(d.id for d in island.detectors),
        system_voltage_v=voltage, healthy_phase_to_earth_v=healthy,
        cleared=cleared_indication(island, healthy), as_found_v=as_found_v,
        steps=steps, candidates=facts, levels=plan.levels,
        expected_minutes=plan.expected_cost, lower_bound_minutes=plan.lower_bound,
        gap=plan.gap, final_tests=final, notes=tuple(builder.notes),
        weights_used=weights_used(weights),
    )


def search_place(topology: Topology, place: str) -> str | None:
    """``place`` if it names a detector, a bus or a system of the plant, else None."""
    try:
        _board(topology, place)
    except KeyError:
        return None
    return place


def system_of(topology: Topology, place: str) -> str:
    """Id of the normal-state system holding a detector, bus or element."""
    return _board(topology, place).island.id


def search_refused(topology: Topology, place: str) -> str | None:
    """Why no ground search can start at ``place`` (a detector, bus or item), or None.

    On a solidly grounded system a ground trips its protection: there is no standing
    indication to search for."""
    island = _board(topology, place).island
    if island.earthing is not None and island.earthing.value == "solid":
        return (f"the {island.id} system is solidly grounded: a ground there trips its "
                "protection; there is no standing indication to search for")
    return None


def as_found_voltages(topology: Topology, findings: Findings,
                      place: str) -> dict[str, float] | None:
    """The day's latest phase-to-earth readings (V by phase) on the system of ``place``,
    or None when the findings hold none there."""
    system = system_of(topology, place)
    latest = None
    for finding in findings.findings:
        if finding.kind == "phase_voltages" and system_of(topology, finding.where) == system:
            latest = dict(finding.volts)
    return latest


class _Start(NamedTuple):
    """Where a search starts: the system, and the board within it."""

    island: Island
    board: str


def _board(topology: Topology, place: str) -> _Start:
    """The system and the board where the search starts, from a detector, bus or item."""
    for island in topology.normal_islands:
        for bus_id in island.buses:
            bus = topology.elements[bus_id]
            if isinstance(bus, Bus) and bus.detector and bus.detector.id == place:
                return _Start(island, bus_id)
    if place in topology.elements:
        island = topology.island_of(topology.node_in(place))
        element = topology.elements[place]
        return _Start(island, place if isinstance(element, Bus)
                      else (island.buses or (place,))[0])
    for island in topology.normal_islands:
        if island.id == place:
            return _Start(island, island.buses[0])
    raise KeyError(place)


class Likelihood(NamedTuple):
    """An element's likelihood weight and the factors that shaped it, each with its
    basis."""

    weight: float
    reasons: tuple[str, ...]


class VitalLoads(NamedTuple):
    """What opening a device takes out: every load, and the vital ones split by whether
    they can be moved to an alternate supply first."""

    dead: list[Load]
    with_alternate: list[Load]
    without: list[Load]


class _Below(NamedTuple):
    """What opening one device takes out, walked once per search: every element below
    it (``Topology.below``'s order), those of this system, and the loads by id."""

    elements: list[str]
    members: list[str]
    loads: list[Load]
    elements_set: frozenset[str]


class _Auxiliary(NamedTuple):
    """A heater or control circuit inside ``load``: its place in the load's list."""

    load: Load
    position: int


class _TreeBuilder:
    """Builds the candidate tree of one system, remembering why each number is what it is."""

    def __init__(self, topology: Topology, island: Island, weights: SearchWeights,
                 today: dt.date, past_grounds: Mapping[str, int],
                 exclude: frozenset[str] = frozenset()):
        self.topology = topology
        self.exclude = exclude
        self.island = island
        self.members = {n.split(":")[0] for n in island.nodes}
        self.weights = weights
        self.today = today
        self.past_grounds = past_grounds
        self.facts: dict[str, CandidateFacts] = {}
        self.leaves: set[str] = set()
        self.notes: list[str] = []
        self.children_of: dict[str, list[str]] = {}
        self._weight_cache: dict[str, Likelihood] = {}
        # each device's subtree and vital split, once: a device is asked about as a
        # feeder of its board, as a candidate and as a search's end
        self._below: dict[str, _Below] = {}
        self._vital: dict[str, VitalLoads] = {}
        # feeding device → (load, index of its auxiliary) for heaters and control supplies
        self.auxiliaries_fed: dict[str, list[_Auxiliary]] = {}
        for load in topology.plant.loads:
            for index, auxiliary in enumerate(load.auxiliaries):
                self.auxiliaries_fed.setdefault(auxiliary.from_, []).append(
                    _Auxiliary(load, index))
        # summed in a fixed order: a set's order changes from run to run, and so would
        # the last bits of every prior
        self.total = sum(self.weight(e).weight for e in sorted(self.members))

    # --- likelihood ---------------------------------------------------------------------

    def weight(self, element_id: str) -> Likelihood:
        """Likelihood weight of one element and the factors that shaped it."""
        if element_id in self._weight_cache:
            return self._weight_cache[element_id]
        element = self.topology.elements[element_id]
        result = Likelihood(0.0, ())
        if isinstance(element, Load | Cable | Bus | Transformer):
            result = self._element_weight(element)
        self._weight_cache[element_id] = result
        return result

    def _element_weight(self, element: Element) -> Likelihood:
        likelihood = self.weights.likelihood
        value = 1.0
        reasons: list[str] = []
        for environment in element.environment:
            factor = likelihood.environment.get(environment)
            if factor and factor.factor != 1.0:
                value *= factor.factor
                reasons.append(f"{element.id} {environment.value} ×{factor.factor:g}")
        if isinstance(element, Load):
            kind_factor = likelihood.load_kind.get(element.kind)
            if kind_factor and kind_factor.factor != 1.0:
                value *= kind_factor.factor
                reasons.append(f"{element.id} {element.kind.value} ×{kind_factor.factor:g}")
            if element.recent_work and (
                self.today - element.recent_work
            ).days <= likelihood.recent_work.within_days.days:
                value *= likelihood.recent_work.within_days.factor
                reasons.append(f"{element.id} worked on {element.recent_work} "
                               f"×{likelihood.recent_work.within_days.factor:g}")
        if isinstance(element, Cable):
            extra = likelihood.cable.per_100_m.factor * element.length / 100.0
            value *= 1.0 + extra
            if element.length >= 100:
                reasons.append(f"{element.id} {element.length:.0f} m ×{1 + extra:.2g}")
            old = likelihood.cable.older_than_years
            if element.installed and self.today.year - element.installed > old.years:
                value *= old.factor
                reasons.append(f"{element.id} installed {element.installed} ×{old.factor:g}")
        grounds = self.past_grounds.get(element.id, 0)
        if grounds:
            history = likelihood.history.per_past_ground.factor ** grounds
            value *= history
            reasons.append(f"{element.id} grounded {grounds}× before ×{history:g}")
        return Likelihood(value, tuple(reasons))

    # --- tree -------------------------------------------------------------------------------

    def below(self, element_id: str) -> _Below:
        """Everything below ``element_id`` in the normal state, walked once per search."""
        known = self._below.get(element_id)
        if known is None:
            elements = self.topology.below(element_id)
            loads = [e for e in map(self.topology.elements.__getitem__, elements)
                     if isinstance(e, Load)]
            known = self._below[element_id] = _Below(
                elements=elements, members=[e for e in elements if e in self.members],
                loads=sorted(loads, key=lambda load: load.id),
                elements_set=frozenset(elements))
        return known

    def downstream(self, element_id: str) -> list[str]:
        """Elements of this system below ``element_id`` in the normal state."""
        return list(self.below(element_id).members)

    def first_feeders(self, element_id: str) -> list[str]:
        """The nearest openable devices below ``element_id`` (one level of the search)."""
        result: list[str] = []
        for child in sorted(self.topology.normal_children.get(element_id, ())):
            if child not in self.members or child in self.topology.normally_open:
                continue  # another system, or a tie that carries nothing now
            if child in self.exclude:
                self.notes.append(already_open_note(child))
                continue
            element = self.topology.elements[child]
            if isinstance(element, Device) and element.kind in OPENABLE:
                if self._would_drop_two_vital(child):
                    inside = self.first_feeders(child)
                    self.notes.append(not_opened_note(child, bool(inside)))
                    result.extend(inside)
                else:
                    result.append(child)
            else:
                result.extend(self.first_feeders(child))
        return result

    def _would_drop_two_vital(self, device_id: str) -> bool:
        return len(self._vital_split(device_id).without) >= 2

    def _vital_split(self, device_id: str) -> VitalLoads:
        """Dead loads, vital ones with an alternate, vital ones without (once per device:
        the lists are shared, never changed)."""
        known = self._vital.get(device_id)
        if known is not None:
            return known
        subtree = self.below(device_id)
        dead = subtree.loads
        with_alternate, without = [], []
        for load in dead:
            if load.vitality is not Vitality.vital:
                continue
            if self._alternate_outside(load, subtree.elements_set):
                with_alternate.append(load)
            else:
                without.append(load)
        known = self._vital[device_id] = VitalLoads(dead, with_alternate, without)
        return known

    def _alternate_outside(self, load: Load, below: frozenset[str]) -> str | None:
        """A transfer switch feeding ``load`` whose alternate is not under the opened device."""
        for path in self.topology.normal_supply_paths(load.id):
            for node in path:
                element = self.topology.elements.get(node)
                if isinstance(element, Device) and element.kind is DeviceKind.transfer_switch \
                        and node in below:
                    if any(alt not in below for alt in element.from_[1:]):
                        return node
        return None

    def candidate(self, device_id: str) -> Candidate:
        cost = self.weights.cost
        dead, with_alternate, without = self._vital_split(device_id)
        moved = {load.id for load in with_alternate}
        interrupt = sum(getattr(cost.interrupt, load.vitality.value).minutes
                        for load in dead if load.id not in moved)
        below = self.downstream(device_id)
        weight = self.weight(device_id).weight + sum(self.weight(e).weight for e in below)
        reasons = tuple(r for e in [device_id, *below] for r in self.weight(e).reasons)
        children = self.first_feeders(device_id)
        self.children_of[device_id] = children
        if not children:
            self.leaves.add(device_id)
        moves = tuple(load.id for load in with_alternate if self._alternate_in_system(load))
        device = self.topology.elements[device_id]
        self.facts[device_id] = CandidateFacts(
            id=device_id, label=device.label, location=device.location, weight=weight,
            prior=weight / self.total if self.total else 0.0, reasons=reasons,
            cost_minutes=interrupt + (cost.transfer.minutes * len(with_alternate)
                                      if with_alternate and not without else 0.0)
            + (cost.permission.minutes if without else 0.0),
            dead_loads=tuple(load.id for load in dead),
            transfer_loads=tuple(load.id for load in with_alternate),
            permission_loads=tuple(load.id for load in without), moves_ground_with_it=moves)
        vital = bool(with_alternate or without)
        return Candidate(
            id=device_id, prior=weight / self.total if self.total else 0.0,
            interrupt_cost=interrupt, vital=vital, has_alternate=vital and not without,
            transfer_cost=cost.transfer.minutes * len(with_alternate),
            permission_cost=cost.permission.minutes, observe_cost=cost.observe.minutes,
            children=tuple(self.candidate(child) for child in children))

    def _alternate_in_system(self, load: Load) -> bool:
        for path in self.topology.normal_supply_paths(load.id):
            for node in path:
                element = self.topology.elements.get(node)
                if isinstance(element, Device) and element.kind is DeviceKind.transfer_switch:
                    return any(alt in self.members for alt in element.from_[1:])
        return False

    def root(self, board: str) -> Candidate:
        children = self.first_feeders(board)
        self.children_of[board] = children
        return Candidate(id=board, prior=1.0, observe_cost=self.weights.cost.observe.minutes,
                         children=tuple(self.candidate(child) for child in children))


def _steps(level: LevelPlan, builder: _TreeBuilder) -> list[SearchStep]:
    steps = []
    for step in level.steps:
        facts = [builder.facts[d] for d in step.open_ids]
        steps.append(SearchStep(
            level=level.board_id, number=step.number, open_devices=step.open_ids,
            where=tuple(f.location or "" for f in facts),
            transfer_first=tuple(load for f in facts for load in f.transfer_loads)
            if step.transfer_id else (),
            permission_for=tuple(load for f in facts for load in f.permission_loads)
            if step.permission_id else (),
            dead_loads=tuple(sorted({load for f in facts for load in f.dead_loads}
                                    - {load for f in facts for load in f.transfer_loads})),
            moves_ground_with_it=tuple(load for f in facts for load in f.moves_ground_with_it)
            if step.transfer_id else (),
            minutes=step.cost, probability=step.probability,
            on_clear=step.if_clears, on_stay=step.if_not_clear,
        ))
    return steps


def _final_tests(topology: Topology, builder: _TreeBuilder, leaf: str,
                 standards: Mapping[str, CodeSet]) -> FinalTests:
    sections = []
    below = builder.downstream(leaf)
    for element_id in sorted(below):
        element = topology.elements[element_id]
        if not isinstance(element, Cable | Load | Bus | Transformer):
            continue
        # The winding on this system's side: a transformer below a feeder is its primary.
        test = insulation_tests(topology, element, standards)[0]
        sections.append(SectionTest(
            element=element_id, label=element.label + (f", {test.part}" if test.part else ""),
            code_set=test.code_set.name,
            test_voltage_v=(test.test_voltage.min_v, test.test_voltage.max_v),
            minimum_ohm=test.minimum.minimum_ohm, reference_c=test.minimum.reference_c,
            basis="; ".join(dict.fromkeys(  # the same table often gives both: once
                part for part in (str(test.test_voltage.citation), test.basis,
                                  test.correction)
                if part and not (part != test.basis and test.basis.startswith(part))))))
    # Heater and control circuits this feeder supplies inside other items' enclosures.
    installations = standards[topology.plant.plant.code_set.installations]
    inside = sorted((load.id, n) for feed in (leaf, *below)
                    for load, n in builder.auxiliaries_fed.get(feed, ()))
    for load_id, index in inside:
        load = topology.elements[load_id]
        assert isinstance(load, Load)
        auxiliary = load.auxiliaries[index]
        circuit_v = auxiliary.voltage or topology.voltage_at(auxiliary.from_)
        if circuit_v is None:
            continue
        kind = auxiliary.kind.value.replace("_", " ")
        test_v = dc_test_voltage(installations, circuit_v)
        minimum = minimum_insulation_resistance(installations, circuit_v)
        sections.append(SectionTest(
            element=load.id, label=f"{kind} circuit inside {load.label}",
            code_set=installations.name, test_voltage_v=(test_v.min_v, test_v.max_v),
            minimum_ohm=minimum.minimum_ohm, reference_c=minimum.reference_c,
            basis="; ".join(dict.fromkeys((str(test_v.citation), str(minimum.citation)))),
            circuit=auxiliary.kind.value))
    places = tuple(sorted({s.element for s in sections})) or (leaf,)
    return FinalTests(feeder=leaf, sections=tuple(sections), places=places)


def final_test_isolation(topology: Topology, final: FinalTests,
                         plan: Callable[[Topology, str], IsolationPlan] = plan_isolation,
                         ) -> IsolationPlan:
    """What to lock for ``final``'s tests: every supply of every place they are made in.
    ``plan`` is ``isolation.plan_isolation`` or a caching stand-in for it."""
    return merged_isolation(topology, [plan(topology, place) for place in final.places])


def merged_isolation(topology: Topology, plans: Sequence[IsolationPlan]) -> IsolationPlan:
    """One isolation for several places of work: every device any of them locks, once;
    every proving-dead point, hazard and stored-energy note once.

    The safe order holds for every place: all blocks and locks of what comes on by itself
    go before any step that switches off a normal supply of any of the places (a device
    one place locks as a standby route can be another's normal supply); within a stage,
    places in turn, each in its own order."""
    if len(plans) == 1:
        return plans[0]
    normal = {element_of(node) for plan in plans
              for path in topology.normal_supply_paths(plan.item) for node in path}
    last = len(STAGES) - 1
    rank: dict[str, tuple[int, int, int]] = {}
    chosen: dict[str, IsolationPoint] = {}
    for index, plan in enumerate(plans):
        for point in plan.points:
            stage = point.stage
            if (point.blocks is None and point.device in normal
                    and point.device not in topology.normally_open):
                stage = last
            key = (stage, index, point.order)
            if point.device not in rank or key < rank[point.device]:
                rank[point.device] = key
                chosen[point.device] = point
    ordered = sorted(chosen, key=lambda device: (*rank[device], device))
    points = tuple(replace(chosen[device], order=n) for n, device in enumerate(ordered, 1))
    return IsolationPlan(
        item=", ".join(plan.item for plan in plans),
        points=points,
        verify=tuple(dict.fromkeys(v for plan in plans for v in plan.verify)),
        stored_energy=tuple(dict.fromkeys(e for plan in plans for e in plan.stored_energy)),
        hazards=tuple(dict.fromkeys(h for plan in plans for h in plan.hazards)),
        also_open=tuple(sorted({d for plan in plans for d in plan.also_open})),
    )
