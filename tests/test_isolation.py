"""Isolation plans: every path from every source is cut, and nothing is locked for nothing."""

from __future__ import annotations

import networkx as nx
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from plantgen import random_plant

from workpack.checks import run_checks
from workpack.isolation import plan_isolation
from workpack.loading import load_plant_text
from workpack.topology import POWER, Topology


def energy_graph(topology: Topology, item_id: str) -> nx.Graph:
    """Everything that could conduct, built here independently of the planner's walk."""
    graph = nx.Graph(topology.closable_view(POWER))
    for feed in topology.auxiliary_feeds(item_id):
        graph.add_edge(item_id, feed)
    return graph


def sources_reaching(topology: Topology, item_id: str, opened: set[str]) -> set[str]:
    graph = energy_graph(topology, item_id)
    graph.remove_nodes_from(sorted(opened))
    reached: set[str] = set()
    for node in topology.work_nodes(item_id):
        reached |= nx.node_connected_component(graph, node) & topology.source_nodes
    return reached - {item_id}


def unprotected(plan) -> set[str]:
    return {h.text.split("source ")[1].split(" ")[0] for h in plan.hazards
            if h.text.startswith("no lockable device")}


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(seed=st.integers(0, 2**32 - 1), pick=st.integers(0, 10**6))
def test_planned_devices_cut_every_source_and_none_is_redundant(seed: int, pick: int) -> None:
    """Property: after opening the plan no source reaches the item; each device is needed."""
    plant = random_plant(seed, size=45)
    findings, topology = run_checks(plant)
    assert not findings, findings
    assert topology is not None
    items = sorted(topology.elements)
    item_id = items[pick % len(items)]
    plan = plan_isolation(topology, item_id)
    opened = set(plan.devices)
    assert item_id not in opened
    # Sources still reaching are exactly those the plan declares it cannot lock out.
    assert sources_reaching(topology, item_id, opened) == unprotected(plan)
    for device in plan.devices:
        graph = energy_graph(topology, item_id)
        graph.remove_nodes_from(sorted(opened - {device}))
        # Closing this one device alone must put a source onto the item through it.
        through_device = any(
            nx.has_path(graph.subgraph(set(graph) - {item_node}), device, source)
            for item_node in topology.work_nodes(item_id)
            for source in topology.source_nodes - {item_id}
            if source in graph
        )
        reaches_item = any(nx.has_path(graph, device, node)
                           for node in topology.work_nodes(item_id))
        assert through_device and reaches_item, f"{device} is redundant for {item_id}"


def test_same_plant_gives_the_same_plan() -> None:
    plant = random_plant(7, size=80)
    first = [plan_isolation(Topology(plant), e) for e in sorted(plant.index())]
    second = [plan_isolation(Topology(plant), e) for e in sorted(plant.index())]
    assert first == second


PLANT_HEAD = """
plant: {name: test, kind: vessel, frequency: 60 Hz}
"""


def load(text: str) -> Topology:
    return load_plant_text(PLANT_HEAD + text, "test.yaml")[1]


def test_motor_heater_fed_from_another_panel_is_locked_too() -> None:
    """The anti-condensation heater's own breaker on the lighting panel is in the plan."""
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
    assert plan.devices == ("CB-M", "CB-HTR")
    assert plan.points[1].reason == "anti condensation heater supply into M1"
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
    assert plan.points[-1].device == "TIE"  # normally open devices are locked last


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
    assert [h.severity for h in plan.hazards if "no lockable device" in h.text] == ["DANGER"]
    assert set(plan.also_open) == {"F-G1", "F-M"}


@pytest.mark.parametrize("item", ["SG-1", "LP-MAIN", "WL-1", "NAV", "T1", "ESB", "MSB"])
def test_demo_vessel_plans_are_complete(item: str, demo_vessel: Topology) -> None:
    plan = plan_isolation(demo_vessel, item)
    assert plan.complete
    assert sources_reaching(demo_vessel, item, set(plan.devices)) == set()
