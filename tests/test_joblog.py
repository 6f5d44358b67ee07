"""The working week's pure parts: job ids, a job's state from its events, what the next
plan carries. Events, ids and names are invented; no store is opened here (the store
suite and tests/test_week.py run them through both)."""

from __future__ import annotations

import datetime as dt
from typing import Any

import pytest

from workpack.joblog import JobState, carry_forward, fold, refusal
from workpack.plan.carry import IssuedIds, assign_ids, package_id, routine_of_key
from workpack.store import JobEvent, canonical_json

DAY = dt.date(2026, 12, 3)
AT = dt.datetime(2026, 12, 2, 16, 0, tzinfo=dt.UTC)


def events(*specs: tuple[str, str, str, dt.date, dict[str, Any]]) -> list[JobEvent]:
    """(package id, job key, kind, day, detail) → numbered events."""
    return [JobEvent(n, pid, key, kind, day, AT + dt.timedelta(minutes=n), "A. Lindqvist",
                     canonical_json(detail))
            for n, (pid, key, kind, day, detail) in enumerate(specs, start=1)]


YESTERDAY = DAY - dt.timedelta(days=1)
P1, P2, P3 = (package_id("SKL", YESTERDAY, n) for n in (1, 2, 3))


# --- ids ---------------------------------------------------------------------------------


def test_open_jobs_keep_their_ids_and_new_jobs_follow_every_id_of_the_day() -> None:
    issued = IssuedIds(open={"a": "WP-SKL-20261203-02"},
                       taken=frozenset({"WP-SKL-20261203-01", "WP-SKL-20261203-02",
                                        "WP-SKL-20261203-07", "WP-XYZ-20261203-09",
                                        "WP-SKL-20261202-11"}))
    # 07 was issued and cancelled: never given again; other plants and days do not count
    assert assign_ids("SKL", DAY, ["b", "a", "c"], issued) == [
        "WP-SKL-20261203-08", "WP-SKL-20261203-02", "WP-SKL-20261203-09"]


def test_two_jobs_of_one_plan_never_share_a_key() -> None:
    with pytest.raises(ValueError, match="same job key"):
        assign_ids("SKL", DAY, ["a", "a"], IssuedIds())


def test_a_routine_jobs_key_names_its_test_and_element() -> None:
    key = "periodic-insulation-survey|item:FP-1|routine:insulation_resistance@FP-1"
    assert routine_of_key(key) == ("insulation_resistance", "FP-1")
    assert routine_of_key("low-insulation|item:WL-1") == (None, None)


# --- state -------------------------------------------------------------------------------


def test_a_job_gathers_the_answers_of_every_plan_that_named_some() -> None:
    # fold reads a plan's detail only when it names answers: these must all be kept
    jobs = fold(events(
        (P1, "k1", "planned", YESTERDAY, {"item": "WL-1", "answers": [P2]}),
        (P1, "k1", "planned", DAY, {"item": "WL-1", "answers": []}),
        (P1, "k1", "planned", DAY, {"item": "WL-1", "answers": [P3, P1]}),
        (P2, "k2", "planned", DAY, {"item": "WL-2", "title": "answers"}),
    ))
    assert jobs[P1].answers == (P2, P3)
    assert jobs[P2].answers == ()


def test_a_jobs_state_is_its_last_event_but_a_carry_over() -> None:
    jobs = fold(events(
        (P1, "k1", "planned", YESTERDAY, {"item": "WL-1"}),
        (P1, "k1", "suspended", YESTERDAY, {"verdict": "failed", "locks": [
            {"device": "CB-WL1", "package_id": P1, "lock": "L-07"}]}),
        (P1, "k1", "carried_over", DAY, {}),
    ))
    job = jobs[P1]
    assert job.state == "suspended" and job.open and job.carried_to == (DAY,)
    assert [lock.device for lock in job.locks] == ["CB-WL1"]
    assert job.entries == (YESTERDAY,)


@pytest.mark.parametrize(("state", "kind", "allowed"), [
    (None, "started", False), ("planned", "started", True), ("suspended", "resumed", True),
    ("planned", "resumed", False), ("completed", "started", False),
    ("cancelled", "completed", False), ("completed", "carried_over", True),
])
def test_an_event_must_follow_from_the_jobs_state(state: str | None, kind: str,
                                                  allowed: bool) -> None:
    job = None if state is None else JobState(P1, "k", state, AT, "A", YESTERDAY, YESTERDAY)
    assert (refusal(job, kind) is None) is allowed


def test_a_completed_job_may_be_completed_again_only_as_a_correction() -> None:
    job = JobState(P1, "k", "completed", AT, "A", YESTERDAY, YESTERDAY)
    assert refusal(job, "completed") is not None
    assert refusal(job, "completed", correction=True) is None


# --- what the next plan carries ------------------------------------------------------------

SURVEY = "survey|item:SG-1|routine:insulation_resistance@SG-1"
INSPECTION = "inspection|item:T1|routine:transformer_inspection@T1"
MEGGER = {"kind": "insulation_resistance", "at": "2026-12-02T09:40:00", "by": "S. Quayle",
          "where": "SG-1", "test_voltage": 500.0, "reading": 1e6, "temperature": 30.0}


def test_the_next_plan_takes_open_jobs_and_follow_ups_once() -> None:
    jobs = fold(events(
        (P1, "k1", "planned", YESTERDAY, {"item": "WL-1", "findings": [MEGGER]}),
        (P2, SURVEY, "planned", YESTERDAY, {"item": "SG-1"}),
        (P2, SURVEY, "completed", YESTERDAY, {"verdict": "failed", "followups": [MEGGER]}),
        (P3, INSPECTION, "planned", YESTERDAY, {"item": "T1"}),
        (P3, INSPECTION, "completed", YESTERDAY, {"verdict": "passed", "followups": []}),
    ))
    carry = carry_forward(jobs, DAY)
    assert carry.carried.issued.open == {"k1": P1}
    assert carry.carried.issued.taken == {P1, P2, P3}
    assert carry.carried.returning == {"k1"} and carry.carried.held == frozenset()
    assert [(c.source, c.finding["where"]) for c in carry.findings] == [(P1, "SG-1"),
                                                                        (P2, "SG-1")]
    assert carry.carried.routines_done == {("T1", "transformer_inspection"): YESTERDAY}
    # the failed routine test is answered by its follow-up, not planned again today
    assert ("SG-1", "insulation_resistance") in carry.carried.answered
    # once a day's plan has taken the follow-ups, the next day's does not again
    later = fold(jobs_events_with_carry(P2))
    assert P2 not in carry_forward(later, DAY + dt.timedelta(days=1)).sources


def jobs_events_with_carry(source: str) -> list[JobEvent]:
    return events(
        (source, SURVEY, "planned", YESTERDAY, {"item": "SG-1"}),
        (source, SURVEY, "completed", YESTERDAY, {"verdict": "failed", "followups": [MEGGER]}),
        (source, SURVEY, "carried_over", DAY, {"into": ["WP-SKL-20261203-01"]}),
    )


def test_a_begun_job_is_held_first_and_its_item_gets_no_routine_test() -> None:
    jobs = fold(events(
        (P1, "k1", "planned", YESTERDAY, {"item": "WL-1"}),
        (P1, "k1", "started", YESTERDAY, {}),
    ))
    carried = carry_forward(jobs, DAY).carried
    assert carried.held == {"k1"} and carried.busy_items == {"WL-1"}
