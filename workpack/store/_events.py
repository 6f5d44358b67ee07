"""Job events: what happened to each job, one row per change, never changed afterwards.

A job's life is the list of its events (planned, issued, started, suspended, resumed,
completed, cancelled, carried over), each with who and when; its state is read from
them (``workpack.joblog``), never stored. Both backends keep them in a table of their
own beside the records, append-only like the records (no update, no delete, only the
next event of the chain may be inserted) and chained: each event's hash covers the one
before it, starting from the plant's genesis value, so ``verify_events`` finds the first
event altered, removed or reordered.

The chain hash of an event is the SHA-256 of ``workpack-job-event-v1``, a zero byte, and
the canonical JSON (RFC 8785, ``_chain.canonical_json``) of the list ``[prev_sha256,
sequence, package_id, job_key, kind, day, at, by, detail_json]``. Pure: no database here.
"""

from __future__ import annotations

import datetime as dt
import functools
import hashlib
import json
from collections.abc import Iterable, Mapping
from dataclasses import astuple, dataclass, fields
from typing import Any

from workpack.store._chain import (
    NotStorableError,
    canonical_json,
    format_timestamp,
    parse_timestamp,
)

EVENT_KINDS = ("planned", "issued", "started", "suspended", "resumed", "completed",
               "cancelled", "carried_over")
_DOMAIN = b"workpack-job-event-v1\x00"


class EventRefusedError(ValueError):
    """An event that cannot be stored as given; the message says why."""


@dataclass(frozen=True)
class StoredEvent:
    """One event as a backend keeps it (the columns, in this order)."""

    sequence: int
    package_id: str
    job_key: str
    kind: str
    day: str  # ISO date: the plan day it belongs to
    at: str  # format_timestamp
    by: str
    detail_json: str  # canonical JSON
    prev_sha256: str
    chain_sha256: str


EVENT_COLUMNS = ", ".join(f.name for f in fields(StoredEvent))


@dataclass(frozen=True)
class JobEvent:
    """One event of a job as readers see it: ``at`` aware; ``detail`` parsed from its
    canonical JSON when first asked for (a year of events is read every morning, and
    most details are never looked at)."""

    sequence: int
    package_id: str
    job_key: str
    kind: str
    day: dt.date
    at: dt.datetime
    by: str
    detail_json: str  # canonical JSON

    @functools.cached_property
    def detail(self) -> Mapping[str, Any]:
        parsed: Mapping[str, Any] = json.loads(self.detail_json)
        return parsed

    @classmethod
    def from_row(cls, row: StoredEvent) -> JobEvent:
        return cls(row.sequence, row.package_id, row.job_key, row.kind,
                   dt.date.fromisoformat(row.day), parse_timestamp(row.at), row.by,
                   row.detail_json)


@dataclass(frozen=True)
class NewEvent:
    """An event to append: the caller's fields, before numbering and chaining."""

    package_id: str
    job_key: str
    kind: str
    day: dt.date
    at: dt.datetime
    by: str
    detail: Mapping[str, Any]


Encoded = tuple[str, str, str, str, str, str, str]


def with_record(event: NewEvent, sequence: int) -> NewEvent:
    """``event`` naming the record it goes with (``detail["record"]``): an event written
    in a record's transaction (``RecordStore.append(events=...)``)."""
    return NewEvent(event.package_id, event.job_key, event.kind, event.day, event.at,
                    event.by, {**event.detail, "record": sequence})


def encode(event: NewEvent) -> Encoded:
    """The event's stored text (package id, key, kind, day, at, by, detail JSON);
    EventRefusedError for what a caller's data gets wrong."""
    for name in ("package_id", "job_key", "by"):
        value = getattr(event, name)
        if not isinstance(value, str) or not value.strip():
            raise EventRefusedError(f"job event: {name} is empty")
    if event.kind not in EVENT_KINDS:
        raise EventRefusedError(f"job event: kind {event.kind!r} is not one of "
                                f"{', '.join(EVENT_KINDS)}")
    try:
        detail = canonical_json(dict(event.detail), what="detail")
    except NotStorableError as exc:
        raise EventRefusedError(f"job event for {event.package_id}: {exc}") from None
    return (event.package_id, event.job_key, event.kind, event.day.isoformat(),
            format_timestamp(event.at), event.by, detail)


def event_chain_hash(prev_sha256: str, sequence: int, package_id: str, job_key: str,
                     kind: str, day: str, at: str, by: str, detail_json: str) -> str:
    body = canonical_json([prev_sha256, sequence, package_id, job_key, kind, day, at, by,
                           detail_json], what="event")
    return hashlib.sha256(_DOMAIN + body.encode("utf-8")).hexdigest()


def next_events(prev: tuple[int, str] | None, genesis: str,
                encoded: Iterable[Encoded]) -> list[StoredEvent]:
    """The rows that follow ``prev`` (the last event's number and chain hash, or None)."""
    sequence, chain = prev if prev is not None else (0, genesis)
    rows = []
    for fields_ in encoded:
        sequence += 1
        digest = event_chain_hash(chain, sequence, *fields_)
        rows.append(StoredEvent(sequence, *fields_, chain, digest))
        chain = digest
    return rows


def as_tuple(row: StoredEvent) -> tuple[Any, ...]:
    return astuple(row)


def verify_events(location: str, rows: Iterable[StoredEvent], genesis: str) -> list[str]:
    """What is wrong with a plant's chain of events, first problem first; [] if intact."""
    expected_prev, expected_sequence = genesis, 1
    for row in rows:
        if row.sequence != expected_sequence:
            return [f"{location}: job event {expected_sequence} is missing (the next event "
                    f"is numbered {row.sequence})"]
        if row.prev_sha256 != expected_prev:
            return [f"{location}: job event {row.sequence} does not follow event "
                    f"{row.sequence - 1}: an event was removed, replaced or reordered"]
        digest = event_chain_hash(row.prev_sha256, row.sequence, row.package_id, row.job_key,
                                  row.kind, row.day, row.at, row.by, row.detail_json)
        if digest != row.chain_sha256:
            return [f"{location}: job event {row.sequence} ({row.package_id}, {row.kind}) was "
                    "changed after it was written"]
        expected_prev, expected_sequence = row.chain_sha256, row.sequence + 1
    return []
