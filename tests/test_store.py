"""The records store through its interface, and the SQLite file's own guards.

Every behaviour test takes the ``store`` fixture (or ``opener``, to open the same store
again), a RecordStore object run once per backend: a temporary SQLite file, and a plant
of its own in a records store on a real PostgreSQL server the suite starts (see
tests/pgfixtures.py). PostgreSQL's own guards are in test_store_postgres.py. Results,
names and times are invented.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import itertools
import shutil
import sqlite3
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

import pytest
from samplepackage import sample_package

from workpack.errors import WorkpackError
from workpack.store import (
    ChainHead,
    NewEvent,
    NoSuchRecordError,
    NotAStoreError,
    RecordRefusedError,
    RecordStore,
    SQLiteStore,
    StoreError,
    StoreURLError,
    open_store,
    package_sha256,
    plant_genesis,
)

BACKENDS = ["sqlite", "postgresql"]
FIXTURES = Path(__file__).resolve().parent / "fixtures"
T0 = dt.datetime(2026, 12, 2, 8, 0, tzinfo=dt.UTC)
PKG = package_sha256(sample_package())
RESULTS: dict[str, Any] = {
    "readings": {"S2.R1": {"value_ohm": 1.2e8, "temperature_c": 31.5},
                 "S2.R2": {"value_ohm": 9.5e7, "temperature_c": 31.5},
                 "X1.R1": {"value_v": 253.0}},
    "ticked": ["S1", "S3", "S4"],
    "remarks": "Terminal box dry; gland on C-WL1 re-made. Ω ≥ 5 M at 40 °C",
    "complete": True,
    "witness": None,
}


_plants = itertools.count(1)
Opener = Callable[..., RecordStore]


@pytest.fixture(params=BACKENDS)
def opener(request: pytest.FixtureRequest, tmp_path: Path) -> Opener:
    """Opens this test's store (again): its own SQLite file, or its own plant in PostgreSQL."""
    if request.param == "sqlite":
        location = str(tmp_path / "records.sqlite")
    else:
        location = request.getfixturevalue("pg_store_url")
    plant = f"MV Test Plant {next(_plants):04d}"

    def open_(**options: Any) -> RecordStore:
        return open_store(location, plant=plant, **options)
    return open_


@pytest.fixture
def store(opener: Opener) -> Iterator[RecordStore]:
    with opener() as opened:
        yield opened


def add(store: RecordStore, package_id: str = "WP-2026-12-02-01", *, minutes: int = 0,
        results: dict[str, Any] | None = None, supersedes: int | None = None,
        verdict: str = "pass", by: str = "A. Lindqvist") -> Any:
    return store.append(package_id=package_id, package_sha256=PKG,
                        results=RESULTS if results is None else results, recorded_by=by,
                        recorded_at=T0 + dt.timedelta(minutes=minutes), verdict=verdict,
                        supersedes=supersedes)


def same_json(a: Any, b: Any) -> bool:
    """Equal with the same types all the way down (True is not 1, 1 is not 1.0)."""
    if type(a) is not type(b):
        return False
    if isinstance(a, dict):
        return a.keys() == b.keys() and all(same_json(a[k], b[k]) for k in a)
    if isinstance(a, list):
        return len(a) == len(b) and all(same_json(x, y) for x, y in zip(a, b, strict=True))
    return bool(a == b) or repr(a) == repr(b)


# --- the interface ---------------------------------------------------------------------


def test_store_is_a_record_store_without_update_or_delete(store: RecordStore) -> None:
    """The object satisfies the protocol and offers no way to change a record."""
    assert isinstance(store, RecordStore)
    assert not [name for name in dir(store)
                if any(word in name.lower() for word in ("update", "delete", "remove", "edit"))]


def test_appended_records_are_numbered_and_chained(store: RecordStore) -> None:
    """Sequence numbers run 1, 2, 3…, each record chains from the one before."""
    first, second, third = add(store), add(store, minutes=5), add(store, minutes=9)
    assert [first.sequence, second.sequence, third.sequence] == [1, 2, 3]
    assert len({first.chain_sha256, second.chain_sha256, third.chain_sha256}) == 3
    assert store.head() == ChainHead(3, third.chain_sha256)
    assert store.get(2) == second


def test_results_come_back_exactly_as_entered(store: RecordStore) -> None:
    """Types, floats, text and nesting survive the canonical JSON round trip."""
    awkward = {"f": [0.1, 1e-300, -0.0, 2.5e20, 1.0], "i": [0, -7, 2**70],
               "b": [True, False], "t": "ΩμΔ \"quoted\" \\ tab\t", "n": None,
               "deep": {"z": {"y": [[], {}]}}, "": "empty key"}
    record = add(store, results=awkward)
    assert same_json(record.results, awkward)
    assert same_json(store.get(record.sequence).results, awkward)
    assert same_json(next(iter(store.records())).results, awkward)


def test_recorded_at_is_the_callers_time_in_utc(store: RecordStore) -> None:
    """A local time is kept as the same instant, returned in UTC."""
    local = dt.datetime(2026, 12, 2, 10, 30, tzinfo=dt.timezone(dt.timedelta(hours=2)))
    record = store.append(package_id="WP-1", package_sha256=PKG, results={}, recorded_by="x",
                          recorded_at=local, verdict="pass")
    assert record.recorded_at == local
    assert record.recorded_at.utcoffset() == dt.timedelta(0)


def test_naive_timestamp_is_a_programming_error(store: RecordStore) -> None:
    """The caller must say which clock: a naive datetime is refused."""
    with pytest.raises(ValueError, match="timezone-aware"):
        store.append(package_id="WP-1", package_sha256=PKG, results={}, recorded_by="x",
                     recorded_at=dt.datetime(2026, 12, 2, 8, 0), verdict="pass")


def test_records_filter_by_package_and_half_open_time_range(store: RecordStore) -> None:
    """since <= recorded_at < until, alone or with a package id."""
    for i in range(12):
        add(store, f"WP-{i % 3}", minutes=10 * i)
    assert [r.sequence for r in store.records()] == list(range(1, 13))
    assert [r.sequence for r in store.records(package_id="WP-1")] == [2, 5, 8, 11]
    since, until = T0 + dt.timedelta(minutes=30), T0 + dt.timedelta(minutes=70)
    assert [r.sequence for r in store.records(since=since, until=until)] == [4, 5, 6, 7]
    assert [r.sequence for r in store.records(package_id="WP-1", since=since,
                                              until=until)] == [5]
    assert list(store.records(package_id="WP-none")) == []


def test_records_iterate_past_one_read_batch(store: RecordStore) -> None:
    """More records than one batch read are all returned, in order."""
    for i in range(1203):
        add(store, results={"i": i})
    assert [r.results["i"] for r in store.records()] == list(range(1203))


def test_latest_follows_the_line_of_corrections(store: RecordStore) -> None:
    """A correction supersedes; the latest effective record ends the line."""
    add(store, "WP-A")  # 1
    add(store, "WP-B")  # 2
    add(store, "WP-A", minutes=1, verdict="fail", supersedes=1)  # 3 corrects 1
    add(store, "WP-B", minutes=2)  # 4: a retest of B, no correction
    add(store, "WP-A", minutes=3, verdict="pass", supersedes=3)  # 5 corrects 3
    assert store.latest("WP-A") == store.get(5)
    assert store.latest("WP-B") == store.get(4)
    assert store.latest("WP-none") is None
    latest = store.latest_per_package()
    assert list(latest) == ["WP-A", "WP-B"]
    assert [r.sequence for r in latest.values()] == [5, 4]
    assert [r.sequence for r in store.records(package_id="WP-A")] == [1, 3, 5]  # history kept


def test_supersedes_of_a_missing_record_is_refused_naming_the_store(store: RecordStore) -> None:
    """One line naming the store, the number and what the store does hold."""
    add(store)
    with pytest.raises(RecordRefusedError) as caught:
        add(store, supersedes=9)
    assert str(caught.value) == (f"{store.location}: supersedes 9: there is no record 9 "
                                 "(the store holds records 1 to 1)")


def test_a_correction_must_answer_the_same_package(store: RecordStore) -> None:
    """Superseding another package's record is refused."""
    add(store, "WP-A")
    with pytest.raises(RecordRefusedError, match="answers package 'WP-A', not 'WP-B'"):
        add(store, "WP-B", supersedes=1)


def test_a_record_is_corrected_once_then_its_correction_is(store: RecordStore) -> None:
    """Superseding an already superseded record names the correction to supersede."""
    add(store)
    add(store, supersedes=1)
    add(store, supersedes=2)
    with pytest.raises(RecordRefusedError, match="latest correction is record 3"):
        add(store, supersedes=1)


@pytest.mark.parametrize(("results", "where"), [
    ({"readings": {"S2.R1": float("nan")}}, "results.readings.S2.R1"),
    ({"ticked": ("S1", "S2")}, "results.ticked"),
])
def test_results_that_cannot_round_trip_are_refused(store: RecordStore, results: dict,
                                                    where: str) -> None:
    """A NaN or a tuple is refused with its place in the results, nothing written."""
    add(store)
    with pytest.raises(RecordRefusedError) as caught:
        add(store, results=results)
    message = str(caught.value)
    assert message.startswith(f"{store.location}: record for WP-2026-12-02-01: {where}: ")
    assert "\n" not in message
    assert store.verify().count == 1


def test_empty_recorded_by_is_refused(store: RecordStore) -> None:
    """A record must say who recorded it."""
    with pytest.raises(RecordRefusedError, match="recorded_by is empty"):
        add(store, by="  ")


def test_get_of_a_missing_record_names_the_store(store: RecordStore) -> None:
    """NoSuchRecordError, one line."""
    with pytest.raises(NoSuchRecordError) as caught:
        store.get(4)
    assert str(caught.value) == f"{store.location}: there is no record 4 (the store is empty)"


def test_clean_store_verifies_with_its_count(store: RecordStore) -> None:
    """OK, the number of records, and the head to write down as an anchor."""
    assert store.verify().ok and store.verify().count == 0
    for i in range(25):
        add(store, minutes=i)
    result = store.verify()
    head = store.head()
    assert result.ok and result.count == 25 and result.head == head and head is not None
    assert result.message == (f"{store.location}: OK, 25 records, chain intact to "
                              f"25:{head.chain_sha256}")
    assert store.verify(anchor=head).ok


def test_store_reopens_with_everything(opener: Opener) -> None:
    """Closing and opening again gives the same records and chain."""
    with opener() as first:
        for i in range(5):
            add(first, minutes=i)
        records = list(first.records())
    with opener(create=False) as again:
        assert list(again.records()) == records
        assert again.verify().ok
        assert add(again, minutes=9).sequence == 6


def test_records_belong_to_the_plant_the_store_was_opened_for(store: RecordStore) -> None:
    """Each record carries its plant; the chain starts from that plant's genesis value."""
    assert store.plant.startswith("MV Test Plant ")
    assert store.plant not in store.plants()  # a plant is listed from its first record
    first = add(store)
    assert first.plant == store.plant == store.get(1).plant
    assert store.plant in store.plants()
    assert [r.plant for r in store.records()] == [store.plant]
    assert store.verify().ok


def test_a_missing_store_or_plant_is_refused_when_reading(opener: Opener) -> None:
    """create=False (what verify and audit use) refuses a store or plant not there yet."""
    with pytest.raises(StoreError, match="no records store here|no records of plant"):
        opener(create=False)


# --- the SQLite file -------------------------------------------------------------------


def test_an_sqlite_store_holds_one_plant(tmp_path: Path) -> None:
    """The file keeps its plant's name; another plant's name is refused, no name is fine."""
    path = tmp_path / "records.sqlite"
    with SQLiteStore(path, plant="MV Skerry Lantern") as store:
        add(store)
    with SQLiteStore(path) as again:
        assert again.plant == "MV Skerry Lantern"
        assert again.get(1).plant == "MV Skerry Lantern"
    with pytest.raises(StoreError, match="holds the records of plant 'MV Skerry Lantern', "
                                         "not 'MV Other'; give the store of that plant"):
        SQLiteStore(path, plant="MV Other")
    raw = sqlite3.connect(path)
    try:
        assert raw.execute("PRAGMA user_version").fetchone()[0] == 2
        assert raw.execute("SELECT prev_sha256 FROM records WHERE sequence = 1").fetchone()[0] \
            == plant_genesis("MV Skerry Lantern")
        with pytest.raises(sqlite3.IntegrityError, match="plant of a store is fixed"):
            raw.execute("UPDATE store_plant SET plant = 'MV Other'")
    finally:
        raw.close()


def test_a_store_file_from_before_plants_opens_verifies_and_takes_records(
        tmp_path: Path) -> None:
    """A schema-1 file (tests/fixtures/store-v1.sqlite, written by the schema-1 code) stays
    as it was: an unnamed store, its chain intact, its triggers accepted, appendable."""
    path = tmp_path / "old.sqlite"
    shutil.copyfile(FIXTURES / "store-v1.sqlite", path)
    head = ChainHead(5, "e3a2f6d9c41fd18fe69966d47d36a7035a943562ee548e1b1a3c11e65ba8b6fc")
    with open_store(path, create=False) as old:
        result = old.verify(anchor=head)
        assert result.ok and result.guards_intact and result.count == 5, result.message
        assert old.plant == "" and old.latest("WP-20261130-02") == old.get(5)
        assert old.get(5).supersedes == 4 and old.get(2).verdict == "fail"
    with open_store(path, plant="MV Skerry Lantern") as old:  # an unnamed file takes a name
        assert add(old, "WP-20261201-01").sequence == 6
        assert old.verify(anchor=head).ok and old.verify().guards_intact
    raw = sqlite3.connect(path)
    try:
        assert raw.execute("PRAGMA user_version").fetchone()[0] == 1  # not rewritten
    finally:
        raw.close()


def test_sqlite_file_is_wal_with_append_only_triggers(tmp_path: Path) -> None:
    """The database itself refuses UPDATE, DELETE and an out-of-order INSERT."""
    path = tmp_path / "records.sqlite"
    with SQLiteStore(path) as store:
        add(store)
        add(store)
    raw = sqlite3.connect(path)
    try:
        assert raw.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
        with pytest.raises(sqlite3.IntegrityError, match="append-only: UPDATE refused"):
            raw.execute("UPDATE records SET verdict = 'fail' WHERE sequence = 1")
        with pytest.raises(sqlite3.IntegrityError, match="append-only: DELETE refused"):
            raw.execute("DELETE FROM records WHERE sequence = 2")
        columns = [c[1] for c in raw.execute("PRAGMA table_info(records)")]
        row = list(raw.execute("SELECT * FROM records WHERE sequence = 2").fetchone())
        row[0] = 7
        with pytest.raises(sqlite3.IntegrityError, match="only the next record"):
            raw.execute(f"INSERT INTO records ({', '.join(columns)}) VALUES "
                        f"({', '.join('?' * len(columns))})", row)
    finally:
        raw.close()
    with SQLiteStore(path) as store:
        assert store.verify().ok and store.verify().count == 2


def test_a_text_file_is_not_a_store(tmp_path: Path) -> None:
    """NotAStoreError naming the file, one line, exit status 2."""
    path = tmp_path / "notes.txt"
    path.write_text("readings: see the clipboard\n" * 100, encoding="utf-8")
    with pytest.raises(NotAStoreError) as caught:
        open_store(str(path))
    assert str(caught.value) == (f"{path}: not a workpack records store (not an SQLite "
                                 "database); give the path of a records store")
    assert caught.value.exit_code == 2 and isinstance(caught.value, WorkpackError)


def test_another_sqlite_database_is_not_a_store(tmp_path: Path) -> None:
    """An SQLite file of another program is refused with its tables named."""
    path = tmp_path / "other.db"
    other = sqlite3.connect(path)
    other.execute("CREATE TABLE crew (name TEXT)")
    other.commit()
    other.close()
    with pytest.raises(NotAStoreError, match=r"other\.db: not a workpack records store "
                                             r"\(an SQLite database with tables crew\)"):
        open_store(path)


def test_a_store_from_a_newer_workpack_is_refused(tmp_path: Path) -> None:
    """A higher schema version asks for an upgrade instead of misreading."""
    path = tmp_path / "records.sqlite"
    SQLiteStore(path).close()
    raw = sqlite3.connect(path)
    raw.execute("PRAGMA user_version = 99")
    raw.close()
    with pytest.raises(NotAStoreError, match="newer workpack .*schema 99"):
        SQLiteStore(path)


def test_missing_store_or_folder_is_a_user_error(tmp_path: Path) -> None:
    """create=False refuses a path with no store; a missing folder is named."""
    with pytest.raises(StoreError, match="no records store here"):
        open_store(tmp_path / "typo.sqlite", create=False)
    assert not (tmp_path / "typo.sqlite").exists()
    with pytest.raises(StoreError, match="the folder .*nowhere does not exist"):
        open_store(tmp_path / "nowhere" / "records.sqlite")
    with pytest.raises(NotAStoreError, match="is a folder"):
        open_store(tmp_path)


def test_sqlite_urls_open_relative_and_absolute_paths(tmp_path: Path,
                                                      monkeypatch: pytest.MonkeyPatch) -> None:
    """sqlite:///relative and sqlite:////absolute, the common database-URL form."""
    monkeypatch.chdir(tmp_path)
    with open_store("sqlite:///rel.sqlite") as store:
        add(store)
    assert (tmp_path / "rel.sqlite").exists()
    with open_store(f"sqlite:///{tmp_path / 'rel.sqlite'}") as store:
        assert store.verify().count == 1
    with pytest.raises(StoreURLError, match="in-memory store would lose every record"):
        open_store("sqlite://")


def test_a_postgresql_server_that_cannot_be_reached_is_named_without_its_password(
        tmp_path: Path) -> None:
    """One line naming the URL, the password hidden (in the user part or the options)."""
    for url, shown in [
        (f"postgresql://office:s3cret@/records?host={tmp_path}&connect_timeout=2",
         f"postgresql://office:***@/records?host={tmp_path}&connect_timeout=2"),
        (f"postgres:///records?host={tmp_path}&password=s3cret",
         f"postgres:///records?host={tmp_path}&password=***"),
    ]:
        with pytest.raises(StoreError) as caught:
            open_store(url)
        message = str(caught.value)
        assert message.startswith(f"{shown}: cannot connect to the PostgreSQL server: ")
        assert "s3cret" not in message and "\n" not in message


def test_an_unknown_scheme_is_refused_with_a_suggestion() -> None:
    """A near miss of a known scheme is suggested."""
    with pytest.raises(StoreURLError, match="unknown store URL scheme 'sqlit'.*did you mean "
                                            "'sqlite'"):
        open_store("sqlit:///records.sqlite")


def test_a_store_locked_too_long_is_a_user_error(tmp_path: Path) -> None:
    """Another program holding the write lock past the timeout gives a one-line error."""
    path = tmp_path / "records.sqlite"
    with SQLiteStore(path, busy_timeout_s=0.2) as store:
        add(store)
        holder = sqlite3.connect(path, isolation_level=None)
        holder.execute("BEGIN IMMEDIATE")
        try:
            with pytest.raises(StoreError, match="locked by another program for 0.2 s"):
                add(store)
        finally:
            holder.execute("ROLLBACK")
            holder.close()
        assert add(store).sequence == 2


# --- job events --------------------------------------------------------------------------


def event(package_id: str = "WP-TST-20261202-01", kind: str = "planned", *,
          minutes: int = 0, detail: dict[str, Any] | None = None) -> NewEvent:
    return NewEvent(package_id, f"rule|item:{package_id}", kind, T0.date(),
                    T0 + dt.timedelta(minutes=minutes), "A. Lindqvist",
                    {"item": "WL-1"} if detail is None else detail)


def test_job_events_are_numbered_chained_and_read_back(store: RecordStore) -> None:
    """Events run 1, 2, 3… in one batch or many; each comes back as written."""
    written = store.append_events([event(), event("WP-TST-20261202-02")])
    written += store.append_events([event(kind="suspended", minutes=5,
                                          detail={"locks": [{"device": "CB-WL1"}]})])
    assert [e.sequence for e in written] == [1, 2, 3]
    back = list(store.events())
    assert back == written
    assert back[2].detail == {"locks": [{"device": "CB-WL1"}]}
    assert back[2].at == T0 + dt.timedelta(minutes=5) and back[2].day == T0.date()
    assert [e.sequence for e in store.events(package_id="WP-TST-20261202-01")] == [1, 3]
    assert store.verify_events() == []


def test_job_events_of_one_plant_are_not_another_plants(opener: Opener) -> None:
    with opener() as store:
        store.append_events([event()])
    with opener() as again:
        assert [e.kind for e in again.events()] == ["planned"]


def test_a_store_without_events_reads_none_and_keeps_its_records(store: RecordStore) -> None:
    add(store)
    assert list(store.events()) == [] and store.verify_events() == []
    store.append_events([event()])
    assert store.verify().ok and store.verify().count == 1


@pytest.mark.parametrize(("bad", "words"), [
    ({"kind": "finished"}, "kind 'finished' is not one of"),
    ({"by": " "}, "by is empty"),
    ({"detail": {"x": float("nan")}}, "detail"),
])
def test_a_bad_event_is_refused_and_nothing_of_its_batch_is_written(
        store: RecordStore, bad: dict[str, Any], words: str) -> None:
    good = event()
    wrong = dataclasses.replace(good, **bad)
    with pytest.raises(RecordRefusedError, match=words):
        store.append_events([good, wrong])
    assert list(store.events()) == []


def test_sqlite_job_events_are_append_only_in_the_file(tmp_path: Path) -> None:
    """The database itself refuses UPDATE, DELETE and an out-of-order INSERT of events,
    and verify_events names an event changed with the guards off."""
    path = tmp_path / "records.sqlite"
    with SQLiteStore(path) as store:
        store.append_events([event(), event(kind="started", minutes=1)])
    raw = sqlite3.connect(path)
    try:
        with pytest.raises(sqlite3.IntegrityError, match="append-only: UPDATE refused"):
            raw.execute("UPDATE job_events SET kind = 'cancelled' WHERE sequence = 1")
        with pytest.raises(sqlite3.IntegrityError, match="append-only: DELETE refused"):
            raw.execute("DELETE FROM job_events WHERE sequence = 2")
        row = list(raw.execute("SELECT * FROM job_events WHERE sequence = 2").fetchone())
        row[0] = 9
        with pytest.raises(sqlite3.IntegrityError, match="only the next event"):
            raw.execute(f"INSERT INTO job_events VALUES ({', '.join('?' * len(row))})", row)
        raw.execute("DROP TRIGGER job_events_no_update")
        raw.execute("UPDATE job_events SET by = 'someone else' WHERE sequence = 1")
        raw.commit()
    finally:
        raw.close()
    with SQLiteStore(path) as store:
        problems = store.verify_events()
    assert "job event 1 (WP-TST-20261202-01, planned) was changed" in problems[0]
    assert "guards are missing or changed" in problems[-1]


# --- a record and its job event in one transaction ------------------------------------------


def _done(package_id: str = "WP-2026-12-02-01", by: str = "A. Lindqvist") -> NewEvent:
    return NewEvent(package_id, "insulation|item:WL-1", "completed", T0.date(), T0, by,
                    {"verdict": "passed", "locks": [], "followups": []})


def test_a_record_and_its_event_are_written_together(store: RecordStore) -> None:
    record = store.append(package_id="WP-2026-12-02-01", package_sha256=PKG, results=RESULTS,
                          recorded_by="A. Lindqvist", recorded_at=T0, verdict="passed",
                          events=[_done()])
    (event,) = store.events()
    assert (event.kind, event.package_id, dict(event.detail)) == (
        "completed", "WP-2026-12-02-01",
        {"verdict": "passed", "locks": [], "followups": [], "record": record.sequence})


def test_an_event_that_cannot_be_stored_leaves_no_record(store: RecordStore) -> None:
    with pytest.raises(RecordRefusedError, match="by is empty"):
        store.append(package_id="WP-2026-12-02-01", package_sha256=PKG, results=RESULTS,
                     recorded_by="A. Lindqvist", recorded_at=T0, verdict="passed",
                     events=[_done(by=" ")])
    assert store.head() is None and list(store.records()) == [] and list(store.events()) == []


def test_a_failure_between_the_record_and_its_event_leaves_neither(
        store: RecordStore, monkeypatch: pytest.MonkeyPatch) -> None:
    """A process killed after the record's row went in and before its event did: the
    transaction is rolled back whole, so no record shows a job still open."""
    add(store, "WP-2026-12-02-07")  # a record before, to see the chain left as it was
    head = store.head()

    def killed(*args: Any) -> None:
        raise KeyboardInterrupt("killed between the record and its event")
    monkeypatch.setattr(store, "_insert_events", killed)
    with pytest.raises(KeyboardInterrupt):
        store.append(package_id="WP-2026-12-02-01", package_sha256=PKG, results=RESULTS,
                     recorded_by="A. Lindqvist", recorded_at=T0, verdict="passed",
                     events=[_done()])
    monkeypatch.undo()
    assert store.head() == head and [r.package_id for r in store.records()] == \
        ["WP-2026-12-02-07"]
    assert list(store.events()) == []
    again = store.append(package_id="WP-2026-12-02-01", package_sha256=PKG, results=RESULTS,
                         recorded_by="A. Lindqvist", recorded_at=T0, verdict="passed",
                         events=[_done()])
    assert again.sequence == 2 and [e.detail["record"] for e in store.events()] == [2]
    assert store.verify().ok and store.verify_events() == []
