"""Galvanic islands, detectors and supply paths of the demo vessel."""

from workpack.model.plant import Plant
from workpack.topology import Topology


def test_transformers_separate_galvanic_systems(demo_vessel: Topology) -> None:
    main = demo_vessel.island_of("MSB")
    lighting = demo_vessel.island_of("LP-MAIN")
    assert main is not lighting
    assert "T1:primary" in main.nodes and "T1:secondary" in lighting.nodes
    assert main.voltage == 440 and lighting.voltage == 115


def test_emergency_board_fed_from_main_is_one_system_watched_by_both_detectors(
    demo_vessel: Topology,
) -> None:
    island = demo_vessel.island_of("ESB")
    assert island.id == "MSB"
    assert {d.id for d in island.detectors} == {"GD-MSB", "GD-ESB"}
    assert demo_vessel.watched_by("GD-LP") is demo_vessel.island_of("LP-MAIN")


def test_grounded_wye_neutral_makes_its_system_solidly_grounded(demo_vessel: Topology) -> None:
    assert demo_vessel.island_of("DP-LDY").earthing.value == "solid"


def test_normally_open_devices_split_islands_until_closed(demo_vessel: Topology) -> None:
    assert demo_vessel.island_of("EDG") is not demo_vessel.island_of("ESB")
    closed = demo_vessel.islands(open_devices=())
    merged = next(i for i in closed if "ESB" in i.nodes)
    assert {"EDG", "SHORE", "SSG-1"} <= set(merged.nodes)


def test_normal_supply_path_follows_from_links(demo_vessel: Topology) -> None:
    paths = demo_vessel.normal_supply_paths("EL-1")
    assert ("SSG-1", "CB-SSG1", "MSB", "CB-ESB", "C-ESB", "ESB", "CB-E-T3", "T3:primary",
            "T3:secondary", "CB-T3S", "ELP", "CB-EL1", "EL-1") in paths
    # Normally open back-feed and emergency generator paths are not the normal supply.
    assert all("EDG" not in p and "CB-BACKFEED" not in p for p in paths)
    assert {p[0] for p in paths} == {"SSG-1", "SSG-2", "SSG-3"}


def test_possible_supply_paths_include_ties_and_changeovers(demo_vessel: Topology) -> None:
    starts = {p[0] for p in demo_vessel.possible_supply_paths("NAV-L")}
    assert {"UPS-NAV", "EDG", "SHORE"} <= starts


def test_open_transition_changeover_never_joins_its_inputs(demo_vessel: Topology) -> None:
    """TS-NAV is break-before-make: no path runs from the UPS through it to the
    emergency lighting panel, while both inputs still reach the navigation panel."""
    assert demo_vessel.one_input_at_a_time["TS-NAV"] == {"CB-ELP-NAV", "CB-UPS"}
    assert "UPS-NAV" not in {p[0] for p in demo_vessel.possible_supply_paths("ELP")}
    assert {"UPS-NAV", "SSG-1"} <= {p[0] for p in demo_vessel.possible_supply_paths("NAV")}
    # a walk entering the changeover from one input goes on to its load side only
    assert demo_vessel.onward("TS-NAV", "TS-NAV", ["CB-ELP-NAV", "CB-UPS", "NAV"]) == [
        ("NAV", "TS-NAV")]
    assert demo_vessel.onward("CB-UPS", None, ["TS-NAV"]) == [("TS-NAV", "TS-NAV")]
    # from its load side either input
    assert demo_vessel.onward("TS-NAV", None, ["CB-ELP-NAV", "CB-UPS"]) == [
        ("CB-ELP-NAV", None), ("CB-UPS", None)]


def test_a_neutral_is_known_per_system(demo_vessel: Topology, demo_site: Topology) -> None:
    """Grounded-wye secondaries and four-wire boards carry a neutral; delta systems not."""
    assert demo_vessel.island_of("DP-LDY").neutral
    assert not demo_vessel.island_of("MSB").neutral
    assert not demo_vessel.island_of("LP-MAIN").neutral
    assert demo_site.island_of("LP-1").neutral and not demo_site.island_of("ICP").neutral


def test_standby_generator_board_is_not_kept_live(demo_site: Topology) -> None:
    """GSB is fed only by DG1, which stands by until the utility fails."""
    assert "MSB" in demo_site.kept_live and "GSB" not in demo_site.kept_live
    assert "VSB" not in demo_site.kept_live_without(["CB-VSB"])


def test_joinable_by_is_the_definition_written_out() -> None:
    """``summary.joinable_by`` (one pass over the devices) names, for every island, the
    normally open devices in it or next to it that touch another island: checked here
    against that definition asked island by island, on random plants."""
    from plantgen import random_plant

    from workpack.summary import joinable_by

    for seed in range(25):
        topology = Topology(random_plant(seed, size=120))
        found = joinable_by(topology)
        for island in topology.normal_islands:
            members = set(island.nodes)
            expected = sorted(
                device for device in topology.normally_open
                if any(topology.island_of(n).id != island.id
                       for n in topology.graph.neighbors(device))
                and (device in members or members & set(topology.graph.neighbors(device))))
            assert found.get(island.id, []) == expected, (seed, island.id)
        assert any(found.values())


def test_stays_live_asks_what_kept_live_without_answers() -> None:
    """``stays_live`` (a walk from the node to the nearest source that runs by itself) and
    ``kept_live_without`` (a walk from every such source) agree on every node, with
    random sets of devices open, on random plants."""
    import random

    from plantgen import random_plant

    for seed in range(20):
        rng = random.Random(seed)
        topology = Topology(random_plant(seed, size=90))
        devices = sorted(d.id for d in topology.plant.devices)
        for _ in range(5):
            opened = set(rng.sample(devices, rng.randint(0, len(devices) // 3)))
            live = topology.kept_live_without(opened)
            for node in topology.graph:
                assert topology.stays_live(node, opened) == (node in live), (seed, node)


def test_closable_parts_are_the_components_between_sources_and_changeovers() -> None:
    """``closable_parts``: the closable power graph less its sources and open-transition
    changeovers falls into connected components (networkx's own); each part is one, and
    names the sources and changeovers next to it."""
    import networkx as nx
    from plantgen import random_plant

    from workpack.topology import POWER

    cut_at_changeovers = 0
    for seed in range(25):
        topology = Topology(random_plant(seed, size=120))
        view = topology.closable_view(POWER)
        cut = topology.source_nodes | set(topology.one_input_at_a_time)
        parts = topology.closable_parts
        components = list(nx.connected_components(view.subgraph(set(view) - cut)))
        assert len(components) == len(parts.sources)
        for component in components:
            [part] = {parts.part_of[node] for node in component}
            next_to = {n for node in component for n in view.neighbors(node)} - component
            assert set(parts.sources[part]) == next_to & topology.source_nodes
            assert {c for _, c in parts.changeovers[part]} == next_to - topology.source_nodes
            assert parts.source_bits[part] == sum(parts.source_bit[s]
                                                  for s in parts.sources[part])
        cut_at_changeovers += any(parts.changeovers)
    assert cut_at_changeovers >= 5


def _mesh_plant(levels: int, ring: bool) -> Plant:
    """Two generators over ``levels`` pairs of boards, each board fed from both boards
    above it: the normal supply paths double at every level (invented). With ``ring``
    the first board is fed from the last as well, a ring of normal supplies."""
    devices = [{"id": "DG1", "kind": "circuit_breaker", "from": "G1"},
               {"id": "DG2", "kind": "circuit_breaker", "from": "G2"}]
    buses: list[dict[str, object]] = []
    above = ["DG1", "DG2"]
    for level in range(levels):
        for side in "ab":
            buses.append({"id": f"B{level}{side}", "kind": "switchboard", "voltage": 440,
                          "earthing": "insulated", "from": list(above)})
            devices.append({"id": f"D{level}{side}", "kind": "circuit_breaker",
                            "from": f"B{level}{side}"})
        above = [f"D{level}a", f"D{level}b"]
    if ring:
        devices.append({"id": "DR", "kind": "circuit_breaker", "from": f"B{levels - 1}a"})
        buses[0]["from"] = ["DG1", "DG2", "DR"]
    return Plant.model_validate({
        "plant": {"code": "MSH", "name": "mesh", "kind": "other", "frequency": 60},
        "sources": [{"id": "G1", "kind": "generator", "voltage": 440},
                    {"id": "G2", "kind": "generator", "voltage": 440}],
        "buses": buses, "devices": devices, "cables": [], "loads": []})


def test_normal_supply_paths_built_node_by_node_are_every_simple_path() -> None:
    """``normal_supply_paths`` builds each node's paths from the nodes above it. Below
    PATH_LIMIT they are every simple path up the normal supplies, as networkx's
    ``all_simple_paths`` finds them over the same steps; at the limit, and round a ring
    of normal supplies, they are what the plain walk keeps (its first PATH_LIMIT)."""
    import networkx as nx
    from plantgen import random_plant

    from workpack.topology import PATH_LIMIT, element_of

    def steps_up(topology: Topology) -> nx.DiGraph:
        graph = nx.DiGraph()
        for node in topology.graph:
            graph.add_node(node)
            if node not in topology.source_nodes:
                graph.add_edges_from((node, up) for up in topology._upward(node)
                                     if element_of(up) not in topology.normally_open)
        return graph

    checked = 0
    for topology in [Topology(random_plant(seed, size=150)) for seed in range(15)] + [
            Topology(_mesh_plant(4, ring=False))]:
        graph = steps_up(topology)
        for element_id in sorted(topology.elements):
            start = topology.node_in(element_id)
            expected = sorted(tuple(reversed(path)) for path in nx.all_simple_paths(
                graph, start, set(topology.source_nodes) - {start}))
            if start in topology.source_nodes:
                expected = [(start,)]
            assert topology.normal_supply_paths(element_id) == expected, element_id
            checked += 1
    assert checked > 1500
    for ring in (False, True):  # 2 ** 9 paths to the last boards; a ring
        topology = Topology(_mesh_plant(8, ring))
        for element_id in ("B0a", "B3b", "B7a"):
            start = topology.node_in(element_id)
            paths = topology.normal_supply_paths(element_id)
            assert paths == topology._walked_supply_paths(start)
            assert len(paths) <= PATH_LIMIT
        assert len(topology.normal_supply_paths("B7a")) == PATH_LIMIT
        assert topology._paths_to.get("B7a") is None  # the plain walk answered
