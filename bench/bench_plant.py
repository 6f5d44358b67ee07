"""Benchmark: load, validate, check and build the topology of a generated 10,000-item plant.

Target (issue 2): under 2 s on one core. Run: .venv/bin/python bench/bench_plant.py
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import yaml

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))

from plantgen import random_plant_data  # noqa: E402

from workpack.isolation import plan_isolation  # noqa: E402
from workpack.loading import load_plant_text  # noqa: E402
from workpack.summary import summarize  # noqa: E402


def main(size: int = 10_000) -> None:
    data = random_plant_data(seed=2026, size=size)
    for cable in data["cables"]:
        cable["length"] = f"{cable['length']} m"  # exercise unit parsing as people write it
    text = yaml.safe_dump(data, sort_keys=False)
    started = time.perf_counter()
    plant, topology = load_plant_text(text, "generated.yaml")
    loaded = time.perf_counter()
    islands = topology.normal_islands
    built = time.perf_counter()
    summarize(plant, topology)
    summarized = time.perf_counter()
    items = sorted(topology.elements)[:: max(1, len(topology.elements) // 100)]
    for item in items:
        plan_isolation(topology, item)
    planned = time.perf_counter()
    print(f"plant: {len(topology.elements)} elements, {text.count(chr(10))} YAML lines, "
          f"{len(islands)} islands")
    print(f"load + validate + checks + graph: {loaded - started:.2f} s")
    print(f"islands:                          {built - loaded:.2f} s")
    print(f"load and topology total:          {built - started:.2f} s  (target < 2 s)")
    print(f"summary (capacitance per island): {summarized - built:.2f} s")
    print(f"isolation plans: {len(items)} in {planned - summarized:.2f} s "
          f"({(planned - summarized) / len(items) * 1000:.1f} ms each)")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 10_000)
