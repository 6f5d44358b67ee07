"""Benchmark: plan the ground search on one system with 500 feeders (issue 4: under 1 s),
and on generated plants of 2,000 and 20,000 items (issue 15: linear).

CPU seconds of this process, for group tests and one feeder at a time. Checked: the
search has a step for every feeder at least, and its expected time is no less than its
lower bound. On the generated plants (``benchdata.scale_plant_data``: the searched
system grows with the plant), ten times the items must cost at most twelve times the
time (best of 3), and every subtree and every supply path is walked once per search at
most (counted by wrapping ``Topology``'s two walks). Exits 1 on a missed target or a
wrong output. The same search at every size is the ``locate`` stage of bench_scale.py.

Run: .venv/bin/python bench/bench_locate.py [feeders]
"""

from __future__ import annotations

import datetime as dt
import random
import sys
import time
from collections import Counter
from pathlib import Path
from typing import Any

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(HERE))

from benchdata import DAY, DETECTOR, plant_yaml, scale_plant_data  # noqa: E402

from workpack.electrical import available_code_sets, load_code_set  # noqa: E402
from workpack.loading import load_plant_text, load_weights  # noqa: E402
from workpack.model.plant import Plant  # noqa: E402
from workpack.search import plan_fault_search  # noqa: E402
from workpack.topology import Topology  # noqa: E402


def plant_with_feeders(feeders: int, seed: int = 500) -> Plant:
    """One 440 V board, ``feeders`` breakers, some feeding sub-panels (invented data)."""
    rng = random.Random(seed)
    devices = [{"id": "CB-G1", "kind": "circuit_breaker", "from": "G1"}]
    buses = [{"id": "MSB", "kind": "switchboard", "voltage": 440, "earthing": "insulated",
              "from": "CB-G1", "detector": {"id": "GD", "kind": "lamps"}}]
    cables, loads = [], []
    environments = ["wet", "weather_exposed", "hot", "galley"]
    for n in range(feeders):
        breaker = f"CB{n}"
        devices.append({"id": breaker, "kind": "circuit_breaker", "from": "MSB"})
        cables.append({"id": f"C{n}", "from": breaker, "length": rng.randint(5, 250)})
        if n % 25 == 0:  # a sub-panel with a few circuits of its own
            buses.append({"id": f"P{n}", "kind": "distribution_panel", "voltage": 440,
                          "earthing": "insulated", "from": f"C{n}"})
            for k in range(6):
                devices.append({"id": f"CB{n}-{k}", "kind": "circuit_breaker",
                                "from": f"P{n}"})
                loads.append({"id": f"M{n}-{k}", "kind": "motor", "from": f"CB{n}-{k}",
                              "rated_voltage": 440})
        else:
            loads.append({
                "id": f"M{n}", "kind": rng.choice(["motor", "heater", "lighting"]),
                "from": f"C{n}", "rated_voltage": 440,
                "vitality": "vital" if n % 50 == 7 else rng.choice(
                    ["important", "non_essential"]),
                "environment": rng.sample(environments, rng.randint(0, 2))})
    return Plant.model_validate({
        "plant": {"code": "GEN", "name": "500 feeders", "kind": "other", "frequency": 60},
        "sources": [{"id": "G1", "kind": "generator", "voltage": 440}],
        "buses": buses, "devices": devices, "cables": cables, "loads": loads})


SIZES = (2000, 20000)
GROWTH_LIMIT = 12.0  # ten times the items: at most twelve times the time


def locate_at_scale(weights: Any, standards: Any) -> list[str]:
    """Time the search on generated plants of ``SIZES`` items; count its walks."""
    missed = []
    seconds = {}
    for size in SIZES:
        plant, _ = load_plant_text(plant_yaml(scale_plant_data(size)), "generated.yaml")
        best = float("inf")
        for _ in range(3):
            topology = Topology(plant)  # as loading leaves it: no walk cached yet
            _ = topology.normal_islands
            walks: Counter[str] = Counter()
            counted(topology, walks)
            started = time.process_time()
            result = plan_fault_search(topology, DETECTOR, weights, standards, DAY)
            best = min(best, time.process_time() - started)
        seconds[size] = best
        feeders = len(result.candidates)
        again = dict(Counter(kind for (kind, _), n in walks.items() if n > 1))
        print(f"{len(topology.elements):,} items: {best:.2f} s; {feeders:,} feeders "
              f"searched, {len(result.steps):,} steps; subtree walks "
              f"{sum(n for (k, _), n in walks.items() if k == 'subtree'):,}, supply-path "
              f"walks {sum(n for (k, _), n in walks.items() if k == 'paths'):,}")
        if again:
            missed.append(f"{size} items: elements walked more than once per search, by "
                          f"walk: {again}")
        if not result.steps or len(result.steps) < feeders // 2:
            missed.append(f"{size} items: {len(result.steps)} steps for {feeders} feeders")
    growth = seconds[SIZES[1]] / seconds[SIZES[0]]
    print(f"{SIZES[0]:,} -> {SIZES[1]:,} items: {growth:.1f}x the time "
          f"(target <= {GROWTH_LIMIT:g}x)")
    if growth > GROWTH_LIMIT:
        missed.append(f"locate grows {growth:.1f}x for 10x the items")
    return missed


def counted(topology: Topology, walks: Counter[tuple[str, str]]) -> None:
    """Count ``topology``'s subtree and supply-path walks by element (this object only)."""
    below, paths = topology._walk_below, topology._normal_supply_paths

    def counted_below(element_id: str) -> list[str]:
        walks["subtree", element_id] += 1
        return below(element_id)

    def counted_paths(element_id: str) -> list[tuple[str, ...]]:
        walks["paths", element_id] += 1
        return paths(element_id)

    topology._walk_below = counted_below  # type: ignore[method-assign]
    topology._normal_supply_paths = counted_paths  # type: ignore[method-assign]


def main(feeders: int = 500) -> int:
    topology = Topology(plant_with_feeders(feeders))
    weights = load_weights(ROOT / "rules" / "search-weights.yaml")
    standards = {name: load_code_set(name) for name in available_code_sets()}
    missed = []
    for mode in ("groups", "one at a time"):
        started = time.process_time()
        result = plan_fault_search(topology, "GD", weights, standards, dt.date(2026, 12, 1),
                                   one_at_a_time=mode == "one at a time")
        elapsed = time.process_time() - started
        print(f"{feeders} feeders, {mode}: {elapsed:.2f} s (target < 1 s); "
              f"{len(result.steps)} steps, expected {result.expected_minutes:.0f} min, "
              f"bound {result.lower_bound_minutes:.0f} min, gap {result.gap:.1%}")
        if elapsed >= 1.0:
            missed.append(f"{mode}: {elapsed:.2f} s, target < 1 s")
        if len(result.steps) < feeders or (
                result.expected_minutes < result.lower_bound_minutes - 1e-6):
            missed.append(f"{mode}: {len(result.steps)} steps for {feeders} feeders, "
                          f"expected {result.expected_minutes:.0f} min below its bound")
    missed += locate_at_scale(weights, standards)
    for problem in missed:
        print(f"MISSED: {problem}")
    return 1 if missed else 0


if __name__ == "__main__":
    raise SystemExit(main(int(sys.argv[1]) if len(sys.argv) > 1 else 500))
