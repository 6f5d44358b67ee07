"""The records store as an interface: the record, the protocol, the errors, the checks.

Everything a backend shares and nothing it does differently: a backend only keeps rows,
serializes writers and reads rows back; hashing and verification live in ``_chain``.
"""

from __future__ import annotations

import datetime as dt
import json
import re
from collections.abc import Callable, Iterable, Iterator, Mapping, Sequence
from dataclasses import dataclass, fields
from types import TracebackType
from typing import Any, Protocol, Self, runtime_checkable
from urllib.parse import urlsplit

from workpack.errors import WorkpackError
from workpack.store._chain import (
    ChainHead,
    NotStorableError,
    StoredRow,
    Verification,
    canonical_json,
    format_timestamp,
    is_sha256_hex,
    parse_timestamp,
)
from workpack.store._events import JobEvent, NewEvent

# --- errors ----------------------------------------------------------------------------


class StoreError(WorkpackError):
    """The records store cannot do what was asked; the message names the store."""


class NotAStoreError(StoreError):
    """The file (or database) is not a workpack records store, or not one this reads."""


class StoreURLError(StoreError):
    """The store's location names a kind of store this workpack cannot open."""


class ReadOnlyError(StoreError):
    """The store may be read but not written by this database role."""


class RecordRefusedError(StoreError):
    """A new record was refused before anything was written (bad reference or value)."""


class NoSuchRecordError(StoreError):
    """A record asked for by number is not in the store."""


class ChainContinuationError(RecordRefusedError):
    """Records brought from elsewhere that do not continue the plant's chain as stored:
    ``kind`` is ``gap`` (records between are missing) or ``fork`` (the store holds other
    records under the same numbers); ``sequence`` is the first record concerned."""

    def __init__(self, message: str, kind: str, sequence: int):
        super().__init__(message)
        self.kind = kind
        self.sequence = sequence


def redact(url: str) -> str:
    """``url`` with any password (``user:pw@`` or ``?password=``) replaced by ``***``."""
    try:
        netloc, password = urlsplit(url).netloc, urlsplit(url).password
    except ValueError:
        return "<unreadable store URL>"
    shown = url
    if password is not None:
        user, _, host = netloc.rpartition("@")
        shown = shown.replace(netloc, f"{user.split(':', 1)[0]}:***@{host}", 1)
    return re.sub(r"(?i)([?&]password=)[^&#]*", r"\1***", shown)


# --- the record ------------------------------------------------------------------------


@dataclass(frozen=True)
class Record:
    """One stored record, as the audit reads it. ``recorded_at`` is aware, in UTC."""

    sequence: int
    package_id: str
    package_sha256: str
    results_json: str  # canonical JSON, exactly as hashed
    results_sha256: str
    recorded_by: str
    recorded_at: dt.datetime
    supersedes: int | None
    verdict: str
    chain_sha256: str
    plant: str = ""  # the plant whose chain holds it; "" in an unnamed store

    @property
    def results(self) -> dict[str, Any]:
        """The results parsed back: equal to the mapping given to ``append``."""
        parsed: dict[str, Any] = json.loads(self.results_json)
        return parsed

    @classmethod
    def from_row(cls, row: StoredRow, location: str, plant: str = "") -> Record:
        """The record of a stored row; StoreError if the row cannot be read back."""
        try:
            when = parse_timestamp(row.recorded_at)
            json.loads(row.results_json)
        except (TypeError, ValueError):
            raise StoreError(f"{location}: record {row.sequence} is damaged and cannot be "
                             "read back; run verify to find the first damaged record"
                             ) from None
        return cls(row.sequence, row.package_id, row.package_sha256, row.results_json,
                   row.results_sha256, row.recorded_by, when, row.supersedes, row.verdict,
                   row.chain_sha256, plant)


@dataclass(frozen=True)
class PlanningRow:
    """One record as the planner reads it (``RecordStore.planning_records``): its place in
    the chain, its time, and either the planning summary the store kept beside it
    (``workpack.records.planning_summary``, of today's version) or, where there is none,
    its payload to be read."""

    sequence: int
    package_id: str
    supersedes: int | None
    recorded_at: dt.datetime
    summary: str | None
    results_json: str | None  # only where ``summary`` is None

    @property
    def facts(self) -> Any:
        """The record's ``workpack.records.PlanningFacts``."""
        from workpack.records import facts_from_summary, planning_facts

        if self.summary is not None:
            return facts_from_summary(self.summary)
        assert self.results_json is not None
        return planning_facts(self.results_json)

    @classmethod
    def from_row(cls, row: Sequence[Any], location: str) -> PlanningRow:
        """From (sequence, package_id, supersedes, recorded_at, summary, results_json);
        StoreError for a row ``Record.from_row`` would refuse (a payload read here must be
        JSON, the time a time)."""
        sequence, package_id, supersedes, recorded_at, summary, results_json = row
        try:
            when = parse_timestamp(recorded_at)
            if summary is None:
                json.loads(results_json)
        except (TypeError, ValueError):
            raise StoreError(f"{location}: record {sequence} is damaged and cannot be "
                             "read back; run verify to find the first damaged record"
                             ) from None
        return cls(sequence, package_id, supersedes, when, summary, results_json)


# --- the interface ---------------------------------------------------------------------


@runtime_checkable
class RecordStore(Protocol):
    """Append-only, hash-chained storage of completed results.

    There is no update and no delete: a correction is a new record whose ``supersedes``
    names the record it corrects. Pass a store to whatever needs one (records, audit);
    tests pass a temporary SQLite file or a PostgreSQL database alike.

    One chain per plant: an object reads and extends the chain of the plant it was
    opened for (``open_store(location, plant=...)``); sequence numbers, ``head`` and
    ``verify`` are that plant's. An SQLite file holds one plant; a PostgreSQL store holds
    many, and ``plants()`` lists those this connection may read.
    """

    @property
    def location(self) -> str:
        """The path or URL the store was opened with (passwords left out), and the plant
        where the store holds several."""
        ...

    @property
    def plant(self) -> str:
        """The plant whose chain this object reads and extends ("" in an unnamed store).

        StoreError where no plant was named and the store holds several (or none).
        """
        ...

    def plants(self) -> list[str]:
        """The plants whose records the store holds and this connection may read, sorted."""
        ...

    def append(self, *, package_id: str, package_sha256: str, results: Mapping[str, Any],
               recorded_by: str, recorded_at: dt.datetime, verdict: str,
               supersedes: int | None = None, events: Sequence[NewEvent] = ()) -> Record:
        """Store one record in one transaction and return it, numbered and chained.

        ``recorded_at`` is the caller's timestamp (aware); the store never reads the clock.
        ``events``: the job events the record makes (completed, suspended), written in the
        same transaction, each detail naming the record (``"record"``: its number), so a
        record is never stored without its event, nor an event without its record.
        RecordRefusedError if ``supersedes`` names no record, a record of another package
        or one already superseded, if the results are not JSON that can round-trip, or an
        event cannot be stored; nothing is written then.
        """
        ...

    def get(self, sequence: int) -> Record:
        """The record numbered ``sequence``; NoSuchRecordError if there is none."""
        ...

    def records(self, *, package_id: str | None = None, since: dt.datetime | None = None,
                until: dt.datetime | None = None) -> Iterator[Record]:
        """Records in sequence order; ``since`` <= recorded_at < ``until`` when given."""
        ...

    def latest(self, package_id: str) -> Record | None:
        """The package's latest effective record: the newest that no record supersedes.

        ``workpack.records.latest_effective`` is the definition; a backend answers in its
        own query, held to that definition by tests/test_records.py.
        """
        ...

    def latest_per_package(self) -> dict[str, Record]:
        """``latest`` for every package in the store, keyed by package id in sorted order."""
        ...

    def planning_records(self) -> Iterator[PlanningRow]:
        """Every record in sequence order as the planner reads it: with the summary kept
        beside it where there is one of today's version for its payload, else with the
        payload itself (records written before summaries were kept)."""
        ...

    def lock_records(self) -> Iterator[Record]:
        """The effective records (none superseded) that may leave a lock on, in sequence
        order: those whose kept summary says so (``workpack.records.may_leave_locks``)
        and those with no summary of today's version; the others' payloads are not
        read. ``lockregister.stored_locks(..., on_only=True)`` gives from them what it
        gives from every record."""
        ...

    def kept_summaries(self) -> Iterator[tuple[int, str, str]]:
        """(sequence, payload, summary) of each record with a planning summary of today's
        version kept for its payload, in sequence order: for ``verify`` to recompute,
        since the summaries are outside the chain and a changed one would mislead the
        planner while every record still verifies."""
        ...

    def fill_planning_summaries(self) -> int:
        """Keep the planning summary of each record that has none of today's version
        (written before summaries were kept, or by an older workpack), in transactions of
        ``BATCH`` records; how many were added. Nothing of a record changes: the summary is
        a derived copy beside it. ReadOnlyError where this role may not write."""
        ...

    def head(self) -> ChainHead | None:
        """The last record's number and chain hash (an anchor to write down); None if empty."""
        ...

    def append_events(self, events: Sequence[NewEvent]) -> list[JobEvent]:
        """Store job events (``_events``) in one transaction, numbered and chained after
        the plant's last event, and return them. RecordRefusedError for an event that
        cannot be stored (empty names, an unknown kind, detail JSON cannot hold); nothing
        of the batch is written then."""
        ...

    def events(self, *, package_id: str | None = None) -> Iterator[JobEvent]:
        """The plant's job events in sequence order (only ``package_id``'s when given)."""
        ...

    def verify_events(self) -> list[str]:
        """Recompute the chain of job events; what is wrong, first problem first."""
        ...

    def job_states(self, query: JobStateQuery) -> list[str] | None:
        """The kept job states ``query`` asks for (``workpack.joblog.kept_job``'s summary
        texts), by package id; None when the store keeps none brought up to its last job
        event in today's version (an older store, or events an older workpack wrote):
        fold the events then. Every write of events keeps the states of the jobs it
        touches in its own transaction (and first those of any job written since the
        states were last kept), outside the chain of events."""
        ...

    def kept_job_states(self) -> list[tuple[Any, ...]] | None:
        """Every kept job state as its row (``KEPT_COLUMNS``' order), by package id, for
        ``verify`` to compare with the states folded from the events; None where the
        status would not read them (``job_states``)."""
        ...

    def fill_job_states(self) -> int:
        """Keep the state of every job written since the states were last kept (all of
        them in a store that keeps none, or none of today's version), in one
        transaction; how many. ReadOnlyError where this role may not write."""
        ...

    def verify(self, *, anchor: ChainHead | None = None) -> Verification:
        """Recompute the whole chain; the first altered, removed or reordered record."""
        ...

    def import_rows(self, rows: Sequence[StoredRow], *, after: ChainHead | None,
                    genesis: str) -> Imported:
        """Add records kept in another store of this plant (a vessel's), rows as stored.

        ``rows`` are records ``after.sequence + 1`` onwards of a chain that began at
        ``genesis``, checked by the caller to chain to each other. In one transaction:
        rows the store already holds (same number, same chain hash) are skipped, so the
        same rows twice add nothing; the rest are appended as they are.
        ChainContinuationError, with nothing written, when they would leave a gap or
        the store holds different records under their numbers (a fork).
        """
        ...

    def close(self) -> None: ...

    def __enter__(self) -> Self: ...

    def __exit__(self, exc_type: type[BaseException] | None, exc: BaseException | None,
                 tb: TracebackType | None) -> None: ...


# --- checks every backend makes --------------------------------------------------------


@dataclass(frozen=True)
class NewRecord:
    """The caller's fields, checked and encoded, ready to be numbered and chained."""

    package_id: str
    package_sha256: str
    results_json: str
    recorded_by: str
    recorded_at: str
    supersedes: int | None
    verdict: str


def prepare(location: str, *, package_id: str, package_sha256: str,
            results: Mapping[str, Any], recorded_by: str, recorded_at: dt.datetime,
            verdict: str, supersedes: int | None) -> NewRecord:
    """Check and encode a new record's fields before any transaction starts.

    RecordRefusedError for what a person's results file can get wrong (empty names,
    numbers JSON cannot hold); TypeError or ValueError for a caller's programming error
    (a package hash that is not a SHA-256, a naive timestamp).
    """
    for name, value in (("package_id", package_id), ("recorded_by", recorded_by),
                        ("verdict", verdict)):
        if not isinstance(value, str):
            raise TypeError(f"{name} must be text (got {type(value).__name__})")
        if not value.strip():
            raise RecordRefusedError(f"{location}: {name} is empty; a record must say "
                                     f"its {name.replace('_', ' ')}")
    if not is_sha256_hex(package_sha256):
        raise ValueError(f"package_sha256 must be 64 lowercase hex digits "
                         f"(got {package_sha256!r}); use package_sha256(package)")
    if supersedes is not None and (type(supersedes) is not int or supersedes < 1):
        raise RecordRefusedError(f"{location}: supersedes must be a record number of 1 or "
                                 f"more (got {supersedes!r})")
    if not isinstance(results, Mapping):
        raise RecordRefusedError(f"{location}: results must be a mapping of names to values "
                                 f"(got {type(results).__name__})")
    try:
        results_json = canonical_json(results, what="results")
    except NotStorableError as exc:
        raise RecordRefusedError(f"{location}: record for {package_id}: {exc}") from None
    return NewRecord(package_id, package_sha256, results_json, recorded_by,
                     format_timestamp(recorded_at), supersedes, verdict)


def last_correction(sequence: int, correction_of: Callable[[int], int | None]) -> int | None:
    """The end of the line of corrections to ``sequence`` (None if it has none), given
    ``correction_of(n)``: the record whose ``supersedes`` is n, if any."""
    end = None
    while (found := correction_of(sequence)) is not None:
        end = sequence = found
    return end


def check_supersedes(location: str, new: NewRecord, target: StoredRow | None,
                     superseded_by: int | None, last: int) -> None:
    """RecordRefusedError unless ``new.supersedes`` may be corrected by ``new``.

    ``target`` is the row it names (None if absent), ``superseded_by`` the last record of
    the corrections already made to it (None if none), ``last`` the last sequence number.
    Called inside the append transaction, so no other writer can change the answer
    meanwhile.
    """
    n = new.supersedes
    if n is None:
        return
    if target is None:
        held = f"the store holds records 1 to {last}" if last else "the store is empty"
        raise RecordRefusedError(f"{location}: supersedes {n}: there is no record {n} "
                                 f"({held})")
    if target.package_id != new.package_id:
        raise RecordRefusedError(f"{location}: supersedes {n}: record {n} answers package "
                                 f"{target.package_id!r}, not {new.package_id!r}; a correction "
                                 "must answer the same package")
    if superseded_by is not None:
        raise RecordRefusedError(f"{location}: supersedes {n}: record {n} is already "
                                 f"superseded (its latest correction is record "
                                 f"{superseded_by}); supersede {superseded_by} instead")


@dataclass(frozen=True)
class Imported:
    """What ``import_rows`` did: records added, records the store held already, the head."""

    plant: str
    added: int
    already_held: int
    head: ChainHead | None


def rows_to_add(location: str, *, after: ChainHead | None, rows: Sequence[StoredRow],
                last: int, stored_chain: Mapping[int, str], stored_genesis: str | None,
                genesis: str) -> list[StoredRow]:
    """The rows of ``rows`` the store does not hold yet, or ChainContinuationError.

    ``last`` is the store's last record number (0 if none), ``stored_chain`` the chain
    hashes of its records numbered ``after.sequence`` to the last of ``rows``, and
    ``stored_genesis`` the value its chain began from (None if it holds no records).
    """
    if stored_genesis is not None and stored_genesis != genesis:
        raise ChainContinuationError(
            f"{location}: fork at record 1: the records brought here begin a different "
            "chain from the one stored (another plant's, or a store begun again)", "fork", 1)
    start = after.sequence if after is not None else 0
    if last < start:
        held = f"holds records 1 to {last}" if last else "holds no records yet"
        missing = f"record {last + 1}" if last + 1 == start else \
            f"records {last + 1} to {start}"
        raise ChainContinuationError(
            f"{location}: gap: the store {held}, and these records begin after record "
            f"{start}: {missing} have not arrived (bring the export that holds them first)",
            "gap", last + 1)
    if after is not None and start and stored_chain.get(start) != after.chain_sha256:
        raise ChainContinuationError(
            f"{location}: fork at record {start}: these records continue a record {start} "
            "other than the one stored (the chain was rewritten on one side)", "fork", start)
    for row in rows:
        if row.sequence > last:
            break
        if stored_chain.get(row.sequence) != row.chain_sha256:
            raise ChainContinuationError(
                f"{location}: fork at record {row.sequence}: the store holds a different "
                f"record {row.sequence} (the chain was rewritten on one side)", "fork",
                row.sequence)
    return [row for row in rows if row.sequence > last]


# --- reading and lifetime, alike in every backend ----------------------------------------

BATCH = 500  # rows per read while iterating
# The columns of a stored record, in ``StoredRow``'s order (its fields, as SELECT lists them).
STORED_COLUMNS = ", ".join(field.name for field in fields(StoredRow))


def record_filters(mark: str, *, package_id: str | None, since: dt.datetime | None,
                   until: dt.datetime | None) -> tuple[str, list[Any]]:
    """The conditions ``records()`` adds (" AND package_id = ?…", with ``mark`` as the
    backend's placeholder) and their values."""
    where, params = "", []
    for sql, value in (("package_id =", package_id),
                       ("recorded_at >=", since), ("recorded_at <", until)):
        if value is not None:
            where += f" AND {sql} {mark}"
            params.append(format_timestamp(value) if isinstance(value, dt.datetime)
                          else value)
    return where, params


def in_batches(fetch: Callable[[int], Sequence[Sequence[Any]]]) -> Iterator[StoredRow]:
    """Rows in sequence order, ``fetch(after)`` giving the next ``BATCH`` rows numbered
    above ``after``: no read stays open between the caller's steps, so appends may
    interleave with the iteration."""
    after = 0
    while True:
        batch = fetch(after)
        yield from (StoredRow(*found) for found in batch)
        if len(batch) < BATCH:
            return
        after = batch[-1][0]


def planning_batches(fetch: Callable[[int], Sequence[Sequence[Any]]],
                     location: str) -> Iterator[PlanningRow]:
    """``in_batches`` for ``planning_records``: rows of ``PlanningRow.from_row``'s shape."""
    after = 0
    while True:
        batch = fetch(after)
        yield from (PlanningRow.from_row(found, location) for found in batch)
        if len(batch) < BATCH:
            return
        after = batch[-1][0]


def planning_summaries(rows: Sequence[tuple[int, str, str]]) -> list[tuple[int, str, int, str]]:
    """(sequence, results_sha256, version, summary) for each (sequence, results_sha256,
    results_json) of records being written: what the store keeps beside them."""
    from workpack.records import PLANNING_SUMMARY_VERSION, planning_summary

    return [(sequence, digest, PLANNING_SUMMARY_VERSION, planning_summary(text))
            for sequence, digest, text in rows]


def planning_version() -> int:
    from workpack.records import PLANNING_SUMMARY_VERSION

    return PLANNING_SUMMARY_VERSION


def kept_job_rows(events: Iterable[JobEvent]) -> list[tuple[Any, ...]]:
    """The job-state rows a store keeps for the jobs of ``events`` (every event of each),
    in ``KEPT_COLUMNS``' order (``workpack.joblog.kept_job``)."""
    from workpack.joblog import kept_jobs

    return [row.as_tuple() for row in kept_jobs(events)]


def job_state_version() -> int:
    from workpack.joblog import JOB_STATE_VERSION

    return JOB_STATE_VERSION


def kept_columns() -> tuple[str, ...]:
    from workpack.joblog import KEPT_COLUMNS

    return KEPT_COLUMNS


@dataclass(frozen=True)
class JobStateQuery:
    """Which kept job states to read (``RecordStore.job_states``), any of: those the
    status reads first (open jobs, each routine test's latest own pass, jobs completed
    as passed that were made from other jobs' findings); jobs by package id; jobs
    completed, not routine, for one of ``items``, finished from ``since`` to before
    ``before``."""

    for_status: bool = False
    package_ids: tuple[str, ...] = ()
    items: tuple[str, ...] = ()
    since: dt.date | None = None
    before: dt.date | None = None

    def where(self, mark: str, table: str) -> tuple[str, list[Any]]:
        """The condition on ``table`` (its alias ``a``) and its values, with ``mark`` as
        the backend's placeholder and ``table`` naming the table and any plant filter of
        the inner query (``workpack.job_states AS b WHERE b.plant = a.plant AND``)."""
        parts: list[str] = []
        params: list[Any] = []
        if self.for_status:
            parts.append(
                "a.open OR a.answers_passed OR (a.own_pass_on IS NOT NULL AND NOT EXISTS "
                f"(SELECT 1 FROM {table} b.routine_test = a.routine_test AND "
                "b.routine_element = a.routine_element AND b.own_pass_on > a.own_pass_on))")
        if self.package_ids:
            parts.append(f"a.package_id IN ({', '.join([mark] * len(self.package_ids))})")
            params += self.package_ids
        if self.items and self.since is not None and self.before is not None:
            parts.append(f"(a.state = 'completed' AND a.routine_test IS NULL AND a.item IN "
                         f"({', '.join([mark] * len(self.items))}) AND a.finished_on >= "
                         f"{mark} AND a.finished_on < {mark})")
            params += [*self.items, self.since.isoformat(), self.before.isoformat()]
        return " OR ".join(parts) or "false", params


class ClosedOnExit:
    """A store used as a context manager is closed on leaving it."""

    def close(self) -> None:
        raise NotImplementedError

    def __enter__(self) -> Self:
        return self

    def __exit__(self, exc_type: type[BaseException] | None, exc: BaseException | None,
                 tb: TracebackType | None) -> None:
        self.close()
