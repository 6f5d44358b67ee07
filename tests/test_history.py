"""The records feed the next plan: grounds found raise a circuit in the search, a fast
falling insulation trend brings the routine test forward."""

from __future__ import annotations

import datetime as dt
import sqlite3

import pytest
from conftest import ROOT

from workpack.cli import main
from workpack.history import history_from_planning, history_from_records
from workpack.loading import load_findings, load_ruleset, load_weights
from workpack.model.evaluation import Evaluation, ReadingVerdict
from workpack.model.results import Results
from workpack.plan import due_routines, plan_day
from workpack.records import read_back, record_payload
from workpack.store import StoreError, open_store
from workpack.trust_shell import check_planning_summaries

DAY = dt.date(2026, 12, 2)
HASH = "0" * 64


def ir_payload(element: str, ohms: float, day: str, *, found: str | None = None) -> dict:
    """A record's payload, written as ``record`` writes it, holding one insulation reading
    of ``element`` (already at 40 °C) taken on ``day``, and the ground found, if any."""
    reading = ReadingVerdict(
        id="S1.R1", what=f"{element} phase A to earth", unit="MΩ", measured_si=ohms,
        temperature_c=40.0, compared_si=ohms, corrected_to_c=40.0, low=5e6, high=None,
        basis="IEEE Std 43", outcome="pass", element=element, code_set="ieee43-2013")
    taken = dt.date.fromisoformat(day)
    evaluation = Evaluation(
        package_id="WP-test", plant="MV Skerry Lantern", item=element, date=taken,
        verdict="passed", readings=(reading,), deviations=(), locks_not_removed=(),
        completed_by="x", supervisor="y", ground_found_at=found, followups=())
    return record_payload(Results(package="WP-test", completed_on=taken,
                                  ground_found_at=found), evaluation)


def store_with(tmp_path, payloads: list[tuple[str, dict, int | None]]):
    store = open_store(tmp_path / "r.sqlite")
    for n, (package, payload, supersedes) in enumerate(payloads, start=1):
        store.append(package_id=package, package_sha256=HASH, results=payload,
                     recorded_by="x", recorded_at=dt.datetime(2026, 1, n, tzinfo=dt.UTC),
                     verdict="passed", supersedes=supersedes)
    return store


def test_grounds_found_are_counted_once_per_effective_record(tmp_path) -> None:
    store = store_with(tmp_path, [
        ("WP-1", ir_payload("SWP-1", 9e6, "2026-01-01", found="SWP-1"), None),
        ("WP-2", ir_payload("SWP-1", 9e6, "2026-02-01", found="BP-1"), None),
        ("WP-2", ir_payload("SWP-1", 9e6, "2026-02-01", found="SWP-1"), 2),  # correction
    ])
    history = history_from_records(store.records(), "ieee43-2013")
    assert history.past_grounds == {"SWP-1": 2}


def test_falling_insulation_brings_the_routine_test_forward(demo_vessel, standards,
                                                           tmp_path) -> None:
    """SG-2's six-monthly test was done on 2026-09-02: not due on 2026-12-02 by its
    interval. Readings halving every few weeks (trend thresholds: common practice) make
    it due now."""
    plant = demo_vessel.plant
    assert not [r for e, r, _ in due_routines(plant, DAY) if e.id == "SG-2"]
    store = store_with(tmp_path, [
        (f"WP-{n}", ir_payload("SG-2", ohms, day), None)
        for n, (ohms, day) in enumerate([(400e6, "2026-09-02"), (150e6, "2026-10-15"),
                                         (40e6, "2026-11-20")], start=1)])
    history = history_from_records(store.records(), "ieee43-2013")
    trend = history.trend("SG-2", standards)
    assert trend is not None and trend.status.value in ("falling",
                                                        "projected to reach the minimum")
    due = [e.id for e, r, _ in due_routines(plant, DAY, history, standards)]
    assert "SG-2" in due


def test_past_grounds_move_a_circuit_up_the_search_in_the_package(
    demo_vessel, standards, tmp_path,
) -> None:
    findings = load_findings(ROOT / "plants" / "demo-vessel-findings.yaml", demo_vessel)
    ruleset = load_ruleset(ROOT / "rules")
    weights = load_weights(ROOT / "rules" / "search-weights.yaml")

    def first_search_step(history) -> str:
        plan = plan_day(demo_vessel, findings, DAY, ruleset, standards,
                        weights, 100.0, history=history)
        search = next(p for p in plan.packages if p.origin.rule == "locate-ground")
        return next(s.text for s in search.steps if s.text.startswith("Search on MSB"))

    store = store_with(tmp_path, [(f"WP-{n}", ir_payload("X", 9e6, "2026-01-01",
                                                         found="BP-1"), None)
                                  for n in range(1, 7)])
    before = first_search_step(None)
    after = first_search_step(history_from_records(store.records(), "ieee43-2013"))
    assert "Open CB-MCC2" in before
    assert "Open CB-BP1" in after


def test_plan_with_a_named_store_that_does_not_exist_is_an_error(tmp_path, capsys) -> None:
    from workpack.cli import main

    assert main(["plan", str(ROOT / "plants" / "demo-vessel.yaml"),
                 str(ROOT / "plants" / "demo-vessel-findings.yaml"), "--out",
                 str(tmp_path / "out"), "--db", str(tmp_path / "none.sqlite")]) == 2
    assert "no such records store" in capsys.readouterr().err


@pytest.mark.parametrize("backend", ["sqlite", "postgresql"])
def test_planning_summaries_give_the_history_the_payloads_give(tmp_path, request,
                                                                backend) -> None:
    """The planner reads the summary each record's transaction kept beside it, not the
    payload; what it gets is what reading every payload gives, and a payload planning
    cannot read (not a record's shape, or from a newer workpack) is still left out and
    still reported, exactly as before."""
    location = (str(tmp_path / "r.sqlite") if backend == "sqlite"
                else request.getfixturevalue("pg_store_url"))
    malformed = {"note": "entered by an older tool"}
    newer = {**ir_payload("SWP-1", 1e6, "2026-03-03"), "payload_version": 99}
    bad_reading = ir_payload("SWP-1", 2e6, "2026-03-04")
    bad_reading["evaluation"]["readings"][0]["measured_si"] = "lots"
    payloads = [("WP-1", ir_payload("SWP-1", 9e6, "2026-01-01", found="SWP-1"), None),
                ("WP-2", ir_payload("SWP-1", 8e6, "2026-02-01", found="BP-1"), None),
                ("WP-2", ir_payload("SWP-1", 7e6, "2026-02-01", found="SWP-1"), 2),
                ("WP-3", malformed, None), ("WP-4", newer, None), ("WP-5", bad_reading, None),
                ("WP-6", ir_payload("BP-1", 6.5e6, "2026-03-05"), None)]
    with open_store(location, plant=f"MV Summary {backend}") as store:
        for n, (package, payload, supersedes) in enumerate(payloads, start=1):
            store.append(package_id=package, package_sha256=HASH, results=payload,
                         recorded_by="x", recorded_at=dt.datetime(2026, 1, n, tzinfo=dt.UTC),
                         verdict="passed", supersedes=supersedes)
        rows = list(store.planning_records())
        assert store.fill_planning_summaries() == 0  # nothing missing
        assert check_planning_summaries(store) == []  # and each agrees with its record
        # every record of today's workpack has its summary: no payload is read
        assert [r.summary is not None and r.results_json is None for r in rows] == [True] * 7
        from_summaries = history_from_planning(rows, "ieee43-2013")
        from_payloads = history_from_records(store.records(), "ieee43-2013")
        read = {r.package_id: read_back(r).problem for r in store.records()}
    assert from_summaries == from_payloads
    assert from_summaries.past_grounds == {"SWP-1": 2}
    assert [r.resistance_ohm for r in from_summaries.insulation["SWP-1"].readings] == \
        [9e6, 7e6]
    assert list(from_summaries.insulation) == ["BP-1", "SWP-1"]
    assert [r.facts.readable for r in rows] == [True, True, True, False, False, False, True]
    # the same three payloads are refused, for the same reasons, by the whole reading
    assert {p: why for p, why in read.items() if why} == {
        "WP-3": "the record holds no evaluation",
        "WP-4": "the record's payload was written by a newer workpack (payload version 99; "
                "this one reads up to 3); upgrade workpack",
        "WP-5": "the record's evaluation.readings.0.measured_si does not read back: Input "
                "should be a valid number, unable to parse string as a number"}


def test_records_without_a_summary_are_read_whole(tmp_path) -> None:
    """A store written before summaries were kept (or by an older workpack) has records
    with none: the planner reads their payloads, with the same result, until a plan that
    may write keeps their summaries; a payload that is not JSON at all is refused as it
    always was."""
    store = store_with(tmp_path, [
        ("WP-1", ir_payload("SWP-1", 9e6, "2026-01-01", found="SWP-1"), None),
        ("WP-2", ir_payload("SWP-1", 8e6, "2026-02-01"), None)])
    store.close()
    with sqlite3.connect(tmp_path / "r.sqlite") as raw:
        raw.execute("DELETE FROM record_planning WHERE sequence = 2")
    with open_store(tmp_path / "r.sqlite") as store:
        rows = list(store.planning_records())
        assert [(r.summary is None, r.results_json is None) for r in rows] == \
            [(False, True), (True, False)]
        assert history_from_planning(rows, "ieee43-2013") == \
            history_from_records(store.records(), "ieee43-2013")
        # the next plan that may write keeps the missing summary, once
        assert (store.fill_planning_summaries(), store.fill_planning_summaries()) == (1, 0)
        assert [r.results_json for r in store.planning_records()] == [None, None]
    with sqlite3.connect(tmp_path / "r.sqlite") as raw:
        raw.execute("DROP TRIGGER records_no_update")
        raw.execute("UPDATE records SET results_json = '{not json' WHERE sequence = 2")
        raw.execute("DELETE FROM record_planning WHERE sequence = 2")
    with open_store(tmp_path / "r.sqlite") as store, \
            pytest.raises(StoreError, match="record 2 is damaged"):
        list(store.planning_records())


def test_verify_names_a_planning_summary_changed_outside_workpack(tmp_path, capsys) -> None:
    """The summaries are outside the hash chain: a changed one would hide a falling trend
    from the planner while every record still verifies, so verify recomputes them."""
    store_with(tmp_path, [("WP-1", ir_payload("SWP-1", 9e6, "2026-01-01"), None),
                          ("WP-2", ir_payload("SWP-1", 1e6, "2026-02-01"), None)]).close()
    db = str(tmp_path / "r.sqlite")
    assert main(["verify", "--db", db]) == 0
    assert "planning summary" not in capsys.readouterr().out
    with sqlite3.connect(db) as raw:
        raw.execute("UPDATE record_planning SET summary_json = replace(summary_json, "
                    "'1000000.0', '9000000.0') WHERE sequence = 2")
    assert main(["verify", "--db", db]) == 1
    out = capsys.readouterr().out
    assert f"{db}: record 2's planning summary does not match the record" in out
    assert "record 1's" not in out
