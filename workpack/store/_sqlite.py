"""The SQLite records store: one file, WAL journal, writers serialized by BEGIN IMMEDIATE.

Durability: WAL with ``synchronous=FULL``, so a record whose ``append`` returned survives
a killed process and a power cut; a write cut short leaves the file as it was before it
(SQLite's atomic commit). Concurrent writers (processes or connections) queue on the
write lock for up to ``busy_timeout_s``; the last chain hash is read inside the write
transaction, so two writers can never chain from the same record.

Append-only twice over: the class offers no update or delete, and triggers in the file
refuse UPDATE and DELETE and any INSERT that is not the next record of the chain. The
triggers stop mistakes, not an attacker with the file (who can drop them); ``verify``
is what catches an attacker, and it reports missing or changed triggers too.

One plant per file. Schema 2 keeps the plant's name and its chain's genesis value in a
one-row table ``store_plant`` (guarded like the records); a file opened with another
plant's name is refused. A schema-1 file (made before stores knew their plant) opens and
is written as it is, as an unnamed store: its chain starts from ``GENESIS`` and it takes
records for whichever plant the caller names, as it always did.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import os
import sqlite3
from collections.abc import Iterator, Mapping, Sequence
from pathlib import Path
from typing import Any

from workpack.store._base import (
    BATCH,
    STORED_COLUMNS,
    ClosedOnExit,
    Imported,
    JobStateQuery,
    NoSuchRecordError,
    NotAStoreError,
    PlanningRow,
    Record,
    RecordRefusedError,
    StoreError,
    check_supersedes,
    in_batches,
    job_state_version,
    kept_columns,
    kept_job_rows,
    last_correction,
    planning_batches,
    planning_summaries,
    planning_version,
    prepare,
    record_filters,
    rows_to_add,
)
from workpack.store._chain import (
    GENESIS,
    ChainHead,
    StoredRow,
    Verification,
    next_row,
    plant_genesis,
    verify_rows,
)
from workpack.store._events import (
    EVENT_COLUMNS,
    Encoded,
    EventRefusedError,
    JobEvent,
    NewEvent,
    StoredEvent,
    as_tuple,
    encode,
    next_events,
    verify_events,
    with_record,
)

APPLICATION_ID = 0x77706B72  # "wpkr" in the SQLite header: marks a workpack records store
SCHEMA_VERSION = 2  # PRAGMA user_version; 1 (no store_plant table) is still read and written

_COLUMNS = STORED_COLUMNS

_TABLE = """CREATE TABLE records (
    sequence        INTEGER PRIMARY KEY AUTOINCREMENT CHECK (sequence >= 1),
    package_id      TEXT NOT NULL,
    package_sha256  TEXT NOT NULL CHECK (length(package_sha256) = 64),
    results_json    TEXT NOT NULL,
    results_sha256  TEXT NOT NULL CHECK (length(results_sha256) = 64),
    recorded_by     TEXT NOT NULL,
    recorded_at     TEXT NOT NULL,
    supersedes      INTEGER REFERENCES records (sequence)
                    CHECK (supersedes IS NULL OR supersedes < sequence),
    verdict         TEXT NOT NULL,
    prev_sha256     TEXT NOT NULL CHECK (length(prev_sha256) = 64),
    chain_sha256    TEXT NOT NULL CHECK (length(chain_sha256) = 64)
) STRICT"""

_INDEXES = (
    "CREATE INDEX records_by_package ON records (package_id, sequence)",
    "CREATE INDEX records_by_time ON records (recorded_at)",
    # One correction per record: corrections form a line, never a fork.
    "CREATE UNIQUE INDEX records_by_supersedes ON records (supersedes) "
    "WHERE supersedes IS NOT NULL",
)

_PLANT_TABLE = """CREATE TABLE store_plant (
    one      INTEGER PRIMARY KEY CHECK (one = 1),
    plant    TEXT NOT NULL,
    genesis  TEXT NOT NULL CHECK (length(genesis) = 64)
) STRICT"""

# The exact text is compared on verify: a trigger of the same name that does nothing
# is as good as none.
_GUARDS_V1 = {
    "records_no_update": (
        "CREATE TRIGGER records_no_update BEFORE UPDATE ON records BEGIN "
        "SELECT RAISE(ABORT, 'workpack records are append-only: UPDATE refused'); END"),
    "records_no_delete": (
        "CREATE TRIGGER records_no_delete BEFORE DELETE ON records BEGIN "
        "SELECT RAISE(ABORT, 'workpack records are append-only: DELETE refused'); END"),
    "records_append_in_order": (
        "CREATE TRIGGER records_append_in_order BEFORE INSERT ON records WHEN "
        "NEW.sequence IS NOT (SELECT coalesce(max(sequence), 0) + 1 FROM records) OR "
        "NEW.prev_sha256 IS NOT coalesce((SELECT chain_sha256 FROM records "
        f"ORDER BY sequence DESC LIMIT 1), '{GENESIS}') BEGIN "
        "SELECT RAISE(ABORT, 'workpack records: only the next record of the chain may be "
        "inserted'); END"),
}

_GUARDS_V2 = {
    "records_no_update": _GUARDS_V1["records_no_update"],
    "records_no_delete": _GUARDS_V1["records_no_delete"],
    "records_append_in_order": (
        "CREATE TRIGGER records_append_in_order BEFORE INSERT ON records WHEN "
        "NEW.sequence IS NOT (SELECT coalesce(max(sequence), 0) + 1 FROM records) OR "
        "NEW.prev_sha256 IS NOT coalesce((SELECT chain_sha256 FROM records "
        "ORDER BY sequence DESC LIMIT 1), (SELECT genesis FROM store_plant)) BEGIN "
        "SELECT RAISE(ABORT, 'workpack records: only the next record of the chain may be "
        "inserted'); END"),
    "store_plant_no_update": (
        "CREATE TRIGGER store_plant_no_update BEFORE UPDATE ON store_plant BEGIN "
        "SELECT RAISE(ABORT, 'workpack records: the plant of a store is fixed: "
        "UPDATE refused'); END"),
    "store_plant_no_delete": (
        "CREATE TRIGGER store_plant_no_delete BEFORE DELETE ON store_plant BEGIN "
        "SELECT RAISE(ABORT, 'workpack records: the plant of a store is fixed: "
        "DELETE refused'); END"),
}
_GUARDS = {1: _GUARDS_V1, 2: _GUARDS_V2}

# Job events (see _events): a table of their own, made by the first event written, so a
# store from before job events reads and verifies as it did. Guarded like the records;
# the chain starts from the store's genesis (GENESIS in a schema-1 file).
_EVENTS_TABLE = """CREATE TABLE IF NOT EXISTS job_events (
    sequence     INTEGER PRIMARY KEY CHECK (sequence >= 1),
    package_id   TEXT NOT NULL,
    job_key      TEXT NOT NULL,
    kind         TEXT NOT NULL,
    day          TEXT NOT NULL,
    at           TEXT NOT NULL,
    by           TEXT NOT NULL,
    detail_json  TEXT NOT NULL,
    prev_sha256  TEXT NOT NULL CHECK (length(prev_sha256) = 64),
    chain_sha256 TEXT NOT NULL CHECK (length(chain_sha256) = 64)
) STRICT"""
_EVENTS_INDEX = "CREATE INDEX IF NOT EXISTS job_events_by_package ON job_events (package_id)"

# What planning reads of each record (``workpack.records.planning_summary``), written in
# the record's transaction: a derived copy, never part of the chain, used only while its
# version and payload hash match the record (else the payload is read). Made by the first
# record written after it existed; older records, or records another workpack wrote,
# simply have none.
_PLANNING_TABLE = """CREATE TABLE IF NOT EXISTS record_planning (
    sequence        INTEGER NOT NULL,
    version         INTEGER NOT NULL,
    results_sha256  TEXT NOT NULL,
    summary_json    TEXT NOT NULL,
    PRIMARY KEY (sequence, version)
) STRICT"""


# Each job's state as its events leave it (``workpack.joblog.kept_job``), kept in the
# transaction of every write of events, so the status reads the open jobs and each
# routine test's last pass instead of folding a year of events. A derived copy outside
# the chain of events, replaced as the job moves on (the events stay the truth and are
# never changed); read only while ``job_states_through`` says the states were kept up to
# the last event, in today's version, else the events are folded. ``verify`` folds the
# events and compares every state.
_JOB_STATES = (
    """CREATE TABLE IF NOT EXISTS job_states (
    package_id       TEXT PRIMARY KEY,
    version          INTEGER NOT NULL,
    open             INTEGER NOT NULL,
    state            TEXT NOT NULL,
    item             TEXT NOT NULL,
    routine_test     TEXT,
    routine_element  TEXT,
    finished_on      TEXT,
    own_pass_on      TEXT,
    answers_passed   INTEGER NOT NULL,
    summary_json     TEXT NOT NULL
) STRICT""",
    "CREATE INDEX IF NOT EXISTS job_states_open ON job_states (open)",
    "CREATE INDEX IF NOT EXISTS job_states_by_routine ON job_states "
    "(routine_test, routine_element, own_pass_on)",
    "CREATE INDEX IF NOT EXISTS job_states_by_item ON job_states (item, finished_on)",
    """CREATE TABLE IF NOT EXISTS job_states_through (
    one           INTEGER PRIMARY KEY CHECK (one = 1),
    version       INTEGER NOT NULL,
    sequence      INTEGER NOT NULL,
    chain_sha256  TEXT NOT NULL
) STRICT""",
)


def _event_guards(version: int) -> dict[str, str]:
    genesis = "(SELECT genesis FROM store_plant)" if version >= 2 else f"'{GENESIS}'"
    return {
        "job_events_no_update": (
            "CREATE TRIGGER job_events_no_update BEFORE UPDATE ON job_events BEGIN "
            "SELECT RAISE(ABORT, 'workpack job events are append-only: UPDATE refused'); END"),
        "job_events_no_delete": (
            "CREATE TRIGGER job_events_no_delete BEFORE DELETE ON job_events BEGIN "
            "SELECT RAISE(ABORT, 'workpack job events are append-only: DELETE refused'); END"),
        "job_events_in_order": (
            "CREATE TRIGGER job_events_in_order BEFORE INSERT ON job_events WHEN "
            "NEW.sequence IS NOT (SELECT coalesce(max(sequence), 0) + 1 FROM job_events) OR "
            "NEW.prev_sha256 IS NOT coalesce((SELECT chain_sha256 FROM job_events "
            f"ORDER BY sequence DESC LIMIT 1), {genesis}) BEGIN "
            "SELECT RAISE(ABORT, 'workpack job events: only the next event of the chain may "
            "be inserted'); END"),
    }


class SQLiteStore(ClosedOnExit):
    """A records store in one SQLite file (see the module docstring for the guarantees).

    ``create=False`` refuses a path where no store exists yet, so an audit of a mistyped
    path fails instead of verifying a new empty store.
    """

    def __init__(self, path: str | os.PathLike[str], *, plant: str | None = None,
                 create: bool = True, busy_timeout_s: float = 30.0):
        self._path = Path(path)
        self._location = str(path)
        self._busy_timeout_s = busy_timeout_s
        if plant is not None and not (isinstance(plant, str) and plant.strip()):
            raise StoreError(f"{self._location}: the plant's name is empty; name the plant "
                             "whose records the store holds")
        self._plant, self._genesis, self._version = "", GENESIS, SCHEMA_VERSION
        if self._path.is_dir():
            raise NotAStoreError(f"{self._location}: is a folder, not a records store file")
        if not self._path.exists():
            if not create:
                raise StoreError(f"{self._location}: no records store here (no such file)")
            if not self._path.parent.is_dir():
                raise StoreError(f"{self._location}: cannot create the store: the folder "
                                 f"{self._path.parent} does not exist")
        mode = "rwc" if create else "rw"
        uri = f"{self._path.absolute().as_uri()}?mode={mode}"
        try:
            self._conn = sqlite3.connect(uri, uri=True, timeout=busy_timeout_s,
                                         isolation_level=None)
        except sqlite3.Error as exc:
            raise self._error(exc, "opening") from None
        try:
            with self._translate("opening"):
                self._open(plant)
        except BaseException:
            self._conn.close()
            raise

    # --- opening -----------------------------------------------------------------------

    def _open(self, plant: str | None) -> None:
        c = self._conn
        app_id, tables = self._identity()
        if app_id != APPLICATION_ID:
            self._refuse_unless_empty(app_id, tables)
            self._create_schema(plant or "")
        version = c.execute("PRAGMA user_version").fetchone()[0]
        if version > SCHEMA_VERSION:
            raise NotAStoreError(f"{self._location}: written by a newer workpack (store schema "
                                 f"{version}; this one reads schema {SCHEMA_VERSION}); "
                                 "upgrade workpack")
        if version < 1:
            raise NotAStoreError(f"{self._location}: marked as a records store but holds no "
                                 "schema version; the file was changed outside workpack")
        c.execute("PRAGMA journal_mode = WAL")  # kept by the file; a no-op once set
        c.execute("PRAGMA synchronous = FULL")
        c.execute("PRAGMA foreign_keys = ON")
        self._version = version
        if version >= 2:
            found = c.execute("SELECT plant, genesis FROM store_plant").fetchone()
            if found is None:
                raise NotAStoreError(f"{self._location}: the store's plant row is missing; "
                                     "the file was changed outside workpack")
            # The genesis follows from the name: a relabelled store breaks at record 1.
            self._plant, self._genesis = found[0], plant_genesis(found[0])
        if plant is not None and self._plant not in ("", plant):
            raise StoreError(f"{self._location}: this store holds the records of plant "
                             f"{self._plant!r}, not {plant!r}; give the store of that plant")

    def _identity(self) -> tuple[int, list[str]]:
        """The file's application id and table names, read in one snapshot.

        One read transaction, so a store another process creates meanwhile is seen
        either not at all or whole, never as tables without the id.
        """
        c = self._conn
        begun = not c.in_transaction
        if begun:
            c.execute("BEGIN")
        try:
            app_id = c.execute("PRAGMA application_id").fetchone()[0]
            tables = [r[0] for r in c.execute(
                "SELECT name FROM sqlite_master WHERE type = 'table' ORDER BY name")]
        finally:
            if begun:
                self._rollback()
        return app_id, tables

    def _refuse_unless_empty(self, app_id: int, tables: list[str]) -> None:
        if app_id != 0 or tables:
            kind = f"application id {app_id:#010x}" if app_id else "tables " + ", ".join(tables)
            raise NotAStoreError(f"{self._location}: not a workpack records store (an SQLite "
                                 f"database with {kind}); give the path of a records store "
                                 "or of a new file")

    def _create_schema(self, plant: str) -> None:
        c = self._conn
        c.execute("BEGIN IMMEDIATE")
        try:
            # Another process may have created the store while this one waited for the lock.
            app_id, tables = self._identity()
            if app_id != APPLICATION_ID:
                self._refuse_unless_empty(app_id, tables)
                c.execute(_TABLE)
                c.execute(_PLANT_TABLE)
                c.execute("INSERT INTO store_plant (one, plant, genesis) VALUES (1, ?, ?)",
                          (plant, plant_genesis(plant)))
                for statement in (*_INDEXES, *_GUARDS[SCHEMA_VERSION].values()):
                    c.execute(statement)
                c.execute(f"PRAGMA application_id = {APPLICATION_ID}")
                c.execute(f"PRAGMA user_version = {SCHEMA_VERSION}")
            c.execute("COMMIT")
        except BaseException:
            self._rollback()
            raise

    # --- errors ------------------------------------------------------------------------

    def _error(self, exc: sqlite3.Error, doing: str) -> StoreError:
        loc, msg = self._location, str(exc)
        if "file is not a database" in msg:
            return NotAStoreError(f"{loc}: not a workpack records store (not an SQLite "
                                  "database); give the path of a records store")
        if "malformed" in msg:
            return StoreError(f"{loc}: the store file is damaged (SQLite: {msg}); restore it "
                              "from a copy")
        if "locked" in msg or "busy" in msg:
            return StoreError(f"{loc}: the store stayed locked by another program for "
                              f"{self._busy_timeout_s:g} s while {doing}; try again")
        if "readonly" in msg:
            return StoreError(f"{loc}: the store cannot be written here (SQLite: {msg})")
        if "unable to open" in msg:
            return StoreError(f"{loc}: cannot open the store file (SQLite: {msg}); check "
                              "that it exists and is readable")
        if "no such" in msg:
            return StoreError(f"{loc}: the store's tables were changed outside workpack "
                              f"(SQLite: {msg})")
        return StoreError(f"{loc}: SQLite error while {doing}: {msg}")

    @contextlib.contextmanager
    def _translate(self, doing: str) -> Iterator[None]:
        """Database errors a person can cause become a StoreError naming the file.

        IntegrityError is left alone: the checks before each write should make it
        impossible, so seeing one is a bug.
        """
        try:
            yield
        except sqlite3.IntegrityError:
            raise
        except sqlite3.DatabaseError as exc:
            raise self._error(exc, doing) from None

    def _rollback(self) -> None:
        if self._conn.in_transaction:
            with contextlib.suppress(sqlite3.Error):
                self._conn.execute("ROLLBACK")

    # --- writing -----------------------------------------------------------------------

    @property
    def location(self) -> str:
        return self._location

    @property
    def plant(self) -> str:
        return self._plant

    def plants(self) -> list[str]:
        return [self._plant] if self.head() is not None else []

    def append(self, *, package_id: str, package_sha256: str, results: Mapping[str, Any],
               recorded_by: str, recorded_at: dt.datetime, verdict: str,
               supersedes: int | None = None, events: Sequence[NewEvent] = ()) -> Record:
        new = prepare(self._location, package_id=package_id, package_sha256=package_sha256,
                      results=results, recorded_by=recorded_by, recorded_at=recorded_at,
                      verdict=verdict, supersedes=supersedes)
        c = self._conn
        with self._translate("appending a record"):
            c.execute("BEGIN IMMEDIATE")
            try:
                last = c.execute(f"SELECT {_COLUMNS} FROM records "
                                 "ORDER BY sequence DESC LIMIT 1").fetchone()
                prev = StoredRow(*last) if last is not None else None
                if new.supersedes is not None:
                    check_supersedes(self._location, new, self._row(new.supersedes),
                                     last_correction(new.supersedes, self._correction_of),
                                     prev.sequence if prev is not None else 0)
                row = next_row(prev, package_id=new.package_id,
                               package_sha256=new.package_sha256,
                               results_json=new.results_json, recorded_by=new.recorded_by,
                               recorded_at=new.recorded_at, supersedes=new.supersedes,
                               verdict=new.verdict, genesis=self._genesis)
                c.execute(f"INSERT INTO records ({_COLUMNS}) VALUES "
                          "(?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)", row.as_tuple())
                self._keep_planning([row])
                if events:
                    self._insert_events(self._encoded(
                        [with_record(event, row.sequence) for event in events]))
                c.execute("COMMIT")
            except BaseException:
                self._rollback()
                raise
        return Record.from_row(row, self._location, self._plant)

    def import_rows(self, rows: Sequence[StoredRow], *, after: ChainHead | None,
                    genesis: str) -> Imported:
        c = self._conn
        start = after.sequence if after is not None else 0
        end = rows[-1].sequence if rows else start
        with self._translate("importing records"):
            c.execute("BEGIN IMMEDIATE")
            try:
                last = c.execute("SELECT coalesce(max(sequence), 0) FROM records"
                                 ).fetchone()[0]
                stored = dict(c.execute("SELECT sequence, chain_sha256 FROM records WHERE "
                                        "sequence BETWEEN ? AND ?", (start, end)).fetchall())
                new = rows_to_add(self._location, after=after, rows=rows, last=last,
                                  stored_chain=stored, stored_genesis=self._genesis,
                                  genesis=genesis)
                c.executemany(f"INSERT INTO records ({_COLUMNS}) VALUES "
                              "(?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
                              [row.as_tuple() for row in new])
                self._keep_planning(new)
                c.execute("COMMIT")
            except BaseException:
                self._rollback()
                raise
        return Imported(self._plant, len(new), len(rows) - len(new), self.head())

    def _keep_planning(self, rows: Sequence[StoredRow]) -> None:
        """The planning summaries of ``rows``, inside the transaction writing them."""
        c = self._conn
        if not rows:
            return
        if not self._has_table("record_planning"):
            c.execute(_PLANNING_TABLE)
        c.executemany("INSERT INTO record_planning (sequence, results_sha256, version, "
                      "summary_json) VALUES (?, ?, ?, ?)", planning_summaries(
                          [(r.sequence, r.results_sha256, r.results_json) for r in rows]))

    def kept_summaries(self) -> Iterator[tuple[int, str, str]]:
        with self._translate("reading"):
            if not self._has_table("record_planning"):
                return
        query = ("SELECT r.sequence, r.results_json, p.summary_json FROM records AS r JOIN "
                 "record_planning AS p ON p.sequence = r.sequence AND p.version = ? AND "
                 f"p.results_sha256 = r.results_sha256 WHERE r.sequence > ? "
                 f"ORDER BY r.sequence LIMIT {BATCH}")
        after = 0
        while True:
            with self._translate("reading"):
                batch = self._conn.execute(query, (planning_version(), after)).fetchall()
            yield from ((n, payload, summary) for n, payload, summary in batch)
            if len(batch) < BATCH:
                return
            after = batch[-1][0]

    def fill_planning_summaries(self) -> int:
        c = self._conn
        added = 0
        with self._translate("keeping planning summaries"):
            while True:
                c.execute("BEGIN IMMEDIATE")
                try:
                    if not self._has_table("record_planning"):
                        c.execute(_PLANNING_TABLE)
                    rows = [StoredRow(*found) for found in c.execute(
                        f"SELECT {_COLUMNS} FROM records AS r WHERE NOT EXISTS (SELECT 1 "
                        "FROM record_planning AS p WHERE p.sequence = r.sequence AND "
                        f"p.version = ?) ORDER BY sequence LIMIT {BATCH}",
                        (planning_version(),)).fetchall()]
                    self._keep_planning(rows)
                    c.execute("COMMIT")
                except BaseException:
                    self._rollback()
                    raise
                added += len(rows)
                if len(rows) < BATCH:
                    return added

    def _has_table(self, name: str) -> bool:
        return self._conn.execute("SELECT 1 FROM sqlite_master WHERE type = 'table' AND "
                                  "name = ?", (name,)).fetchone() is not None

    def _row(self, sequence: int) -> StoredRow | None:
        found = self._conn.execute(f"SELECT {_COLUMNS} FROM records WHERE sequence = ?",
                                   (sequence,)).fetchone()
        return StoredRow(*found) if found is not None else None

    def _correction_of(self, sequence: int) -> int | None:
        found = self._conn.execute("SELECT sequence FROM records WHERE supersedes = ?",
                                   (sequence,)).fetchone()
        return found[0] if found is not None else None

    # --- reading -----------------------------------------------------------------------

    def get(self, sequence: int) -> Record:
        with self._translate("reading"):
            row = self._row(sequence)
            if row is None:
                last = self._conn.execute("SELECT max(sequence) FROM records").fetchone()[0]
                held = f"the store holds records 1 to {last}" if last else "the store is empty"
                raise NoSuchRecordError(f"{self._location}: there is no record {sequence} "
                                        f"({held})")
        return Record.from_row(row, self._location, self._plant)

    def records(self, *, package_id: str | None = None, since: dt.datetime | None = None,
                until: dt.datetime | None = None) -> Iterator[Record]:
        where, params = record_filters("?", package_id=package_id, since=since, until=until)
        query = (f"SELECT {_COLUMNS} FROM records WHERE sequence > ?{where} "
                 f"ORDER BY sequence LIMIT {BATCH}")

        def fetch(after: int) -> list[Any]:
            with self._translate("reading"):
                return self._conn.execute(query, (after, *params)).fetchall()
        for row in in_batches(fetch):
            yield Record.from_row(row, self._location, self._plant)

    def latest(self, package_id: str) -> Record | None:
        with self._translate("reading"):
            found = self._conn.execute(
                f"SELECT {_COLUMNS} FROM records AS r WHERE package_id = ? AND NOT EXISTS "
                "(SELECT 1 FROM records AS c WHERE c.supersedes = r.sequence) "
                "ORDER BY sequence DESC LIMIT 1", (package_id,)).fetchone()
        return Record.from_row(StoredRow(*found), self._location, self._plant) if found else None

    def latest_per_package(self) -> dict[str, Record]:
        with self._translate("reading"):
            rows = self._conn.execute(
                f"SELECT {_COLUMNS} FROM (SELECT *, row_number() OVER "
                "(PARTITION BY package_id ORDER BY sequence DESC) AS newest FROM records AS r "
                "WHERE NOT EXISTS (SELECT 1 FROM records AS c WHERE c.supersedes = r.sequence)) "
                "WHERE newest = 1 ORDER BY package_id").fetchall()
        return {found[1]: Record.from_row(StoredRow(*found), self._location, self._plant)
                for found in rows}

    def planning_records(self) -> Iterator[PlanningRow]:
        with self._translate("reading"):
            summaries = self._has_table("record_planning")
        if summaries:
            query = ("SELECT r.sequence, r.package_id, r.supersedes, r.recorded_at, "
                     "p.summary_json, CASE WHEN p.summary_json IS NULL THEN r.results_json "
                     "END FROM records AS r LEFT JOIN record_planning AS p ON p.sequence = "
                     "r.sequence AND p.version = ? AND p.results_sha256 = r.results_sha256 "
                     f"WHERE r.sequence > ? ORDER BY r.sequence LIMIT {BATCH}")
            version: tuple[int, ...] = (planning_version(),)
        else:
            query = ("SELECT sequence, package_id, supersedes, recorded_at, NULL, "
                     f"results_json FROM records WHERE sequence > ? ORDER BY sequence "
                     f"LIMIT {BATCH}")
            version = ()

        def fetch(after: int) -> list[Any]:
            with self._translate("reading"):
                return self._conn.execute(query, (*version, after)).fetchall()
        yield from planning_batches(fetch, self._location)

    def lock_records(self) -> Iterator[Record]:
        with self._translate("reading"):
            summaries = self._has_table("record_planning")
        effective = ("NOT EXISTS (SELECT 1 FROM records AS c WHERE c.supersedes = "
                     "r.sequence)")
        if summaries:
            query = (f"SELECT {', '.join('r.' + c for c in _COLUMNS.split(', '))} FROM "
                     "records AS r LEFT JOIN record_planning AS p ON p.sequence = "
                     "r.sequence AND p.version = ? AND p.results_sha256 = r.results_sha256 "
                     f"WHERE r.sequence > ? AND {effective} AND (p.summary_json IS NULL OR "
                     "instr(p.summary_json, '\"locks_on\":true') > 0) "
                     f"ORDER BY r.sequence LIMIT {BATCH}")
            version: tuple[int, ...] = (planning_version(),)
        else:
            query = (f"SELECT {_COLUMNS} FROM records AS r WHERE r.sequence > ? AND "
                     f"{effective} ORDER BY r.sequence LIMIT {BATCH}")
            version = ()

        def fetch(after: int) -> list[Any]:
            with self._translate("reading"):
                return self._conn.execute(query, (*version, after)).fetchall()
        for row in in_batches(fetch):
            yield Record.from_row(row, self._location, self._plant)

    def head(self) -> ChainHead | None:
        with self._translate("reading"):
            found = self._conn.execute("SELECT sequence, chain_sha256 FROM records "
                                       "ORDER BY sequence DESC LIMIT 1").fetchone()
        return ChainHead(*found) if found is not None else None

    # --- job events --------------------------------------------------------------------

    def _has_events(self) -> bool:
        return self._conn.execute("SELECT 1 FROM sqlite_master WHERE type = 'table' AND "
                                  "name = 'job_events'").fetchone() is not None

    def _encoded(self, events: Sequence[NewEvent]) -> list[Encoded]:
        try:
            return [encode(event) for event in events]
        except EventRefusedError as exc:
            raise RecordRefusedError(f"{self._location}: {exc}") from None

    def append_events(self, events: Sequence[NewEvent]) -> list[JobEvent]:
        encoded = self._encoded(events)
        if not encoded:
            return []
        c = self._conn
        with self._translate("appending job events"):
            c.execute("BEGIN IMMEDIATE")
            try:
                rows = self._insert_events(encoded)
                c.execute("COMMIT")
            except BaseException:
                self._rollback()
                raise
        return [JobEvent.from_row(row) for row in rows]

    def _insert_events(self, encoded: Sequence[Encoded]) -> list[StoredEvent]:
        """Chain and insert events, inside the caller's write transaction."""
        c = self._conn
        if not self._has_events():
            for statement in (_EVENTS_TABLE, _EVENTS_INDEX,
                              *_event_guards(self._version).values()):
                c.execute(statement)
        last = c.execute("SELECT sequence, chain_sha256 FROM job_events "
                         "ORDER BY sequence DESC LIMIT 1").fetchone()
        rows = next_events(tuple(last) if last else None, self._genesis, encoded)
        c.executemany(f"INSERT INTO job_events ({EVENT_COLUMNS}) VALUES "
                      "(?, ?, ?, ?, ?, ?, ?, ?, ?, ?)", [as_tuple(r) for r in rows])
        self._keep_job_states()
        return rows

    def _keep_job_states(self) -> int:
        """The states of the jobs with events after the last kept (every job where none
        are kept in today's version), inside the caller's write transaction; how many."""
        c = self._conn
        if not self._has_events():
            return 0
        if not self._has_table("job_states_through"):
            for statement in _JOB_STATES:
                c.execute(statement)
        mark = c.execute("SELECT version, sequence FROM job_states_through").fetchone()
        after = mark[1] if mark is not None and mark[0] == job_state_version() else 0
        last = c.execute("SELECT sequence, chain_sha256 FROM job_events "
                         "ORDER BY sequence DESC LIMIT 1").fetchone()
        if last is None or last[0] == after:
            return 0
        events = (JobEvent.from_row(StoredEvent(*found)) for found in c.execute(
            f"SELECT {EVENT_COLUMNS} FROM job_events WHERE package_id IN (SELECT package_id "
            "FROM job_events WHERE sequence > ?) ORDER BY sequence", (after,)).fetchall())
        rows = kept_job_rows(events)
        columns = kept_columns()
        c.executemany(
            f"INSERT INTO job_states ({', '.join(columns)}) VALUES "
            f"({', '.join('?' * len(columns))}) ON CONFLICT (package_id) DO UPDATE SET "
            + ", ".join(f"{name} = excluded.{name}" for name in columns[1:]), rows)
        c.execute("INSERT INTO job_states_through (one, version, sequence, chain_sha256) "
                  "VALUES (1, ?, ?, ?) ON CONFLICT (one) DO UPDATE SET version = "
                  "excluded.version, sequence = excluded.sequence, chain_sha256 = "
                  "excluded.chain_sha256", (job_state_version(), *last))
        return len(rows)

    def _job_states_current(self) -> bool:
        """Whether the kept job states were brought up to the last event, in today's
        version (inside the caller's read transaction)."""
        if not self._has_table("job_states_through"):
            return False
        c = self._conn
        mark = c.execute("SELECT version, sequence, chain_sha256 FROM job_states_through"
                         ).fetchone()
        last = c.execute("SELECT sequence, chain_sha256 FROM job_events "
                         "ORDER BY sequence DESC LIMIT 1").fetchone()
        return mark is not None and last is not None and \
            tuple(mark) == (job_state_version(), *last)

    def job_states(self, query: JobStateQuery) -> list[str] | None:
        c = self._conn
        where, params = query.where("?", "job_states AS b WHERE")
        with self._translate("reading job states"):
            c.execute("BEGIN")  # one snapshot: the mark and the states it vouches for
            try:
                if not self._job_states_current():
                    return None
                return [found[0] for found in c.execute(
                    f"SELECT a.summary_json FROM job_states AS a WHERE {where} "
                    "ORDER BY a.package_id", params)]
            finally:
                self._rollback()

    def kept_job_states(self) -> list[tuple[Any, ...]] | None:
        c = self._conn
        with self._translate("reading job states"):
            c.execute("BEGIN")
            try:
                if not self._job_states_current():
                    return None
                return [tuple(found) for found in c.execute(
                    f"SELECT {', '.join(kept_columns())} FROM job_states "
                    "ORDER BY package_id")]
            finally:
                self._rollback()

    def fill_job_states(self) -> int:
        c = self._conn
        with self._translate("keeping job states"):
            c.execute("BEGIN IMMEDIATE")
            try:
                added = self._keep_job_states()
                c.execute("COMMIT")
            except BaseException:
                self._rollback()
                raise
        return added

    def events(self, *, package_id: str | None = None) -> Iterator[JobEvent]:
        with self._translate("reading job events"):
            if not self._has_events():
                return
            where, params = ("WHERE package_id = ?", (package_id,)) if package_id else ("", ())
            rows = self._conn.execute(f"SELECT {EVENT_COLUMNS} FROM job_events {where} "
                                      "ORDER BY sequence", params).fetchall()
        for found in rows:
            yield JobEvent.from_row(StoredEvent(*found))

    def verify_events(self) -> list[str]:
        c = self._conn
        with self._translate("verifying job events"):
            c.execute("BEGIN")
            try:
                if not self._has_events():
                    return []
                triggers = dict(c.execute("SELECT name, sql FROM sqlite_master "
                                          "WHERE type = 'trigger'").fetchall())
                rows = (StoredEvent(*found) for found in c.execute(
                    f"SELECT {EVENT_COLUMNS} FROM job_events ORDER BY sequence"))
                problems = verify_events(self._location, rows, self._genesis)
                if any(triggers.get(name) != sql
                       for name, sql in _event_guards(self._version).items()):
                    problems.append(f"{self._location}: the job events' append-only guards "
                                    "are missing or changed")
            finally:
                self._rollback()
        return problems

    # --- verifying ---------------------------------------------------------------------

    def _stored_rows(self) -> Iterator[StoredRow]:
        cursor = self._conn.execute(f"SELECT {_COLUMNS} FROM records ORDER BY sequence")
        while batch := cursor.fetchmany(BATCH):
            yield from (StoredRow(*found) for found in batch)

    def verify(self, *, anchor: ChainHead | None = None) -> Verification:
        c = self._conn
        with self._translate("verifying"):
            c.execute("BEGIN")  # one read snapshot: appends by others do not show half-way
            try:
                triggers = dict(c.execute("SELECT name, sql FROM sqlite_master "
                                          "WHERE type = 'trigger'").fetchall())
                guards = _GUARDS[self._version]
                guards_intact = all(triggers.get(name) == sql for name, sql in guards.items())
                found = c.execute("SELECT seq FROM sqlite_sequence "
                                  "WHERE name = 'records'").fetchone()
                high_water = found[0] if found is not None and type(found[0]) is int else None
                result = verify_rows(self._location, self._stored_rows(), self._stored_rows,
                                     high_water=high_water, anchor=anchor,
                                     guards_intact=guards_intact, genesis=self._genesis)
            finally:
                self._rollback()
        return result

    # --- lifetime ----------------------------------------------------------------------

    def close(self) -> None:
        self._conn.close()

    def __repr__(self) -> str:
        return f"SQLiteStore({self._location!r})"
