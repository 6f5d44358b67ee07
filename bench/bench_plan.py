"""Benchmark: plan a day on a generated 5,000-item plant, no PDF (issue 15: under 1 s).

What a planning run does after the plant is read, in CPU seconds of this process: read
the rules (with their lint), the search weights and the standards tables, read and check
200 findings (low megger readings, tripped breakers, defects, and a ground shown on the
main board's detector, so a ground search is planned too), and plan the day. Each
repetition starts from a fresh topology (no graph views or supply paths left over), and
from freshly read rules; the first one also pays what a process pays once (tables read,
templates compiled), as the command does. The target is checked against the slowest
repetition. The plan is checked (``benchdata.check_day_plan``); the bench exits 1 on a
problem or a missed target.

Run: .venv/bin/python bench/bench_plan.py [items] [findings]
"""

from __future__ import annotations

import statistics
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

from benchdata import (  # noqa: E402
    DAY,
    check_day_plan,
    cpu_timed,
    findings_yaml,
    plant_yaml,
    scale_plant_data,
)

from workpack.electrical import available_code_sets, load_code_set  # noqa: E402
from workpack.loading import (  # noqa: E402
    load_findings_text,
    load_plant_text,
    load_ruleset,
    load_weights,
)
from workpack.plan import plan_day  # noqa: E402
from workpack.topology import Topology  # noqa: E402

RULES = HERE.parent / "rules"
TARGET_S = 1.0
REPETITIONS = 5


def plan_once(plant, findings_text: str):  # type: ignore[no-untyped-def]
    """Rules, weights, tables, findings and the day's plan, on a fresh topology."""
    topology = Topology(plant)
    ruleset = load_ruleset(RULES)
    weights = load_weights(RULES / "search-weights.yaml")
    standards = {name: load_code_set(name) for name in available_code_sets()}
    findings = load_findings_text(findings_text, "findings.yaml", topology)
    result = plan_day(topology, findings, DAY, ruleset, standards, weights, 40.0)
    return result, topology, findings


def main(size: int = 5000, count: int = 200) -> int:
    data = scale_plant_data(size)
    findings_text = findings_yaml(data, count)
    plant, _ = load_plant_text(plant_yaml(data), "generated.yaml")
    times = []
    result = topology = findings = None
    for _ in range(REPETITIONS):
        seconds, (result, topology, findings) = cpu_timed(lambda: plan_once(plant,
                                                                          findings_text))
        times.append(seconds)
    rules_s, _ = cpu_timed(lambda: (load_ruleset(RULES),
                                    load_weights(RULES / "search-weights.yaml")))
    # the same day without the ground shown at the detector: what the search part costs
    no_ground = findings_yaml(data, count, ground=False)
    no_search_s, _ = cpu_timed(lambda: plan_once(plant, no_ground))
    problems = check_day_plan(result, topology, findings)
    assert result is not None and topology is not None
    worst = max(times)
    searches = sum(p.job_kind == "locate_ground" for p in result.packages)
    print(f"plant {len(topology.elements)} items, {count} findings → "
          f"{len(result.packages)} packages ({searches} a ground search), "
          f"{len(result.conflicts)} conflicts")
    print(f"plan with rules, CPU s: first {times[0]:.2f}, median {statistics.median(times):.2f}, "
          f"slowest {worst:.2f} over {REPETITIONS} runs (target < {TARGET_S:g} s); "
          f"of which reading the rules {rules_s:.2f}; the same day without the ground "
          f"search {no_search_s:.2f}")
    for problem in problems:
        print(f"PROBLEM: {problem}")
    if worst >= TARGET_S:
        print(f"MISSED: planning took {worst:.2f} s, target < {TARGET_S:g} s")
    return 1 if problems or worst >= TARGET_S else 0


if __name__ == "__main__":
    raise SystemExit(main(*(int(a) for a in sys.argv[1:3])))
