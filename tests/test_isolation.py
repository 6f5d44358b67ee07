"""Isolation plans: every path from every source is cut, nothing is locked for nothing, and
whatever could come on by itself is blocked before the normal supply is removed."""

from __future__ import annotations

from collections.abc import Iterable, Sequence

import networkx as nx
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from plantgen import random_plant

from workpack.checks import run_checks
from workpack.isolation import HazardKind, IsolationPlan, plan_isolation
from workpack.loading import load_plant_text
from workpack.model.package import SignalWord
from workpack.model.plant import Bus, Cable, Device, DeviceKind, Load, Source, Transformer
from workpack.topology import POWER, Topology, element_of

# --- an independent model of where energy can go ----------------------------------------------
#
# Built here from the plant data with networkx, not with the planner's walk: every path
# that could conduct with everything closable closed, as simple paths, minus those that
# pass an open-transition changeover from one input to the other.


def energy_graph(topology: Topology, item_id: str) -> nx.Graph:
    """Everything that could conduct, built here independently of the planner's walk."""
    graph = nx.Graph(topology.closable_view(POWER))
    for feed in topology.auxiliary_feeds(item_id):
        graph.add_edge(item_id, feed)
    return graph


def changeovers(topology: Topology) -> list[Device]:
    return [d for d in topology.plant.devices if d.kind is DeviceKind.transfer_switch]


def never_joined(topology: Topology) -> dict[str, set[str]]:
    """Open-transition changeover → its input nodes (the plant says 'transition: open')."""
    return {d.id: {topology.node_out(s) for s in d.from_} for d in changeovers(topology)
            if d.transition is not None and d.transition.value == "open"}


def physical(path: Sequence[str], inputs: dict[str, set[str]]) -> bool:
    """A simple path that never goes from one input of an open-transition changeover
    to another."""
    return not any(middle in inputs and before in inputs[middle] and after in inputs[middle]
                   for before, middle, after in zip(path, path[1:], path[2:], strict=False))


def physical_paths(graph: nx.Graph, source: str, targets: Iterable[str],
                   inputs: dict[str, set[str]]) -> list[list[str]]:
    found = []
    for target in targets:
        if source in graph and target in graph and nx.has_path(graph, source, target):
            found += [p for p in nx.all_simple_paths(graph, source, target)
                      if physical(p, inputs)]
    return found


def sources_reaching(topology: Topology, item_id: str, opened: set[str]) -> set[str]:
    graph = energy_graph(topology, item_id)
    graph.remove_nodes_from(sorted(opened))
    inputs = never_joined(topology)
    return {source for source in topology.source_nodes - {item_id}
            if physical_paths(graph, source, topology.work_nodes(item_id), inputs)}


def unprotected(plan: IsolationPlan) -> set[str]:
    return {h.text.split("source ")[1].split(" ")[0] for h in plan.hazards
            if h.text.startswith("no lockable device")}


def random_case(seed: int, pick: int) -> tuple[Topology, str]:
    plant = random_plant(seed, size=45)
    findings, topology = run_checks(plant)
    assert not findings, findings
    assert topology is not None
    items = sorted(topology.elements)
    return topology, items[pick % len(items)]


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(seed=st.integers(0, 2**32 - 1), pick=st.integers(0, 10**6))
def test_planned_devices_cut_every_source_and_none_is_redundant(seed: int, pick: int) -> None:
    """Property: after opening the plan no source reaches the item; each device is needed."""
    topology, item_id = random_case(seed, pick)
    plan = plan_isolation(topology, item_id)
    opened = set(plan.devices)
    assert item_id not in opened
    # Sources still reaching are exactly those the plan declares it cannot lock out.
    assert sources_reaching(topology, item_id, opened) == unprotected(plan)
    inputs = never_joined(topology)
    for device in plan.devices:
        graph = energy_graph(topology, item_id)
        graph.remove_nodes_from(sorted(opened - {device}))
        # Closing this one device alone must put a source onto the item through it.
        through_device = any(
            device in path
            for source in sorted(topology.source_nodes - {item_id})
            for path in physical_paths(graph, source, topology.work_nodes(item_id), inputs))
        assert through_device, f"{device} is redundant for {item_id}"


# --- whatever comes on by itself is blocked first ----------------------------------------------


def comes_on_by_itself(source: Source) -> bool:
    """A generator that starts by itself, or a supply live without anyone here closing
    anything (UPS, battery, shore)."""
    return source.starts_automatically or source.kind.value in ("ups", "battery",
                                                                 "shore_connection")


def automatic_route(topology: Topology, path: Sequence[str]) -> bool:
    """Energy on this path (source first) could arrive by itself: its source comes on by
    itself, or it crosses the alternate input of a changeover that transfers by itself."""
    source = topology.elements[path[0]]
    if isinstance(source, Source) and comes_on_by_itself(source):
        return True
    automatic = {d.id: {topology.node_out(s) for s in d.from_[1:]} for d in changeovers(topology)
                 if d.transfers_automatically is not False}
    return any((b in automatic and a in automatic[b]) or (a in automatic and b in automatic[a])
               for a, b in zip(path, path[1:], strict=False))


def right_behind(topology: Topology, plan: IsolationPlan, device: str) -> set[str]:
    """Sources reached from ``device`` away from the item without passing a board, a
    normally open device or another planned device."""
    view = nx.Graph(topology.closable_view(POWER))
    stop = {n for n in view if isinstance(topology.elements[element_of(n)], Bus)}
    stop |= set(topology.normally_open) | set(plan.devices) | set(topology.work_nodes(plan.item))
    keep = (set(view) - stop) | {device}
    component = nx.node_connected_component(view.subgraph(keep), device)
    # a source is reached (not passed): sources next to the component count as well
    reached = component | {n for c in component for n in view.neighbors(c)}
    return {s for s in reached & topology.source_nodes if s != plan.item}


def removal_steps(topology: Topology, plan: IsolationPlan) -> list[int]:
    """Indices of the steps that switch off a normal supply of the item."""
    normal = {element_of(n) for p in topology.normal_supply_paths(plan.item) for n in p}
    return [i for i, point in enumerate(plan.points)
            if point.blocks is None and point.device in normal
            and point.device not in topology.normally_open]


def check_blocked_first(topology: Topology, plan: IsolationPlan) -> None:
    """The property: before the first step that switches off a normal supply of the item,
    no source can reach the item by itself (other than through the normal supply), and
    every start block stands before the steps it must precede."""
    points = plan.points
    removals = removal_steps(topology, plan)
    start_blocks = {p.blocks: i for i, p in enumerate(points) if p.device_kind == "start_block"}
    normal_points = {points[i].device for i in removals}
    for index, point in enumerate(points):
        if point.blocks is not None:
            continue
        for source_id in right_behind(topology, plan, point.device):
            source = topology.elements[source_id]
            assert isinstance(source, Source)
            if not (source.starts_automatically or source.start_block):
                continue
            assert source_id in start_blocks, f"{source_id}'s start is not blocked"
            if point.device in normal_points:
                continue  # the source is the normal supply: its breaker first, off load
            assert start_blocks[source_id] < index, f"{source_id} blocked after {point.device}"
            if removals:
                assert start_blocks[source_id] < removals[0]
    for source_id in start_blocks:
        source = topology.elements.get(source_id)
        if isinstance(source, Source) and source.start_block is None and source_id != plan.item:
            # no block named: the plan says so, and still makes it a step
            assert any(f"{source_id} (" in h.text and "no start block" in h.text
                       for h in plan.hazards)
    if not removals:
        return
    first = removals[0]
    locked_before = {p.device for p in points[:first] if p.blocks is None}
    graph = energy_graph(topology, plan.item)
    graph.remove_nodes_from(sorted(locked_before | normal_points))
    inputs = never_joined(topology)
    for source in sorted(topology.source_nodes - {plan.item}):
        for path in physical_paths(graph, source, topology.work_nodes(plan.item), inputs):
            assert not automatic_route(topology, path), (
                f"{' → '.join(path)} could come on by itself when step {first + 1} "
                f"({points[first].device}) switches off the normal supply")


@settings(max_examples=80, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(seed=st.integers(0, 2**32 - 1), pick=st.integers(0, 10**6))
def test_whatever_comes_on_by_itself_is_blocked_before_the_normal_supply_goes(
    seed: int, pick: int,
) -> None:
    """Property: every source that can start or transfer by itself is blocked before any
    step removes the supply it would replace."""
    topology, item_id = random_case(seed, pick)
    check_blocked_first(topology, plan_isolation(topology, item_id))


@pytest.mark.parametrize("seed", range(40))
def test_every_item_of_some_plants_blocks_first(seed: int) -> None:
    """The same property over every item of a few whole plants (not only sampled ones)."""
    plant = random_plant(seed, size=30)
    topology = Topology(plant)
    for item_id in sorted(topology.elements):
        check_blocked_first(topology, plan_isolation(topology, item_id))


def test_the_property_catches_the_old_order() -> None:
    """The check fails on the emergency board locked the old way (generator last)."""
    topology = load(EMERGENCY_BOARD)
    plan = plan_isolation(topology, "ESB")
    old_order = sorted(plan.points, key=lambda p: p.blocks is not None or p.already_open)
    with pytest.raises(AssertionError):
        check_blocked_first(topology, IsolationPlan(
            item=plan.item, points=tuple(old_order), verify=plan.verify,
            stored_energy=plan.stored_energy, hazards=plan.hazards, also_open=plan.also_open))


def test_same_plant_gives_the_same_plan() -> None:
    plant = random_plant(7, size=80)
    first = [plan_isolation(Topology(plant), e) for e in sorted(plant.index())]
    second = [plan_isolation(Topology(plant), e) for e in sorted(plant.index())]
    assert first == second


PLANT_HEAD = """
plant: {code: FX, name: test, kind: vessel, frequency: 60 Hz}
"""


def load(text: str) -> Topology:
    return load_plant_text(PLANT_HEAD + text, "test.yaml")[1]


EMERGENCY_BOARD = """
sources:
  - {id: G1, kind: generator, voltage: 440 V}
  - id: EG
    kind: emergency_generator
    voltage: 440 V
    starts_automatically: true
    start_block: {id: EG-BLOCK, location: EG control panel,
                  how: mode selector to BLOCKED; padlock it}
buses:
  - {id: MSB, kind: switchboard, voltage: 440 V, earthing: insulated, from: [CB-G1, CB-BF]}
  - {id: ESB, kind: switchboard, voltage: 440 V, earthing: insulated, from: [CB-ESB, CB-EG]}
devices:
  - {id: CB-G1, kind: circuit_breaker, from: G1}
  - {id: CB-ESB, kind: circuit_breaker, from: MSB}
  - {id: CB-EG, kind: circuit_breaker, from: EG, normally: open}
  - {id: CB-BF, kind: circuit_breaker, from: ESB, normally: open}
  - {id: CB-P, kind: circuit_breaker, from: ESB}
loads:
  - {id: P1, kind: motor, from: CB-P, rated_voltage: 440 V}
"""


def test_emergency_generator_start_is_blocked_and_its_breaker_locked_before_the_feed_opens(
) -> None:
    """Issue 9.3: the generator that starts on the board's blackout is blocked (start
    block, then breaker) before the normal feed is opened, which comes last."""
    plan = plan_isolation(load(EMERGENCY_BOARD), "ESB")
    assert [p.device for p in plan.points] == ["EG-BLOCK", "CB-EG", "CB-BF", "CB-ESB"]
    block = plan.points[0]
    assert block.device_kind == "start_block" and block.blocks == "EG"
    assert block.how == "mode selector to BLOCKED; padlock it"
    assert block.location == "EG control panel"
    assert plan.devices == ("CB-EG", "CB-BF", "CB-ESB")  # blocks are no switching devices
    assert plan.complete


def test_undeclared_start_block_is_still_a_step_with_a_warning() -> None:
    """With no start block in the inventory the plan makes the source's own controls a
    step, says so, and still locks the generator breaker before the feed opens."""
    topology = load(EMERGENCY_BOARD.replace(
        "    start_block: {id: EG-BLOCK, location: EG control panel,\n"
        "                  how: mode selector to BLOCKED; padlock it}\n", ""))
    plan = plan_isolation(topology, "ESB")
    assert [p.device for p in plan.points] == ["EG:start", "CB-EG", "CB-BF", "CB-ESB"]
    assert "maker's instructions" in (plan.points[0].how or "")
    [warning] = [h for h in plan.hazards if "EG (emergency_generator)" in h.text]
    assert warning.signal_word is SignalWord.warning
    assert warning.kind is HazardKind.starts_by_itself
    assert "names no start block" in warning.text and "in step 1" in warning.text


def test_generator_further_off_is_left_to_start_and_kept_off_by_the_locks() -> None:
    """Isolating the main board: the emergency generator will start when the emergency
    board goes dark and is kept off by locks; its start is not blocked (it serves the
    emergency board), and those locks come before the main generator breaker."""
    plan = plan_isolation(load(EMERGENCY_BOARD), "MSB")
    assert [p.device for p in plan.points] == ["CB-BF", "CB-ESB", "CB-G1"]
    [warning] = [h for h in plan.hazards if h.text.startswith("EG ")]
    assert "when ESB goes dead in this isolation" in warning.text
    assert "CB-BF (step 1), CB-ESB (step 2) locked open keep it off MSB" in warning.text


def test_a_load_on_the_emergency_board_needs_no_generator_block() -> None:
    """The generator reaches P1 only through P1's own breaker: no block, no warning."""
    plan = plan_isolation(load(EMERGENCY_BOARD), "P1")
    assert [p.device for p in plan.points] == ["CB-P"]
    assert not plan.hazards


def test_demo_emergency_board_is_blocked_in_the_order_a_technician_can_follow(
    demo_vessel: Topology,
) -> None:
    """Issue 9.3 on the demo vessel: EDG's start block and breaker first, then the
    back-feeds, then the normal feed from the main board."""
    plan = plan_isolation(demo_vessel, "ESB")
    assert [p.device for p in plan.points] == [
        "EDG-START", "CB-EDG", "CB-BACKFEED", "CB-E-T3", "CB-ESB"]
    assert plan.points[-1].reason.startswith("normal supply from")
    check_blocked_first(demo_vessel, plan)


CHANGEOVER = """
sources:
  - {id: G1, kind: generator, voltage: 115 V}
  - {id: U1, kind: ups, voltage: 115 V}
buses:
  - {id: LP, kind: lighting_panel, voltage: 115 V, earthing: insulated, from: CB-G1}
  - {id: NAV, kind: lighting_panel, voltage: 115 V, earthing: insulated, from: TS}
devices:
  - {id: CB-G1, kind: circuit_breaker, from: G1}
  - {id: CB-NAV, kind: circuit_breaker, from: LP}
  - {id: CB-U1, kind: circuit_breaker, from: U1}
  - {id: TS, kind: transfer_switch, from: [CB-NAV, CB-U1]TRANSITION}
  - {id: CB-L, kind: circuit_breaker, from: NAV}
loads:
  - {id: L1, kind: lighting, from: CB-L}
"""


def changeover(transition: str = "") -> Topology:
    return load(CHANGEOVER.replace("TRANSITION", transition))


def test_open_transition_changeover_does_not_join_its_inputs() -> None:
    """Issue 9.4: a break-before-make changeover cannot carry the UPS into the lighting
    panel on its normal side: no lock on the panel's way to it, no 'stays live' warning."""
    plan = plan_isolation(changeover(", transition: open"), "LP")
    assert plan.devices == ("CB-G1",)
    assert not [h for h in plan.hazards if "U1" in h.text]


def test_closed_transition_and_undeclared_changeovers_can_join_their_inputs() -> None:
    """A changeover that may parallel (closed transition, or not described: the cautious
    default) can back-feed the panel from the UPS, so the panel's way to it is locked."""
    for transition in (", transition: closed", ""):
        plan = plan_isolation(changeover(transition), "LP")
        assert set(plan.devices) == {"CB-G1", "CB-NAV"}
        assert [h for h in plan.hazards if h.text.startswith("U1 (ups) stays live")]
        assert "possible supply from U1" in plan.points[0].reason


def test_load_side_of_an_open_transition_changeover_still_gets_both_inputs() -> None:
    """Below the changeover both inputs are supplies: the UPS (which changes over by
    itself) is locked first, and the changeover's missing transfer block is a warning."""
    plan = plan_isolation(changeover(", transition: open"), "NAV")
    assert plan.devices == ("CB-U1", "CB-NAV")
    assert any(h.kind is HazardKind.changes_over_by_itself and "TS changes over by itself" in h.text
               and "before step 2" in h.text for h in plan.hazards)


def test_declared_transfer_block_comes_first_and_none_for_a_manual_changeover() -> None:
    plan = plan_isolation(changeover(
        ", transition: open, transfer_block: {id: TS-MAN, how: selector to MANUAL; padlock}"),
        "NAV")
    assert [p.device for p in plan.points] == ["TS-MAN", "CB-U1", "CB-NAV"]
    assert plan.points[0].device_kind == "transfer_block" and plan.points[0].blocks == "TS"
    assert not [h for h in plan.hazards if "changes over by itself" in h.text]
    manual = plan_isolation(changeover(", transfers_automatically: false"), "NAV")
    assert not [h for h in manual.hazards if "changes over by itself" in h.text]


def test_ups_output_block_comes_before_its_breaker(demo_vessel: Topology) -> None:
    """The navigation panel: changeover to manual, UPS output off, its breaker, then the
    normal feed from the emergency lighting panel."""
    plan = plan_isolation(demo_vessel, "NAV")
    assert [p.device for p in plan.points] == ["TS-NAV-MAN", "UPS-NAV-OUT", "CB-UPS",
                                               "CB-ELP-NAV"]
    assert plan.points[1].reason == "stops UPS-NAV (navigation UPS) putting out power"
    check_blocked_first(demo_vessel, plan)


def test_demo_emergency_lighting_panel_has_no_false_ups_lock_or_warning(
    demo_vessel: Topology,
) -> None:
    """TS-NAV is break-before-make: the UPS cannot reach ELP through it."""
    plan = plan_isolation(demo_vessel, "ELP")
    assert plan.devices == ("CB-LTIE", "CB-T3S")
    assert not [h for h in plan.hazards if "UPS" in h.text]


def test_normal_supply_generator_is_switched_off_before_its_start_is_blocked(
    demo_site: Topology,
) -> None:
    """The standby generator's own board: its breaker (the board's only supply) is opened
    off load first, then its automatic start is blocked."""
    plan = plan_isolation(demo_site, "GSB")
    assert [p.device for p in plan.points] == ["CB-DG1", "DG1-START"]


def test_motor_heater_fed_from_another_panel_is_locked_too() -> None:
    """The anti-condensation heater's own breaker on the lighting panel is in the plan,
    locked before the motor's breaker: heaters often switch on when the motor stops."""
    topology = load("""
sources: [{id: G1, kind: generator, voltage: 440 V}]
buses:
  - {id: MSB, kind: switchboard, voltage: 440 V, earthing: insulated, from: CB-G1}
  - {id: LP, kind: lighting_panel, voltage: 115 V, earthing: insulated, from: CB-TS}
devices:
  - {id: CB-G1, kind: circuit_breaker, from: G1}
  - {id: CB-M, kind: circuit_breaker, from: MSB}
  - {id: CB-T, kind: circuit_breaker, from: MSB}
  - {id: CB-TS, kind: circuit_breaker, from: T1}
  - {id: CB-HTR, kind: circuit_breaker, from: LP}
transformers:
  - {id: T1, construction: three_phase, rated_kva: 30 kVA, primary_voltage: 440 V,
     secondary_voltage: 115 V, vector_group: Dd0, from: CB-T}
loads:
  - {id: M1, kind: motor, from: CB-M, rated_voltage: 440 V,
     auxiliaries: [{kind: anti_condensation_heater, from: CB-HTR}]}
""")
    plan = plan_isolation(topology, "M1")
    assert plan.devices == ("CB-HTR", "CB-M")
    assert plan.points[0].reason == "anti condensation heater supply into M1"
    assert any("heater" in v.where and v.voltage == 115 for v in plan.verify)
    # The heater does not join the motor's winding to the lighting panel: isolating
    # the lighting panel does not lock the motor's breaker.
    assert plan_isolation(topology, "LP").devices == ("CB-TS",)


def test_lighting_panel_fed_through_banks_from_two_directions_gets_both() -> None:
    topology = load("""
sources:
  - {id: G1, kind: generator, voltage: 440 V}
  - {id: EG, kind: emergency_generator, voltage: 440 V}
buses:
  - {id: MSB, kind: switchboard, voltage: 440 V, earthing: insulated, from: CB-G1}
  - {id: ESB, kind: switchboard, voltage: 440 V, earthing: insulated, from: CB-EG}
  - {id: LP, kind: lighting_panel, voltage: 115 V, earthing: insulated, from: [F-T1S, TIE]}
  - {id: ELP, kind: lighting_panel, voltage: 115 V, earthing: insulated, from: CB-T2S}
devices:
  - {id: CB-G1, kind: circuit_breaker, from: G1}
  - {id: CB-EG, kind: circuit_breaker, from: EG}
  - {id: CB-T1, kind: circuit_breaker, from: MSB}
  - {id: F-T1S, kind: fuse, from: T1}
  - {id: CB-T2, kind: circuit_breaker, from: ESB}
  - {id: CB-T2S, kind: circuit_breaker, from: T2}
  - {id: TIE, kind: circuit_breaker, from: ELP, normally: open}
transformers:
  - {id: T1, construction: bank_of_single_phase, unit_kva: 10 kVA, primary_voltage: 440 V,
     secondary_voltage: 115 V, vector_group: Dd0, from: CB-T1}
  - {id: T2, construction: bank_of_single_phase, unit_kva: 5 kVA, primary_voltage: 440 V,
     secondary_voltage: 115 V, vector_group: Dd0, from: CB-T2}
""")
    plan = plan_isolation(topology, "LP")
    # The secondary fuse cannot be locked: the bank's primary breaker is, and the tie.
    assert set(plan.devices) == {"CB-T1", "TIE"}
    assert plan.also_open == ("F-T1S",)
    tie = next(p for p in plan.points if p.device == "TIE")
    assert tie.already_open and "normally open" in tie.reason
    # The tie is locked open before the normal supply is switched off, so nothing can
    # be closed onto the dead panel in between.
    assert plan.points[0].device == "TIE" and plan.points[-1].device == "CB-T1"


def test_path_with_no_lockable_device_is_a_danger_not_a_silent_gap() -> None:
    topology = load("""
sources: [{id: G1, kind: generator, voltage: 440 V}]
buses:
  - {id: MSB, kind: switchboard, voltage: 440 V, earthing: insulated, from: F-G1}
devices:
  - {id: F-G1, kind: fuse, from: G1}
  - {id: F-M, kind: fuse, from: MSB}
loads:
  - {id: M1, kind: motor, from: F-M, rated_voltage: 440 V}
""")
    plan = plan_isolation(topology, "M1")
    assert plan.devices == ()
    assert not plan.complete
    [gap] = [h for h in plan.hazards if h.kind is HazardKind.no_lock]
    assert gap.signal_word is SignalWord.danger and "no lockable device" in gap.text
    assert set(plan.also_open) == {"F-G1", "F-M"}


@pytest.mark.parametrize("item", ["SG-1", "LP-MAIN", "WL-1", "NAV", "T1", "ESB", "MSB", "ELP"])
def test_demo_vessel_plans_are_complete(item: str, demo_vessel: Topology) -> None:
    plan = plan_isolation(demo_vessel, item)
    assert plan.complete
    assert sources_reaching(demo_vessel, item, set(plan.devices)) == set()
    check_blocked_first(demo_vessel, plan)


@pytest.mark.parametrize("item", ["VSB", "GSB", "UPS-DB", "FP-1", "ATS-VSB", "CR-1"])
def test_demo_site_plans_are_complete(item: str, demo_site: Topology) -> None:
    plan = plan_isolation(demo_site, item)
    assert plan.complete
    assert sources_reaching(demo_site, item, set(plan.devices)) == set()
    check_blocked_first(demo_site, plan)


# --- proving dead on systems with a neutral -----------------------------------------------------


def test_four_wire_board_is_proven_dead_phase_to_neutral_and_neutral_to_earth(
    demo_vessel: Topology,
) -> None:
    """Issue 9.6: on the 208 V grounded-wye system (3 phases + N) the tester goes between
    the phases, each phase and the neutral, each phase and earth, and neutral and earth
    (common practice: the ten-test safe-isolation check on a three-phase-and-neutral
    supply); a three-phase motor there takes no neutral."""
    [board] = plan_isolation(demo_vessel, "DP-LDY").verify
    assert board.wires == 4
    assert "phase-to-neutral" in board.conductors and "neutral-to-earth" in board.conductors
    [lathe] = plan_isolation(demo_vessel, "LATHE-1").verify
    assert lathe.wires == 3
    [washer] = plan_isolation(demo_vessel, "WX-1").verify
    assert washer.wires == 4
    # a three-wire insulated system stays three-wire
    assert [v.wires for v in plan_isolation(demo_vessel, "MSB").verify] == [3]


def test_transformer_sides_take_their_own_conductor_count(demo_vessel: Topology) -> None:
    """T2 (Dyn11, grounded neutral): primary delta three wires, secondary wye with N."""
    primary, secondary = plan_isolation(demo_vessel, "T2").verify
    assert (primary.where, primary.wires) == ("primary terminals of T2", 3)
    assert (secondary.where, secondary.wires) == ("secondary terminals of T2", 4)


def test_a_board_declared_four_wire_needs_no_transformer() -> None:
    topology = load("""
sources: [{id: G1, kind: generator, voltage: 400 V}]
buses:
  - {id: MSB, kind: switchboard, voltage: 400 V, earthing: solid, four_wire: true, from: CB-G1}
devices:
  - {id: CB-G1, kind: circuit_breaker, from: G1}
""")
    [point] = plan_isolation(topology, "MSB").verify
    assert point.wires == 4


@pytest.mark.parametrize(("item", "warned"), [("MSB", True), ("SSG-1", False),
                                              ("LP-MAIN", False), ("WL-1", False)])
def test_generator_start_is_a_warning_only_where_the_isolation_darkens_its_board(
    item: str, warned: bool, demo_vessel: Topology,
) -> None:
    """EDG starts when ESB goes dead: isolating MSB does that (ESB is fed from it);
    one of three main generators, the lighting panel or the windlass do not."""
    plan = plan_isolation(demo_vessel, item)
    assert bool([h for h in plan.hazards if h.text.startswith("EDG ")]) is warned


def test_a_self_starting_generator_as_the_item_is_stopped_and_blocked(
    demo_vessel: Topology,
) -> None:
    """Its breaker first (off load), then its start block; the DANGER names the step."""
    plan = plan_isolation(demo_vessel, "EDG")
    assert [p.device for p in plan.points] == ["CB-EDG", "EDG-START"]
    assert any(h.signal_word is SignalWord.danger and h.kind is HazardKind.source_itself
               and "its start is blocked in step 2" in h.text
               for h in plan.hazards)


def test_open_transition_removes_a_false_danger() -> None:
    """Fuses only between a panel and a UPS-backed changeover: taken as able to join its
    inputs, the UPS seems to reach the panel with nothing to lock (DANGER); declared
    break-before-make, it cannot, and the panel's plan is complete."""
    text = CHANGEOVER.replace("{id: CB-NAV, kind: circuit_breaker, from: LP}",
                              "{id: CB-NAV, kind: fuse, from: LP}")
    text = text.replace("{id: CB-U1, kind: circuit_breaker, from: U1}",
                        "{id: CB-U1, kind: fuse, from: U1}")
    joined = plan_isolation(load(text.replace("TRANSITION", "")), "LP")
    assert not joined.complete and unprotected(joined) == {"U1"}
    separate = plan_isolation(load(text.replace("TRANSITION", ", transition: open")), "LP")
    assert separate.complete and separate.devices == ("CB-G1",)


# --- several places of work in one isolation ----------------------------------------------------


def as_seen_from(merged: IsolationPlan, own: IsolationPlan) -> IsolationPlan:
    """The merged steps, judged from one of the places it isolates."""
    return IsolationPlan(item=own.item, points=merged.points, verify=own.verify,
                         stored_energy=(), hazards=merged.hazards, also_open=())


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(seed=st.integers(0, 2**32 - 1), first=st.integers(0, 10**6),
       second=st.integers(0, 10**6))
def test_one_isolation_of_two_places_still_blocks_first_for_each(
    seed: int, first: int, second: int,
) -> None:
    """Property: merging the isolations of two places of work (a motor and the heater
    inside its terminal box) keeps, for each place, whatever comes on by itself blocked
    before any step removes its normal supply."""
    from workpack.search import merged_isolation

    topology, _ = random_case(seed, 0)
    # the places a final test is made in: loads, cables, boards and transformers
    places = sorted(e.id for e in topology.elements.values()
                    if isinstance(e, Load | Cable | Bus | Transformer))
    one, other = places[first % len(places)], places[second % len(places)]
    if one == other:
        return
    plans = [plan_isolation(topology, one), plan_isolation(topology, other)]
    merged = merged_isolation(topology, plans)
    assert [p.order for p in merged.points] == list(range(1, len(merged.points) + 1))
    assert {p.device for p in merged.points} == {p.device for plan in plans for p in plan.points}
    for own in plans:
        check_blocked_first(topology, as_seen_from(merged, own))


# --- the one search for every device's far side ------------------------------------------------


def test_one_search_answers_as_each_device_walk_would() -> None:
    """``_far_sides`` (one search for all devices at once) finds, for each device, the
    sources its own walk finds (``_far_side``), for any start states and blocked nodes,
    passed changeovers included. Where it declines (``None``) the planner walks that
    device alone."""
    import random

    from workpack.isolation import _far_side, _far_sides

    answered = 0
    for seed in range(60):
        rng = random.Random(seed)
        topology = Topology(random_plant(seed, size=60))
        nodes = sorted(topology.closable_adjacency)
        changeovers = sorted(topology.one_input_at_a_time)
        devices = [n for n in nodes if isinstance(topology.elements[element_of(n)], Device)]
        starts = {}
        for device in rng.sample(devices, min(len(devices), rng.randint(1, 12))):
            starts[device] = (device, rng.choice([None, None, *changeovers[:3]]))
        blocked = set(starts) | set(rng.sample(nodes, len(nodes) // rng.randint(4, 12)))
        blocked |= {p for _, p in starts.values() if p is not None}
        for device, sources in _far_sides(topology, starts, blocked).items():
            if sources is not None:
                answered += 1
                alone = _far_side(topology, starts[device], blocked - {device})
                assert sources == alone.sources, (seed, device)
    assert answered > 300


@pytest.mark.parametrize("seed", range(30))
def test_one_search_stands_in_for_every_walk_of_a_plan(seed: int) -> None:
    """For every item of a plant, the devices the planner's walk stops at: the one search
    answers for each of them (it never has to hand one back) as its own walk would."""
    from workpack.isolation import _far_side, _far_sides, _walk_from_item

    topology = Topology(random_plant(seed, size=120))
    for item_id in sorted(topology.elements):
        near = _walk_from_item(topology, item_id)
        blocked = near.blocked
        for device, sources in _far_sides(topology, near.frontier, blocked).items():
            alone = _far_side(topology, near.frontier[device], blocked - {device})
            assert sources == alone.sources, (item_id, device)


@pytest.mark.parametrize("seed", range(15))
def test_locked_devices_are_the_plans_devices(seed: int) -> None:
    """``locked_devices`` (the devices alone, for callers that ask many times) names
    exactly the devices the full plan locks, for every item of a plant."""
    from workpack.isolation import locked_devices

    topology = Topology(random_plant(seed, size=90))
    for item_id in sorted(topology.elements):
        assert locked_devices(topology, item_id) == set(
            plan_isolation(topology, item_id).devices), item_id
