"""Issue 12, point 3: a dry-out's passed acceptance test counts as the item's overdue
periodic insulation test only when it is at least as demanding (same test of the same
item, test voltage and duration at least the routine's, the same temperature correction,
a limit at least as strict); otherwise the routine stays planned and the plan says why.

The demo vessel with the windlass's periodic insulation test made overdue; the rounds
find its insulation low, so 12-02 plans both its dry-out and its periodic test. Names and
readings are invented; the limits are the planner's.
"""

from __future__ import annotations

import contextlib
import io
import json
from pathlib import Path
from typing import Any

import yaml
from weekdata import filled_results

from workpack.cli import main
from workpack.model.package import WorkPackage
from workpack.plan.carry import judged_work_readings, reading_test, shortfall
from workpack.store import open_store

ROOT = Path(__file__).resolve().parent.parent
FINDINGS = ROOT / "plants" / "demo-vessel-findings.yaml"
PLANT = "MV Skerry Lantern"
TECH, CHIEF = "S. Quayle (ETO)", "R. Penhallow (C/E)"
WINDLASS_ROUTINE = "{test: insulation_resistance, every: 6 months, last_done: 2026-06-15}"


def run(*args: str, exits: int = 0) -> str:
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        status = main(list(args))
    assert status == exits, err.getvalue()
    return out.getvalue()


class Days:
    def __init__(self, root: Path):
        self.root = root
        text = (ROOT / "plants" / "demo-vessel.yaml").read_text(encoding="utf-8")
        assert text.count(WINDLASS_ROUTINE) == 1
        self.plant = root / "vessel.yaml"
        self.plant.write_text(text.replace(WINDLASS_ROUTINE, WINDLASS_ROUTINE.replace(
            "2026-06-15", "2026-05-01")), encoding="utf-8")  # due 11-01: overdue
        self.db = str(root / "days.sqlite")
        self.empty = root / "none.yaml"
        self.empty.write_text("date: 2026-12-02\nfindings: []\n", encoding="utf-8")
        run("store", "init", self.db, "--plant", PLANT)

    def plan(self, day: str, findings: Path) -> tuple[str, dict[str, Any]]:
        out = self.root / "out" / day
        text = run("plan", str(self.plant), str(findings), "--db", self.db, "--date", day,
                   "--crew-hours", "45", "--by", CHIEF, "--out", str(out))
        return text, {p.stem: json.loads(p.read_text(encoding="utf-8"))
                      for p in sorted(out.glob("WP-*.json"))}

    def record(self, day: str, package: dict[str, Any], megohms: str, exits: int) -> None:
        path = self.root / "out" / day / f"{package['id']}.json"
        sheet = self.root / f"{package['id']}.yaml"
        sheet.write_text(yaml.safe_dump(filled_results(
            package, day, by=TECH, supervisor=CHIEF, megohms=megohms),
            allow_unicode=True), encoding="utf-8")
        run("record", str(path), str(sheet), "--db", self.db, "--at", f"{day}T16:00+00:00",
            exits=exits)

    def status(self, day: str) -> dict[str, Any]:
        loaded: dict[str, Any] = json.loads(run(
            "status", str(self.plant), "--db", self.db, "--date", day, "--days", "400",
            "--json"))
        return loaded


def windlass(packages: dict[str, Any], rule: str) -> dict[str, Any] | None:
    found = [p for p in packages.values()
             if p["item"] == "WL-1" and p["origin"]["rule"] == rule]
    assert len(found) <= 1
    return found[0] if found else None


def first_day(tmp_path: Path) -> tuple[Days, dict[str, Any], dict[str, Any]]:
    days = Days(tmp_path)
    _, packages = days.plan("2026-12-02", FINDINGS)
    dry_out = windlass(packages, "low-insulation")
    routine = windlass(packages, "periodic-insulation-survey")
    assert dry_out is not None and routine is not None
    return days, dry_out, routine


def test_a_passed_dry_out_counts_as_the_overdue_routine_test(tmp_path: Path) -> None:
    days, dry_out, routine = first_day(tmp_path)
    overdue = {(d["element"], d["test"]) for d in days.status("2026-12-02")["overdue"]}
    assert ("WL-1", "insulation_resistance") in overdue
    days.record("2026-12-02", dry_out, "500 MΩ", exits=0)

    due = {(d["element"], d["test"]): d for d in days.status("2026-12-03")["due_soon"]}
    windlass_due = due[("WL-1", "insulation_resistance")]
    assert windlass_due["last_done"] == "2026-12-02"
    assert windlass_due["due_on"] > "2027-05-01"  # six months on from the dry-out
    text, packages = days.plan("2026-12-03", days.empty)
    assert windlass(packages, "periodic-insulation-survey") is None
    line = (f"WL-1 insulation_resistance ({routine['id']}) counted as done on 2026-12-02 "
            f"by {dry_out['id']}")
    assert line in text and text.count(line) == 1
    with open_store(days.db, plant=PLANT, create=False) as store:
        cancelled = [e for e in store.events() if e.package_id == routine["id"]][-1]
    assert cancelled.kind == "cancelled" and cancelled.detail["counted_on"] == "2026-12-02"

    # Once the routine job is cancelled as counted, the next days still count it.
    text, packages = days.plan("2026-12-04", days.empty)
    assert windlass(packages, "periodic-insulation-survey") is None
    assert "WL-1 insulation_resistance" not in text
    due = {(d["element"], d["test"]): d for d in days.status("2026-12-04")["due_soon"]}
    assert due[("WL-1", "insulation_resistance")]["last_done"] == "2026-12-02"


def test_a_failed_dry_out_leaves_the_routine_test_planned_and_says_why(
        tmp_path: Path) -> None:
    days, dry_out, routine = first_day(tmp_path)
    days.record("2026-12-02", dry_out, "1 MΩ", exits=1)  # failed, locks off
    overdue = {(d["element"], d["test"]) for d in days.status("2026-12-03")["overdue"]}
    assert ("WL-1", "insulation_resistance") in overdue
    text, packages = days.plan("2026-12-03", days.empty)
    again = windlass(packages, "periodic-insulation-survey")
    assert again is not None and again["id"] == routine["id"]
    assert (f"WL-1 insulation_resistance ({routine['id']}) is still planned: "
            f"{dry_out['id']} was recorded as failed") in text


def test_a_weaker_acceptance_test_does_not_stand_for_the_routine(tmp_path: Path) -> None:
    """The real packages of 12-02: the dry-out's final tests stand for the periodic test;
    the same tests at a lower voltage, for less time, after another correction or against
    a lower minimum do not, and the reason names the test."""
    _, dry_out, routine = first_day(tmp_path)
    needed = [reading_test(r) for r in judged_work_readings(WorkPackage.model_validate(routine))]
    passed = [reading_test(r) for r in judged_work_readings(WorkPackage.model_validate(dry_out))]
    assert {t["test"] for t in needed} >= {"WL-1 polarization index (10 min / 1 min)"}
    assert any(t["test_voltage_v"] for t in needed)
    assert shortfall(needed, passed) is None
    first = next(t for t in needed if t["test_voltage_v"])
    for change, words in (({"test_voltage_v": first["test_voltage_v"] / 2},
                           "a lower test voltage"),
                          ({"minutes": 0.5}, "a shorter duration"),
                          ({"corrected_to_c": -1.0}, "a different temperature correction"),
                          ({"low": first["low"] / 2}, "a lower minimum")):
        weaker = [t | change if t["test"] == first["test"] else t for t in passed]
        assert shortfall(needed, weaker) == (
            f"its test of {first['test']} had {words} than the routine's")
    assert shortfall(needed, [t for t in passed if t["test"] != first["test"]]) == (
        f"it passed no test of {first['test']}")
    assert shortfall([], passed) is not None  # nothing to compare: never counted
