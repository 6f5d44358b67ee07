"""The lock register reads only the records that may leave a lock on: those whose kept
summary says so, and those with no summary of today's version; what it finds is what
reading every record finds, on both backends. Payloads and names are invented."""

from __future__ import annotations

import datetime as dt
import itertools
import json
import sqlite3
from pathlib import Path
from typing import Any

import pytest

from workpack.lockregister import locks_on, stored_locks
from workpack.records import may_leave_locks
from workpack.store import RecordStore, open_store
from workpack.trust_shell import check_planning_summaries

FIXTURES = Path(__file__).resolve().parent / "fixtures" / "records-v1"
HASH = "0" * 64
_plants = itertools.count(1)


def left_on() -> dict[str, Any]:
    """A record's payload that leaves two locks on (a dry-out that failed)."""
    payload: dict[str, Any] = json.loads((FIXTURES / "record-left-on.json").read_text())
    return payload


def removed() -> dict[str, Any]:
    """The same payload with every lock recorded as removed."""
    payload = left_on()
    for lock in payload["results"]["isolation"].values():
        lock.update(removed_at="15:00", removed_by="S. Quayle")
    payload["results"]["locks_left_on"] = None
    payload["evaluation"]["locks_left_on"] = []
    payload["evaluation"]["locks_not_removed"] = []
    return payload


def fill(store: RecordStore) -> None:
    """1 leaves locks on; 2 does not; 3 leaves them on and 4 corrects it (removed);
    5 leaves them on and 6 corrects it, still on; 7 is not a record's shape."""
    for package, payload, supersedes in (
            ("WP-1", left_on(), None), ("WP-2", removed(), None), ("WP-3", left_on(), None),
            ("WP-3", removed(), 3), ("WP-5", left_on(), None), ("WP-5", left_on(), 5),
            ("WP-7", {"removed_at": None}, None)):
        store.append(package_id=package, package_sha256=HASH, results=payload,
                     recorded_by="x", recorded_at=dt.datetime(2026, 12, 2, tzinfo=dt.UTC),
                     verdict="failed", supersedes=supersedes)


@pytest.mark.parametrize("backend", ["sqlite", "postgresql"])
def test_the_lock_register_reads_only_records_that_may_leave_locks_on(
        tmp_path: Path, request: pytest.FixtureRequest, backend: str) -> None:
    location = (str(tmp_path / "r.sqlite") if backend == "sqlite"
                else request.getfixturevalue("pg_store_url"))
    with open_store(location, plant=f"MV Locks {next(_plants):04d}") as store:
        fill(store)
        assert [r.sequence for r in store.lock_records()] == [1, 6, 7]
        every = locks_on(stored_locks(store.records(), on_only=True))
        assert every and locks_on(stored_locks(store.lock_records(), on_only=True)) == every
        assert check_planning_summaries(store) == []


def test_records_without_a_summary_of_todays_version_are_read(tmp_path: Path) -> None:
    """An older store (summaries of an earlier version, or none): every effective record
    is read, as before, with the same locks found; a plan that may write keeps them."""
    path = tmp_path / "r.sqlite"
    with open_store(path, plant="MV Older") as store:
        fill(store)
        every = locks_on(stored_locks(store.records(), on_only=True))
    with sqlite3.connect(path) as raw:
        raw.execute("UPDATE record_planning SET version = 1 WHERE sequence IN (2, 6)")
    with open_store(path, create=False) as store:
        assert [r.sequence for r in store.lock_records()] == [1, 2, 6, 7]
        assert locks_on(stored_locks(store.lock_records(), on_only=True)) == every
        assert store.fill_planning_summaries() == 2
        assert [r.sequence for r in store.lock_records()] == [1, 6, 7]
    with sqlite3.connect(path) as raw:
        raw.execute("DROP TABLE record_planning")
    with open_store(path, create=False) as store:
        assert [r.sequence for r in store.lock_records()] == [1, 2, 4, 6, 7]
        assert locks_on(stored_locks(store.lock_records(), on_only=True)) == every


def test_a_lock_left_on_is_told_from_the_payloads_text() -> None:
    assert may_leave_locks(json.dumps(left_on()))
    assert may_leave_locks('{"removed_at" :\n null}')
    assert not may_leave_locks(json.dumps(removed()))
