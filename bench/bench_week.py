"""Benchmark: the next day's plan and the morning's status from a year of history.

A generated 5,000-item plant (``benchdata``) and an SQLite store holding a year of its
work: about 20,000 records (results filled by ``tests/weekdata.py`` and evaluated, as
``record`` stores them) and their job events (planned, started, completed or suspended,
carried over), with jobs still open and locks still on at the end. Everything is
invented for timing.

Measured, in CPU seconds of this process, after the plant is read (as bench_plan.py):

- plan: open the store, read every record's planning summary (kept beside it by
  ``append``) into the planning history and every job event into the jobs' states,
  carry them forward, plan the next day's findings (a typical day: 60) and build the
  plan's events; target < 2 s;
- status: open the store, read the job states it keeps beside the events (the open
  jobs, each routine test's last pass), the routine tests' due dates; target < 1 s.

Exits 1 on a missed target or when the plan does not take the open jobs along.

Run: .venv/bin/python bench/bench_week.py [records]
"""

from __future__ import annotations

import datetime as dt
import json
import random
import statistics
import sys
import tempfile
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(HERE.parent / "tests"))

from benchdata import (  # noqa: E402
    DAY,
    cpu_timed,
    findings_yaml,
    plant_yaml,
    scale_plant_data,
)
from weekdata import filled_results  # noqa: E402

from workpack.electrical import available_code_sets, load_code_set  # noqa: E402
from workpack.evaluate import evaluate  # noqa: E402
from workpack.history import history_from_planning  # noqa: E402
from workpack.joblog import (  # noqa: E402
    carry_forward,
    fold,
    plan_events,
    record_event,
    status,
    with_carried,
)
from workpack.jobstates import jobs_for_status  # noqa: E402
from workpack.loading import (  # noqa: E402
    load_findings_text,
    load_plant_text,
    load_ruleset,
    load_weights,
)
from workpack.model.findings import Findings  # noqa: E402
from workpack.model.results import Results  # noqa: E402
from workpack.plan import DayPlan, plan_day  # noqa: E402
from workpack.records import record_payload  # noqa: E402
from workpack.store import NewEvent, SQLiteStore, package_sha256  # noqa: E402
from workpack.topology import Topology  # noqa: E402

RULES = HERE.parent / "rules"
RECORDS = 20_000
DAY_FINDINGS = 60
PLAN_TARGET_S, STATUS_TARGET_S = 2.0, 1.0
REPETITIONS = 3
T0 = dt.datetime(2025, 12, 2, 16, 0, tzinfo=dt.UTC)


def build_year(store: SQLiteStore, sample: DayPlan, year: Findings, standards: dict,
               count: int) -> None:
    """``count`` records over the year before ``DAY`` and their events: each day a share
    of the sample day's packages is planned (under their job keys, with their findings),
    done and recorded (one in ten failed, one in fifty suspended with its locks on); a
    third of the last day's are left open."""
    rnd = random.Random(2026)
    packages = list(sample.packages)
    by_id = {str(f.id): f.model_dump(mode="json", exclude_none=True) for f in year.findings}
    payloads = {}
    for package in packages:  # one evaluated payload per package, reused day after day
        data = json.loads(package.model_dump_json())
        for verdict, megohms in (("passed", "500 MΩ"), ("failed", "1 MΩ")):
            results = Results.model_validate(filled_results(
                data, package.date.isoformat(), by="bench", supervisor="bench chief",
                megohms=megohms))
            evaluation = evaluate(package, results, standards)
            payloads[package.id, verdict] = (record_payload(results, evaluation),
                                             evaluation.verdict, results, evaluation)
    per_day = max(1, count // 365)
    # Setting up the year is not what is timed: one fsync per transaction is the disk's.
    store._conn.execute("PRAGMA synchronous = OFF")  # noqa: SLF001 (bench set-up only)
    number = 0
    suspended: list[tuple[str, str]] = []  # (package id, job key) left suspended yesterday
    for day_index in range(365):
        day = DAY - dt.timedelta(days=365 - day_index)
        at = T0 + dt.timedelta(days=day_index)
        chosen = rnd.sample(packages, min(per_day, len(packages)))
        # yesterday's suspended jobs are finished today (a two-day job)
        events = [NewEvent(package_id, key, "completed", day, at, "bench",
                           {"verdict": "passed", "locks": [], "followups": []})
                  for package_id, key in suspended]
        suspended = []
        for n, package in enumerate(chosen, start=1):
            number += 1
            package_id = f"WP-GEN-{day:%Y%m%d}-{n:02d}"
            key = sample.keys[package.id]
            events.append(NewEvent(package_id, key, "planned", day, at, "bench", {
                "item": package.item, "rule": package.origin.rule, "title": package.title,
                "routine": None, "routine_element": None, "scheduled": True,
                "findings": [by_id[f] for f in package.origin.findings if f in by_id]}))
            if day_index == 364 and n % 3 == 0:
                continue  # left open for tomorrow
            verdict = "failed" if rnd.random() < 0.1 else "passed"
            payload, judged, results, evaluation = payloads[package.id, verdict]
            record = store.append(package_id=package_id,
                                  package_sha256=package_sha256(package),
                                  results=payload, recorded_by="bench", recorded_at=at,
                                  verdict=judged)
            kind, detail = record_event(package_id, results, evaluation)
            # one in fifty, and one on the last day: its locks are still on tomorrow
            if rnd.random() < 0.02 or (day_index == 364 and n == 1):
                kind = "suspended"
                suspended.append((package_id, key))
                detail["locks"] = [{"device": p.device, "package_id": package_id,
                                    "lock": f"L-{number}", "applied_by": "bench",
                                    "applied_at": f"{day} 08:00", "why": "dry-out"}
                                   for p in package.isolation[:2]]
            events.append(NewEvent(package_id, key, kind, day, at, "bench",
                                   {**detail, "record": record.sequence}))
        store.append_events(events)


def from_store(path: Path, topology: Topology, findings_text: str):  # type: ignore[no-untyped-def]
    """What the plan reads from the store and carries forward: the part this issue adds."""
    plant = topology.plant
    with SQLiteStore(path, create=False) as store:
        history = history_from_planning(store.planning_records(),
                                        plant.plant.code_set.rotating_machines)
        jobs = fold(store.events())
    findings = load_findings_text(findings_text, "findings.yaml", topology)
    carry = carry_forward(jobs, DAY)
    findings, _ = with_carried(findings, carry.findings, set(topology.elements))
    return history, carry, findings


def history_only(path: Path, topology: Topology) -> object:
    """The planning history alone (every record's summary read): for the breakdown."""
    with SQLiteStore(path, create=False) as store:
        return history_from_planning(store.planning_records(),
                                     topology.plant.plant.code_set.rotating_machines)


def plan_next_day(path: Path, topology: Topology, findings_text: str, standards: dict):  # type: ignore[no-untyped-def]
    plant = topology.plant
    ruleset = load_ruleset(RULES)
    weights = load_weights(RULES / "search-weights.yaml")
    history, carry, findings = from_store(path, topology, findings_text)
    result = plan_day(Topology(plant), findings, DAY, ruleset, standards, weights, 40.0,
                      history=history, carried=carry.carried)
    events = plan_events(result, carry, findings, T0 + dt.timedelta(days=366), "bench")
    return result, carry, events


def status_now(path: Path, plant):  # type: ignore[no-untyped-def]
    with SQLiteStore(path, create=False) as store:
        jobs = jobs_for_status(store, DAY)
    return status(plant, jobs, DAY, 14)


def main(count: int = RECORDS) -> int:
    data = scale_plant_data(5000)
    plant_text = plant_yaml(data)
    read_s, (plant, topology) = cpu_timed(lambda: load_plant_text(plant_text, "gen.yaml"))
    standards = {name: load_code_set(name) for name in available_code_sets()}
    ruleset = load_ruleset(RULES)
    weights = load_weights(RULES / "search-weights.yaml")
    year = load_findings_text(findings_yaml(data, 200), "year.yaml", topology)
    sample = plan_day(topology, year, DAY, ruleset, standards, weights, 10_000.0)
    day_text = findings_yaml(data, DAY_FINDINGS)
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "year.sqlite"
        with SQLiteStore(path, plant=plant.plant.name) as store:
            build_year(store, sample, year, standards, count)
            records = sum(1 for _ in store.records())
            events = sum(1 for _ in store.events())
        store_s, _ = cpu_timed(lambda: from_store(path, topology, day_text))
        history_s, _ = cpu_timed(lambda: history_only(path, topology))
        plan_times, status_times = [], []
        result = carry = report = None
        for _ in range(REPETITIONS):
            seconds, (result, carry, _events) = cpu_timed(
                lambda: plan_next_day(path, topology, day_text, standards))
            plan_times.append(seconds)
            seconds, report = cpu_timed(lambda: status_now(path, plant))
            status_times.append(seconds)
    assert result is not None and carry is not None and report is not None
    problems = []
    carried_ids = set(carry.carried.issued.open.values())
    if not carried_ids or not carried_ids & {p.id for p in result.packages}:
        problems.append("no open job of the last day came back under its own id")
    if not report.locks_on:
        problems.append("the status shows no lock still on")
    plan_s, status_s = max(plan_times), max(status_times)
    print(f"plant {len(topology.elements)} items (read in {read_s:.2f} s, not counted); store "
          f"{records} records, {events} job events; {len(carried_ids)} jobs open, "
          f"{len(report.locks_on)} locks on")
    print(f"next day's plan ({DAY_FINDINGS} findings → {len(result.packages)} packages): "
          f"median {statistics.median(plan_times):.2f}, slowest {plan_s:.2f} CPU s over "
          f"{REPETITIONS} runs (target < {PLAN_TARGET_S:g} s); of which reading the store "
          f"and carrying the jobs forward {store_s:.2f}, and of that the records' history "
          f"alone {history_s:.2f}")
    print(f"status: median {statistics.median(status_times):.2f}, slowest {status_s:.2f} CPU s "
          f"(target < {STATUS_TARGET_S:g} s)")
    for problem in problems:
        print(f"PROBLEM: {problem}")
    missed = [f"{what} took {took:.2f} s, target < {target:g} s"
              for what, took, target in (("plan", plan_s, PLAN_TARGET_S),
                                         ("status", status_s, STATUS_TARGET_S))
              if took >= target]
    for miss in missed:
        print(f"MISSED: {miss}")
    return 1 if problems or missed else 0


if __name__ == "__main__":
    raise SystemExit(main(*(int(a) for a in sys.argv[1:2])))
