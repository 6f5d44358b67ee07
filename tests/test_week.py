"""A scripted week on the demo vessel, through the command line, one records store.

Day 1's rounds (the demo findings of 2026-12-01) are planned for 2026-12-02; a late
reading comes in and the day is planned again; on 12-02 the windlass dry-out is recorded
with its locks left on (suspended), the lighting bank's inspection passes and the fire
pump's periodic insulation test fails; then 12-03 to 12-06 are planned from the store
alone (no new findings) while the dry-out runs three days and the fire pump is dried out.
Each step asserts what a supervisor relies on: ids stable and unique, the locks still on
shown and carried, due dates moved, follow-ups planned, nothing booked twice.

Names and readings are invented; the limits are the planner's (IEEE Std 43 via the rules).
"""

from __future__ import annotations

import contextlib
import datetime as dt
import io
import json
import re
from collections import Counter, defaultdict
from pathlib import Path
from typing import Any

import pytest
import yaml
from weekdata import filled_results

from workpack.cli import main
from workpack.store import open_store

ROOT = Path(__file__).resolve().parent.parent
VESSEL = str(ROOT / "plants" / "demo-vessel.yaml")
FINDINGS = ROOT / "plants" / "demo-vessel-findings.yaml"
PLANT = "MV Skerry Lantern"
CREW_HOURS = "45"
TECH, CHIEF = "S. Quayle (ETO)", "R. Penhallow (C/E)"
LATE = """
  - kind: defect
    at: 2026-12-01T18:30
    by: T. Marrow (3/E)
    where: SWP-1
    text: gland leaking onto the terminal box of the sea water pump
    severity: high
"""


class Week:
    """The week's folders and store, and the command line run as a supervisor would."""

    def __init__(self, root: Path):
        self.root = root
        self.db = str(root / "week.sqlite")
        self.plans: dict[str, dict[str, Any]] = {}  # day → what its plan printed and wrote

    def run(self, *args: str, exits: int = 0) -> str:
        out, err = io.StringIO(), io.StringIO()
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            status = main(list(args))
        assert status == exits, err.getvalue()
        return out.getvalue()

    def plan(self, day: str, findings: Path) -> dict[str, Any]:
        out = self.root / "out" / day
        text = self.run("plan", VESSEL, str(findings), "--db", self.db, "--date", day,
                        "--crew-hours", CREW_HOURS, "--by", CHIEF, "--out", str(out))
        packages = {p.stem: json.loads(p.read_text(encoding="utf-8"))
                    for p in sorted(out.glob("WP-*.json"))
                    if json.loads(p.read_text(encoding="utf-8"))["date"] == day}
        listed = re.findall(r"^  (WP-\S+)  P\d  (scheduled|deferred)", text, re.M)
        self.plans[day] = {"text": text, "packages": packages, "order": [i for i, _ in listed],
                           "scheduled": [i for i, s in listed if s == "scheduled"]}
        return self.plans[day]

    def record(self, day_folder: str, package_id: str, on: str, **filled: Any) -> str:
        package = self.root / "out" / day_folder / f"{package_id}.json"
        sheet = self.root / f"{package_id}-{on}.yaml"
        data = json.loads(package.read_text(encoding="utf-8"))
        sheet.write_text(yaml.safe_dump(filled_results(data, on, by=TECH, supervisor=CHIEF,
                                                       **filled), allow_unicode=True),
                         encoding="utf-8")
        # record exits 1 on a job found wanting (failed, or left incomplete)
        exits = 0 if filled.get("megohms", "500 MΩ") == "500 MΩ" else 1
        return self.run("record", str(package), str(sheet), "--db", self.db,
                        "--at", f"{on}T16:00+00:00", exits=exits)

    def status(self, day: str) -> dict[str, Any]:
        loaded: dict[str, Any] = json.loads(self.run(
            "status", VESSEL, "--db", self.db, "--date", day, "--days", "14", "--json"))
        return loaded

    def events(self) -> list[Any]:
        with open_store(self.db, plant=PLANT, create=False) as store:
            return list(store.events())


def by_title(plan: dict[str, Any]) -> dict[str, str]:
    return {p["title"]: i for i, p in plan["packages"].items()}


def find(plan: dict[str, Any], item: str, rule: str) -> str:
    found = [i for i, p in plan["packages"].items()
             if p["item"] == item and p["origin"]["rule"] == rule]
    assert len(found) == 1, (item, rule, found)
    return found[0]


def nothing_booked_twice(plan: dict[str, Any]) -> None:
    """One package per id and per job; one job per item and rule; the scheduled
    packages fit the crew's hours; no routine test on an item a job still holds."""
    packages = plan["packages"]
    assert len(plan["order"]) == len(set(plan["order"])) == len(packages)
    pairs = Counter((p["item"], p["origin"]["rule"]) for p in packages.values())
    assert max(pairs.values()) == 1, pairs
    hours = sum(packages[i]["duration_h"] * packages[i]["crew"] for i in plan["scheduled"])
    assert hours <= float(CREW_HOURS)
    routine_items = Counter(p["item"] for p in packages.values() if p["origin"]["routine"])
    repair_items = Counter(p["item"] for p in packages.values()
                           if p["origin"]["rule"] == "low-insulation")
    assert not set(routine_items) & set(repair_items), (routine_items, repair_items)


@pytest.fixture(scope="module")
def week(tmp_path_factory: pytest.TempPathFactory) -> Any:
    """Runs the whole week once; each test reads what a step left."""
    root = tmp_path_factory.mktemp("week")
    w = Week(root)
    steps: dict[str, Any] = {}
    w.run("store", "init", w.db, "--plant", PLANT)

    # Day 1: the rounds' findings, planned for 12-02; then a late reading, planned again.
    first = w.plan("2026-12-02", FINDINGS)
    steps["first"] = {"order": list(first["order"]), "titles": by_title(first),
                      "scheduled": list(first["scheduled"])}
    late = root / "findings-late.yaml"
    late.write_text(FINDINGS.read_text(encoding="utf-8") + LATE, encoding="utf-8")
    steps["replan"] = w.plan("2026-12-02", late)
    steps["status-0"] = w.status("2026-12-02")

    # 12-02's work: the dry-out goes on with its locks on; an inspection passes; the fire
    # pump's periodic insulation test fails.
    plan = steps["replan"]
    windlass = find(plan, "WL-1", "low-insulation")
    inspection = find(plan, "T1", "bank-inspection")
    fire_pump = find(plan, "FP-1", "periodic-insulation-survey")
    steps["ids"] = {"windlass": windlass, "inspection": inspection, "fire pump": fire_pump}
    w.run("job", "started", windlass, "--db", w.db, "--by", TECH,
          "--at", "2026-12-02T08:00+00:00")
    steps["record-windlass-1"] = w.record("2026-12-02", windlass, "2026-12-02",
                                          megohms="2 MΩ",
                                          locks_left_on="dry-out goes on overnight")
    steps["record-inspection"] = w.record("2026-12-02", inspection, "2026-12-02")
    steps["record-fire-pump"] = w.record("2026-12-02", fire_pump, "2026-12-02",
                                         megohms="1 MΩ")
    steps["status-1"] = w.status("2026-12-03")

    empty = root / "no-findings.yaml"
    empty.write_text("date: 2026-12-02\nfindings: []\n", encoding="utf-8")
    steps["day-2"] = w.plan("2026-12-03", empty)
    dry_out = find(steps["day-2"], "FP-1", "low-insulation")
    steps["ids"]["fire pump dry-out"] = dry_out

    # 12-03: second day of the windlass dry-out, still below its minimum.
    steps["record-windlass-2"] = w.record("2026-12-03", windlass, "2026-12-03",
                                          megohms="3 MΩ", locked_on="2026-12-02",
                                          locks_left_on="dry-out goes on overnight")
    steps["day-3"] = w.plan("2026-12-04", empty)

    # 12-04: the windlass passes and its locks come off; 12-05: the fire pump passes.
    steps["record-windlass-3"] = w.record("2026-12-04", windlass, "2026-12-04",
                                          locked_on="2026-12-02")
    steps["status-3"] = w.status("2026-12-05")
    steps["day-4"] = w.plan("2026-12-05", empty)
    steps["record-dry-out"] = w.record("2026-12-03", dry_out, "2026-12-05")
    steps["day-5"] = w.plan("2026-12-06", empty)
    steps["status-5"] = w.status("2026-12-06")
    steps["events"] = w.events()
    steps["plans"] = w.plans
    with open_store(w.db, plant=PLANT, create=False) as store:
        steps["records"] = list(store.records())
        steps["verify"] = (store.verify().ok, store.verify_events())
    return steps


# --- ids ---------------------------------------------------------------------------------


def test_a_replan_after_a_late_reading_keeps_every_id_on_its_job(week: Any) -> None:
    """Issue 12: a late reading turned WP-…-06 from the windlass job into another job."""
    before, after = week["first"], week["replan"]
    assert by_title(after).items() >= before["titles"].items()
    new = set(after["packages"]) - set(before["order"])
    assert len(new) == 1
    (added,) = new
    assert after["packages"][added]["item"] == "SWP-1"
    assert added == f"WP-SKL-20261202-{len(before['order']) + 1:02d}"  # after every id


def test_ids_carry_the_plant_code_and_are_never_given_to_another_job(week: Any) -> None:
    keys_of = defaultdict(set)
    for event in week["events"]:
        keys_of[event.package_id].add(event.job_key)
        assert re.fullmatch(r"WP-SKL-\d{8}-\d{2}", event.package_id)
    assert all(len(keys) == 1 for keys in keys_of.values()), keys_of
    for plan in week["plans"].values():
        nothing_booked_twice(plan)


def test_open_jobs_keep_their_ids_from_day_to_day(week: Any) -> None:
    first = set(week["replan"]["packages"])
    done = {week["ids"]["inspection"], week["ids"]["fire pump"]}
    day2 = set(week["day-2"]["packages"])
    assert first - done <= day2  # nothing recorded yet comes back under its own id
    assert not done & day2


# --- locks, suspension, multi-day jobs ----------------------------------------------------


def test_a_job_recorded_with_its_locks_on_is_suspended_not_failed(week: Any) -> None:
    assert f"job {week['ids']['windlass']} suspended" in week["record-windlass-1"]
    windlass = [j for j in week["status-1"]["suspended"]]
    assert [j["package_id"] for j in windlass] == [week["ids"]["windlass"]]
    assert windlass[0]["state"] == "suspended"


def test_locks_still_on_are_shown_in_the_morning_and_carried_into_the_plan(week: Any) -> None:
    locks = week["status-1"]["locks_on"]
    assert {lock["device"] for lock in locks} >= {"CB-WL1"}
    assert {lock["package_id"] for lock in locks} == {week["ids"]["windlass"]}
    assert all(lock["lock"] and lock["applied_by"] == TECH and lock["applied_at"]
               for lock in locks)
    text = week["day-2"]["text"]
    assert f"locks still on: CB-WL1 is still locked for {week['ids']['windlass']}" in text
    assert week["status-0"]["locks_on"] == []


def test_the_suspended_job_comes_first_the_next_day_under_its_own_id(week: Any) -> None:
    for day in ("day-2", "day-3"):
        windlass = week["ids"]["windlass"]
        assert week[day]["order"][0] == windlass
        assert windlass in week[day]["scheduled"]
        locks_on = week[day]["packages"][windlass]["locks_on"]  # printed on the package
        assert any(lock["device"] == "CB-WL1" and lock["text"].startswith(
            f"CB-WL1 is still locked for {windlass}") for lock in locks_on)


def test_a_dry_out_over_three_days_is_one_job_with_daily_entries(week: Any) -> None:
    windlass = week["ids"]["windlass"]
    records = [r for r in week["records"] if r.package_id == windlass]
    assert [r.verdict for r in records] == ["failed", "failed", "passed"]
    assert len({r.package_sha256 for r in records}) == 3  # issued afresh each day
    kinds = [e.kind for e in week["events"] if e.package_id == windlass]
    assert kinds.count("suspended") == 2 and kinds[-1] == "completed"
    assert "started" in kinds and kinds.count("carried_over") == 2
    assert windlass not in week["day-4"]["packages"]
    assert week["status-3"]["locks_on"] == []  # its locks came off with the last entry


# --- due dates and follow-ups -------------------------------------------------------------


def test_a_routine_test_recorded_as_passed_moves_its_due_date(week: Any) -> None:
    before = {(d["element"], d["test"]): d for d in week["status-0"]["overdue"]}
    assert ("T1", "transformer_inspection") in before
    after = {(d["element"], d["test"]) for d in week["status-1"]["overdue"]}
    assert ("T1", "transformer_inspection") not in after
    assert not [p for p in week["day-2"]["packages"].values()
                if p["item"] == "T1" and p["origin"]["routine"]]


def test_a_failed_insulation_test_becomes_tomorrows_dry_out_not_another_routine_test(
        week: Any) -> None:
    assert "FAILED" in week["record-fire-pump"]
    day2 = week["day-2"]["packages"]
    dry_out = day2[week["ids"]["fire pump dry-out"]]
    assert dry_out["origin"]["findings"][0].startswith(week["ids"]["fire pump"] + ".")
    assert not [p for p in day2.values()
                if p["item"] == "FP-1" and p["origin"]["routine"]]  # not planned twice


def test_the_follow_up_passing_answers_the_routine_test(week: Any) -> None:
    due = {(d["element"], d["test"]): d for d in week["status-5"]["due_soon"]
           + week["status-5"]["overdue"]}
    assert ("FP-1", "insulation_resistance") not in due
    assert not [p for p in week["day-5"]["packages"].values() if p["item"] == "FP-1"]


def test_the_store_stays_verifiable_all_week(week: Any) -> None:
    assert week["verify"] == (True, [])


def test_status_text_names_the_locks_for_a_change_of_supervisor(tmp_path: Path,
                                                                capsys: Any) -> None:
    db = tmp_path / "s.sqlite"
    assert main(["store", "init", str(db), "--plant", PLANT]) == 0
    capsys.readouterr()
    assert main(["status", VESSEL, "--db", str(db), "--date", "2026-12-02"]) == 0
    out = capsys.readouterr().out
    assert out.startswith(f"{PLANT}: status on 2026-12-02\n")
    assert "Locks on now: none" in out and "Routine tests overdue:" in out


def test_a_job_event_the_state_does_not_allow_is_refused(week: Any, tmp_path: Path,
                                                         capsys: Any) -> None:
    db = tmp_path / "j.sqlite"
    assert main(["store", "init", str(db), "--plant", PLANT]) == 0
    capsys.readouterr()
    assert main(["job", "resumed", "WP-SKL-20261202-01", "--db", str(db), "--by", TECH]) == 2
    err = capsys.readouterr().err
    assert err.startswith("WP-SKL-20261202-01: no job has that id") and err.count("\n") == 1


def test_the_days_are_dated_as_planned(week: Any) -> None:
    for day, plan in week["plans"].items():
        assert {p["date"] for p in plan["packages"].values()} == {day}
        assert dt.date.fromisoformat(day)
