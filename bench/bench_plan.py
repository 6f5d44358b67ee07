"""Benchmark: plan a day for a generated plant of 5,000 items and 200 findings (no PDF).

Target (issue 5): planning under 1 s. Rendering is measured by bench/bench_render.py
against bench/baseline_reportlab.py. Run: .venv/bin/python bench/bench_plan.py
"""

from __future__ import annotations

import datetime as dt
import random
import resource
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT / "tests"))

from plantgen import random_plant_data  # noqa: E402

from workpack.electrical import available_code_sets, load_code_set  # noqa: E402
from workpack.loading import load_ruleset, load_weights  # noqa: E402
from workpack.model.findings import Findings  # noqa: E402
from workpack.model.plant import Plant  # noqa: E402
from workpack.plan import plan_day  # noqa: E402
from workpack.topology import Topology  # noqa: E402


def findings_for(plant: Plant, count: int, seed: int = 7) -> Findings:
    """Invented findings: megger readings, tripped breakers and defects on random items."""
    rng = random.Random(seed)
    motors = [load.id for load in plant.loads if load.kind.value == "motor"]
    breakers = [d.id for d in plant.devices if d.kind.value == "circuit_breaker"]
    items = []
    for n in range(count):
        at = f"2026-12-01T{6 + n % 12:02d}:{n % 60:02d}"
        choice = n % 3
        if choice == 0:
            items.append({"kind": "insulation_resistance", "at": at, "by": "x",
                          "where": rng.choice(motors), "test_voltage": "500 V",
                          "reading": f"{rng.uniform(0.5, 4):.2f} MΩ", "temperature": "25 °C"})
        elif choice == 1:
            items.append({"kind": "breaker_tripped", "at": at, "by": "x",
                          "where": rng.choice(breakers)})
        else:
            items.append({"kind": "defect", "at": at, "by": "x", "where": rng.choice(motors),
                          "text": "terminal box cover loose", "severity": "high"})
    return Findings.model_validate({"date": "2026-12-01", "findings": items})


def main(size: int = 5000, count: int = 200) -> None:
    plant = Plant.model_validate(random_plant_data(seed=5000, size=size))
    topology = Topology(plant)
    findings = findings_for(plant, count)
    ruleset = load_ruleset(ROOT / "rules")
    weights = load_weights(ROOT / "rules" / "search-weights.yaml")
    standards = {name: load_code_set(name) for name in available_code_sets()}
    plan_day(topology, findings, dt.date(2026, 12, 2), ruleset, standards, weights,
             40.0)  # warm caches (graph views, table loads) as a second run would have them
    started = time.perf_counter()
    result = plan_day(topology, findings, dt.date(2026, 12, 2), ruleset, standards,
                      weights, 40.0)
    elapsed = time.perf_counter() - started
    peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"{len(topology.elements)} elements, {count} findings → {len(result.packages)} "
          f"packages, {len(result.conflicts)} conflicts")
    print(f"planning: {elapsed:.2f} s (target < 1 s); peak memory {peak_mb:.0f} MB")


if __name__ == "__main__":
    main()
