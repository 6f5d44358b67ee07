"""The job states a store keeps beside the job events: the status read from them is the
status folded from every event, on both backends, for random histories; a store that
keeps none, or events written without them, still gives it (from the events); verify
names a kept state changed outside workpack. Events, ids and names are invented."""

from __future__ import annotations

import datetime as dt
import itertools
import random
import sqlite3
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest

from workpack.cli import main
from workpack.joblog import (
    FINISHED,
    UNREADABLE,
    JobState,
    _standing_for_routines,
    fold,
    job_from_kept,
    kept_job,
    refusal,
    status,
    status_text,
)
from workpack.jobstates import jobs_for_status
from workpack.model.plant import Plant
from workpack.store import NewEvent, RecordStore, open_store
from workpack.store._base import JobStateQuery
from workpack.trust_shell import check_job_states

START = dt.date(2026, 10, 1)
BY = "A. Lindqvist"
# A routine's judged test, and a passed test that stands for it or falls short of it.
NEEDED = {"test": "insulation resistance", "unit": "MΩ", "test_voltage_v": 500.0,
          "minutes": 1.0, "low": 5e6, "high": None, "corrected_to_c": 40.0,
          "code_set": "ieee43-2013"}
STRONG = {**NEEDED, "test_voltage_v": 1000.0}
WEAK = {**NEEDED, "test_voltage_v": 250.0}
_plants = itertools.count(1)


def routines(plant: Plant) -> list[tuple[str, str]]:
    return [(e.id, r.test.value) for e in plant.elements() for r in e.routine]


def random_history(rnd: random.Random, plant: Plant, days: int) -> list[list[NewEvent]]:
    """Each day's events as a plan and the crew would write them: routine jobs (some
    naming the tests they judge), repairs made from routine jobs' findings, jobs begun,
    suspended with locks on, resumed, completed as passed or failed (some naming the
    tests they passed), cancelled (some as counted done by another job), carried over,
    planned again; one batch of events a day and one a record."""
    due = routines(plant)
    states: dict[str, str] = {}
    keys: dict[str, str] = {}
    routine_jobs: list[str] = []
    batches: list[list[NewEvent]] = []
    for offset in range(days):
        day = START + dt.timedelta(days=offset)
        at = dt.datetime.combine(day, dt.time(7, 0), dt.UTC)
        planned: list[NewEvent] = []
        for n in range(1, rnd.randint(2, 5)):
            package_id = f"WP-SKL-{day:%Y%m%d}-{n:02d}"
            element, test = rnd.choice(due)
            detail: dict[str, Any] = {"title": f"job {package_id}", "findings": []}
            if rnd.random() < 0.5:
                key = f"routine|item:{element}|routine:{test}@{element}"
                detail.update(item=element, routine=test, routine_element=element)
                if rnd.random() < 0.7:
                    detail["requires"] = [NEEDED]
                routine_jobs.append(package_id)
            else:
                waiting = sorted(keys[p].rpartition("@")[2] for p, state in states.items()
                                 if "routine:" in keys[p] and state not in FINISHED)
                if waiting and rnd.random() < 0.7:  # work on an item a routine waits for
                    element = rnd.choice(waiting)
                key = f"repair|item:{element}|{package_id}"
                detail.update(item=element, routine=None, routine_element=None)
                if routine_jobs and rnd.random() < 0.4:
                    detail["answers"] = sorted(rnd.sample(routine_jobs, 1))
            keys[package_id] = key
            states[package_id] = "planned"
            planned.append(NewEvent(package_id, key, "planned", day, at, BY, detail))
        work: list[NewEvent] = []
        for package_id, state in sorted(states.items()):
            if package_id in {e.package_id for e in planned} or rnd.random() < 0.4:
                continue
            kind = rnd.choice(["started", "suspended", "resumed", "completed", "completed",
                               "cancelled", "carried_over", "planned"])
            job = _Job(state)
            if refusal(job, kind) is not None:  # type: ignore[arg-type]
                continue
            when = at + dt.timedelta(hours=2)
            detail = {}
            if kind == "suspended":
                detail = {"verdict": "incomplete", "followups": [], "locks": [
                    {"device": f"CB-{package_id[-2:]}", "package_id": package_id,
                     "lock": f"L-{offset}{package_id[-2:]}", "applied_by": BY,
                     "applied_at": f"{day} 08:00", "why": "dry-out"}]}
            elif kind == "completed":
                detail = {"verdict": rnd.choice(["passed", "passed", "failed"]),
                          "locks": [], "followups": []}
                if rnd.random() < 0.7:
                    detail["passed_tests"] = [rnd.choice([STRONG, WEAK])]
            elif kind == "cancelled":
                detail = {"reason": "no longer called for"}
                if "routine:" in keys[package_id] and rnd.random() < 0.5:
                    detail["counted_on"] = (day - dt.timedelta(days=1)).isoformat()
            elif kind == "planned":
                element = keys[package_id].split("item:")[1].split("|")[0]
                detail = {"item": element, "title": f"job {package_id} again", "findings": []}
            elif kind == "carried_over":
                detail = {"from_day": (day - dt.timedelta(days=1)).isoformat()}
            if kind != "carried_over":
                states[package_id] = kind
            work.append(NewEvent(package_id, keys[package_id], kind, day, when, BY, detail))
        batches += [planned, work]
    return batches


class _Job:
    """Just enough of a job for ``refusal``."""

    def __init__(self, state: str):
        self.state, self.package_id, self.since, self.by = state, "", dt.datetime.now(), ""


@pytest.fixture(params=["sqlite", "postgresql"])
def location(request: pytest.FixtureRequest, tmp_path: Path) -> str:
    if request.param == "sqlite":
        return str(tmp_path / "records.sqlite")
    return str(request.getfixturevalue("pg_store_url"))


def opened(location: str) -> RecordStore:
    return open_store(location, plant=f"MV Job States {next(_plants):04d}")


def both_ways(store: RecordStore, plant: Plant, day: dt.date) -> tuple[Any, Any]:
    folded = status(plant, fold(store.events()), day, 14)
    kept = status(plant, jobs_for_status(store, day), day, 14)
    return folded, kept


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_the_status_from_kept_states_is_the_status_from_every_event(
        location: str, demo_vessel: Any, seed: int) -> None:
    """Random histories written day by day: after each day the kept states are those the
    events fold to, and the status read from them is the folded one, for every day
    asked about. The histories do hold what the shortcuts must not miss."""
    plant = demo_vessel.plant
    rnd = random.Random(seed)
    standing = answered = counted = 0
    with opened(location) as store:
        for n, batch in enumerate(random_history(rnd, plant, 45)):
            store.append_events(batch)
            if n % 6 != 5:
                continue
            assert check_job_states(store) == []
            jobs = fold(store.events())
            by_key = {job.job_key: job for job in jobs.values() if job.open}
            last = max(e.day for e in store.events())
            for day in (last, last + dt.timedelta(days=1), last + dt.timedelta(days=30)):
                folded, kept = both_ways(store, plant, day)
                assert kept == folded
                assert status_text(kept, 14) == status_text(folded, 14)
                found, notes = _standing_for_routines(jobs, by_key, day)
                standing += len(found) + len(notes)
        jobs = fold(store.events())
        answered = sum(kept_job(job).answers_passed for job in jobs.values())
        counted = sum(1 for job in jobs.values() if job.counted_on)
    assert answered and counted and standing, (answered, counted, standing)


def test_a_kept_job_reads_back_as_the_folded_job(demo_vessel: Any) -> None:
    """Every attribute the status reads, equal in the kept job and the folded one."""
    rnd = random.Random(7)
    events = [e for batch in random_history(rnd, demo_vessel.plant, 30) for e in batch]
    from workpack.store._events import JobEvent, encode, next_events

    stored = next_events(None, "0" * 64, [encode(e) for e in events])
    jobs = fold(JobEvent.from_row(row) for row in stored)
    names = ("package_id", "job_key", "state", "since", "by", "first_day", "last_planned",
             "entries", "finished_on", "answers", "open", "item", "title", "routine",
             "verdict", "counted_on", "locks", "requires", "passed_tests")
    for job in jobs.values():
        kept = job_from_kept(kept_job(job).summary_json)
        assert [getattr(kept, n) for n in names] == [getattr(job, n) for n in names]


def test_a_store_without_kept_states_folds_the_events_until_a_write_keeps_them(
        location: str, demo_vessel: Any) -> None:
    """Events written by an older workpack (no states kept for them) leave the kept
    states behind the last event: the status folds the events then, with the same
    answer, and the next write of events (or ``fill_job_states``) brings them up."""
    plant = demo_vessel.plant
    batches = random_history(random.Random(4), plant, 20)
    with opened(location) as store:
        for batch in batches[:20]:
            store.append_events(batch)
        assert store.job_states(JobStateQuery(for_status=True)) is not None
        older = store._keep_job_states  # type: ignore[attr-defined]  # noqa: SLF001
        store._keep_job_states = lambda *_: 0  # type: ignore[attr-defined]  # noqa: SLF001
        for batch in batches[20:30]:
            store.append_events(batch)
        store._keep_job_states = older  # type: ignore[attr-defined]  # noqa: SLF001
        day = max(e.day for e in store.events()) + dt.timedelta(days=1)
        assert store.job_states(JobStateQuery(for_status=True)) is None
        assert store.kept_job_states() is None and check_job_states(store) == []
        folded, kept = both_ways(store, plant, day)
        assert kept == folded
        store.append_events(batches[30])  # today's workpack writes: the states catch up
        assert store.job_states(JobStateQuery(for_status=True)) is not None
        assert check_job_states(store) == []
        folded, kept = both_ways(store, plant, day)
        assert kept == folded
        assert store.fill_job_states() == 0  # nothing left to keep


def test_an_sqlite_store_from_before_kept_states_gets_them_on_its_next_write(
        tmp_path: Path, demo_vessel: Any) -> None:
    plant = demo_vessel.plant
    batches = random_history(random.Random(5), plant, 10)
    path = tmp_path / "old.sqlite"
    with open_store(path, plant="MV Old") as store:
        for batch in batches[:-1]:
            store.append_events(batch)
    with sqlite3.connect(path) as raw:  # as a store written before states were kept
        raw.execute("DROP TABLE job_states")
        raw.execute("DROP TABLE job_states_through")
    with open_store(path, create=False) as store:
        day = max(e.day for e in store.events())
        assert store.job_states(JobStateQuery(for_status=True)) is None
        folded, kept = both_ways(store, plant, day)
        assert kept == folded
        assert store.fill_job_states() == len(fold(store.events()))
        assert both_ways(store, plant, day)[1] == folded
        store.append_events(batches[-1])
        assert check_job_states(store) == []


def test_verify_names_a_kept_state_changed_outside_workpack(
        tmp_path: Path, demo_vessel: Any, capsys: pytest.CaptureFixture[str]) -> None:
    """The kept states are outside the chain of events: a job marked done in them would
    drop it from the status while every event still verifies, so verify folds the
    events and compares each state, its columns and its text."""
    path = tmp_path / "r.sqlite"
    with open_store(path, plant="MV Tamper") as store:
        for batch in random_history(random.Random(6), demo_vessel.plant, 10):
            store.append_events(batch)
        open_ids = [p for p, job in fold(store.events()).items() if job.open]
    db = str(path)
    assert main(["verify", "--db", db]) == 0
    assert "kept state" not in capsys.readouterr().out
    first, second = open_ids[:2]
    with sqlite3.connect(path) as raw:
        raw.execute("UPDATE job_states SET open = 0 WHERE package_id = ?", (first,))
        raw.execute("UPDATE job_states SET summary_json = replace(summary_json, "
                    "'\"state\":\"', '\"state\":\"x') WHERE package_id = ?", (second,))
        raw.execute("INSERT INTO job_states SELECT 'WP-SKL-20300101-01', version, open, "
                    "state, item, routine_test, routine_element, finished_on, own_pass_on, "
                    "answers_passed, summary_json FROM job_states LIMIT 1")
    assert main(["verify", "--db", db]) == 1
    out = capsys.readouterr().out
    for package_id in sorted([first, second, "WP-SKL-20300101-01"]):
        assert (f"{db}: job {package_id}'s kept state does not match its job events "
                "(changed outside workpack)") in out
    assert out.count("kept state") == 3


def test_a_record_keeps_its_jobs_state_in_its_own_transaction(location: str) -> None:
    """A record written with its job's event keeps the job's state with them."""
    with opened(location) as store:
        day = dt.date(2026, 12, 2)
        at = dt.datetime(2026, 12, 2, 8, tzinfo=dt.UTC)
        store.append_events([NewEvent("WP-SKL-20261202-01", "repair|item:WL-1", "planned",
                                      day, at, BY, {"item": "WL-1", "title": "repair"})])
        store.append(package_id="WP-SKL-20261202-01", package_sha256="0" * 64,
                     results={"note": "done"}, recorded_by=BY,
                     recorded_at=at + dt.timedelta(hours=3), verdict="passed",
                     events=[NewEvent("WP-SKL-20261202-01", "repair|item:WL-1", "suspended",
                                      day, at + dt.timedelta(hours=3), BY,
                                      {"verdict": "passed", "followups": [], "locks": [
                                          {"device": "CB-WL1", "package_id":
                                           "WP-SKL-20261202-01", "lock": "L-1"}]})])
        (text,) = store.job_states(JobStateQuery(for_status=True)) or ["none kept"]
        job = job_from_kept(text)
        assert (job.state, [lock.device for lock in job.locks]) == ("suspended", ["CB-WL1"])
        assert check_job_states(store) == []


def jobs_of(store: RecordStore) -> Iterator[JobState]:
    yield from fold(store.events()).values()


def test_events_not_of_a_jobs_shape_are_stored_and_the_status_folds_them(
        location: str, demo_vessel: Any) -> None:
    """The store takes any detail; a job whose events do not read as a job's is kept
    as unreadable, the write goes through, and the status folds the events, giving
    what it gave before states were kept."""
    with opened(location) as store:
        day = dt.date(2026, 12, 2)
        at = dt.datetime(2026, 12, 2, 8, tzinfo=dt.UTC)
        store.append_events([
            NewEvent("WP-SKL-20261202-01", "repair|item:WL-1", "planned", day, at, BY,
                     {"item": "WL-1", "title": "repair"}),
            NewEvent("WP-SKL-20261202-02", "repair|item:SG-1", "suspended", day, at, BY,
                     {"locks": ["not a lock"]})])
        kept = store.job_states(JobStateQuery(for_status=True)) or []
        assert UNREADABLE in kept and check_job_states(store) == []
        with pytest.raises(TypeError):  # what the folded status always did with it
            status(demo_vessel.plant, jobs_for_status(store, day), day, 14)


def test_a_crew_role_keeps_its_plants_job_states_and_an_auditor_reads_them(
        pg_server: Any, pg_fresh_url: str, demo_vessel: Any) -> None:
    """In the office store the crew role that writes a plant's events keeps its job
    states (insert, then update as the jobs move on), under row-level security; the
    auditor reads the status from them and cannot write them."""
    from workpack.store import ReadOnlyError, set_up_store

    for role in ("crew_jobstates", "audit_jobstates"):
        pg_server.create_login_role(role)
    set_up_store(pg_fresh_url, crew=[("crew_jobstates", "MV Aster")],
                 auditors=["audit_jobstates"])
    crew = pg_fresh_url.replace("workpack_admin@", "crew_jobstates@", 1)
    auditor = pg_fresh_url.replace("workpack_admin@", "audit_jobstates@", 1)
    plant = demo_vessel.plant
    batches = random_history(random.Random(8), plant, 12)
    with open_store(crew, plant="MV Aster") as store:
        for batch in batches:
            store.append_events(batch)
        assert check_job_states(store) == []
    day = max(e.day for batch in batches for e in batch) + dt.timedelta(days=1)
    with open_store(auditor, plant="MV Aster", create=False) as store:
        assert store.job_states(JobStateQuery(for_status=True)) is not None
        folded, kept = both_ways(store, plant, day)
        assert kept == folded
        with pytest.raises(ReadOnlyError):
            store.append_events(batches[0])
