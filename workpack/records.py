"""The record format: what the records store keeps for a recorded job, how it is read
back, and which record of a package is in effect. Pure: the shell reads the store.

Everything that writes or reads a record's payload goes through this module (``record``
writes it; the close-out, the audit, the planner's history and the office tables read
it), so the format has one owner and one version number.

The payload
    The store keeps, for each record, the canonical JSON of a ``RecordPayload``
    (``Record.results_json``; the store itself neither knows nor checks its shape)::

        {"payload_version": 3,
         "results":    the results exactly as entered (model.results.Results),
         "evaluation": what they showed (model.evaluation.Evaluation),
         "signatures": the technician's and supervisor's (model.signature.Signature),
                       left out when the record is unsigned}

    Version 1, written before payloads carried their version, is the same without
    ``payload_version``; it reads unchanged (tests/fixtures/records-v1 holds such
    payloads). Version 3 added the signatures, group lock boxes, lock transfers and the
    instrument of a reading, all optional: versions 1 and 2 read with them empty. A
    payload of a later version is refused, saying that a newer workpack wrote it. A new
    version adds a branch to ``_Versioned._upgrade`` and a fixture. What the signatures
    cover is ``workpack.record_signatures``.

    ``read_payload`` reads a record's whole payload; ``read_for_planning`` only what the
    planner's history needs (``PlanningView``); ``read_back`` never raises and says why a
    payload could not be read.

Planning summaries
    Planning reads every record of the plant every day, so a store keeps beside each
    record, in the record's transaction, the short ``planning_summary`` of its payload:
    ``planning_facts`` read through ``PlanningView`` (the same payloads left out), and
    whether it may leave a lock on (``may_leave_locks``, for the lock register), with
    ``PLANNING_SUMMARY_VERSION``. The planner reads the summaries
    (``RecordStore.planning_records``) and reads a payload whole only where its record has
    no summary of this version (an older store, until a plan fills them in). They are
    outside the hash chain: ``verify`` recomputes each one against its record.

The latest effective record
    A correction is a new record whose ``supersedes`` names the record it corrects;
    the corrected record is *superseded*, and nothing is taken from it. A package's
    *latest effective* record is its record with the highest sequence number that no
    record supersedes (``latest_effective``). The stores answer the same question in
    SQL (``RecordStore.latest``, ``latest_per_package``) for speed; tests/test_records.py
    holds both backends to this definition on random chains of corrections.

What a record holds, as a reader sees it
    ``OUTCOME_WORDS`` (a reading's outcome), ``entered_text`` (a value as written on the
    sheet), ``is_bare_number`` and ``utc_text`` (a record's time) are shared by the
    close-out, the audit and the office tables.
"""

from __future__ import annotations

import datetime as dt
import json
import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import Any, Generic, Protocol, TypeVar

from pydantic import (
    BaseModel,
    ConfigDict,
    ValidationError,
    ValidationInfo,
    field_validator,
    model_validator,
)

from workpack.model.evaluation import RESISTANCE_UNITS, Evaluation, Outcome
from workpack.model.results import LockBoxRecord, LockRecord, Results
from workpack.model.signature import Signature

__all__ = [
    "OUTCOME_WORDS",
    "PAYLOAD_VERSION",
    "Chained",
    "PayloadError",
    "LocksView",
    "PLANNING_SUMMARY_VERSION",
    "PlannedReading",
    "PlanningFacts",
    "PlanningView",
    "ReadBack",
    "RecordPayload",
    "StoredRecord",
    "entered_text",
    "is_bare_number",
    "latest_effective",
    "may_leave_locks",
    "read_back",
    "read_for_locks",
    "read_for_planning",
    "planning_facts",
    "planning_summary",
    "read_payload",
    "record_payload",
    "facts_from_summary",
    "superseded_by",
    "utc_text",
]

PAYLOAD_VERSION = 3


class PayloadError(ValueError):
    """A record's payload that cannot be read back; the message says why."""


class _Versioned(BaseModel):
    """A payload's version, and what it takes to read an older one."""

    payload_version: int

    @model_validator(mode="before")
    @classmethod
    def _upgrade(cls, data: Any, info: ValidationInfo) -> Any:
        """A stored payload of an older version in today's shape (version 1 lacks only
        its version). Only when reading the store: a new payload states its version."""
        stored = bool(info.context and info.context.get(_STORED))
        if stored and isinstance(data, Mapping) and "payload_version" not in data:
            return {**data, "payload_version": 1}
        return data

    @field_validator("payload_version")
    @classmethod
    def _known(cls, version: int) -> int:
        if version > PAYLOAD_VERSION:
            raise ValueError(f"written by a newer workpack (payload version {version}; this "
                             f"one reads up to {PAYLOAD_VERSION}); upgrade workpack")
        if version < 1:
            raise ValueError(f"payload version {version} was never written")
        return version


class RecordPayload(_Versioned):
    """What the store keeps for one recorded job (see the module docstring)."""

    model_config = ConfigDict(extra="forbid", frozen=True)

    results: Results
    evaluation: Evaluation
    signatures: tuple[Signature, ...] = ()


class _ResultsPlanned(BaseModel):
    model_config = ConfigDict(extra="ignore", frozen=True)

    completed_on: dt.date | None = None
    ground_found_at: str | None = None


class PlanningView(_Versioned):
    """The part of a payload the planner's history reads (``read_for_planning``): the
    evaluation, and of the results only the day and the ground found. The rest is passed
    over unread, because planning reads every record of the plant each day."""

    model_config = ConfigDict(extra="ignore", frozen=True)

    results: _ResultsPlanned
    evaluation: Evaluation


class _FinalLocks(BaseModel):
    model_config = ConfigDict(extra="ignore", frozen=True)

    isolation: dict[str, LockRecord] = {}


class _ResultsLocks(BaseModel):
    model_config = ConfigDict(extra="ignore", frozen=True)

    isolation: dict[str, LockRecord] = {}
    final_tests: dict[str, _FinalLocks] = {}
    lock_boxes: dict[str, LockBoxRecord] = {}


class _EvaluationPlant(BaseModel):
    model_config = ConfigDict(extra="ignore", frozen=True)

    plant: str


class LocksView(_Versioned):
    """The part of a payload the lock register reads (``read_for_locks``): the locks and
    lock boxes of the results, and the plant. The register reads every record of the
    plant whenever a record is made or the locks are listed."""

    model_config = ConfigDict(extra="ignore", frozen=True)

    results: _ResultsLocks
    evaluation: _EvaluationPlant


_STORED = "stored payload"  # the validation context of a payload read from the store


def record_payload(results: Results, evaluation: Evaluation,
                   signatures: Iterable[Signature] = ()) -> dict[str, Any]:
    """The payload of a new record, as the plain JSON data ``RecordStore.append`` takes
    (``signatures`` left out when there are none)."""
    signed = tuple(signatures)
    return RecordPayload(payload_version=PAYLOAD_VERSION, results=results,
                         evaluation=evaluation, signatures=signed).model_dump(
                             mode="json", exclude=set() if signed else {"signatures"})


# --- reading a stored record ------------------------------------------------------------


class Chained(Protocol):
    """What ``latest_effective`` needs of a record (``store.Record`` has it)."""

    @property
    def sequence(self) -> int: ...

    @property
    def package_id(self) -> str: ...

    @property
    def supersedes(self) -> int | None: ...


class StoredRecord(Chained, Protocol):
    """A record as the store gives it back (``store.Record``)."""

    @property
    def results_json(self) -> str: ...

    @property
    def recorded_at(self) -> dt.datetime: ...


def read_payload(record: StoredRecord) -> RecordPayload:
    """The payload of ``record``; PayloadError saying why when it cannot be read."""
    return _read(record, RecordPayload)


def read_for_planning(record: StoredRecord) -> PlanningView | None:
    """What planning reads of ``record``; None when it cannot be read (the audit and the
    records table say why)."""
    try:
        return _read(record, PlanningView)
    except PayloadError:
        return None


def read_for_locks(record: StoredRecord) -> LocksView | None:
    """What the lock register reads of ``record``; None when it cannot be read."""
    try:
        return _read(record, LocksView)
    except PayloadError:
        return None


V = TypeVar("V", bound=_Versioned)


def _read(record: StoredRecord, view: type[V]) -> V:
    try:
        return view.model_validate_json(record.results_json, context={_STORED: True})
    except ValidationError as error:
        raise PayloadError(_why(error)) from None


def _why(error: ValidationError) -> str:
    """One line for the first thing wrong, in the order a reader needs it."""
    problems = error.errors(include_url=False)
    for problem in problems:
        if problem["type"] == "json_invalid":
            return "the record's payload is not JSON"
        if problem["loc"] == ():
            return "the record's payload is not a mapping"
        if problem["loc"] == ("payload_version",) and problem["type"] == "value_error":
            return f"the record's payload was {problem.get('ctx', {}).get('error')}"
    for part in ("evaluation", "results"):
        if any(p["loc"] == (part,) and p["type"] == "missing" for p in problems):
            return f"the record holds no {part}"
    first = problems[0]
    where = ".".join(str(step) for step in first["loc"])
    return f"the record's {where} does not read back: {first['msg']}"


R = TypeVar("R", bound=StoredRecord)


@dataclass(frozen=True)
class ReadBack(Generic[R]):
    """A stored record with its payload read back, or the reason it could not be."""

    record: R
    payload: RecordPayload | None
    problem: str | None  # why ``payload`` is None

    @property
    def evaluation(self) -> Evaluation | None:
        return self.payload.evaluation if self.payload is not None else None

    @property
    def results(self) -> Results | None:
        return self.payload.results if self.payload is not None else None


def read_back(record: R) -> ReadBack[R]:
    """``record`` with its payload, never raising: an unreadable one says why."""
    try:
        return ReadBack(record, read_payload(record), None)
    except PayloadError as problem:
        return ReadBack(record, None, str(problem))


# --- what planning keeps of a record ------------------------------------------------------

# The version of ``planning_summary``'s text and of the reading behind it: a store keeps
# each record's summary with this number, and a summary of another number is not used
# (the payload is read again), so a change here never leaves planning on stale summaries.
# 2: the summary also says whether the payload may leave a lock on (``may_leave_locks``),
# so the lock register reads only those payloads (``RecordStore.lock_records``).
PLANNING_SUMMARY_VERSION = 2

# A lock not recorded as removed, as a payload's JSON text writes it (any spacing).
_NOT_REMOVED = re.compile(r'"removed_at"\s*:\s*null')


def may_leave_locks(results_json: str) -> bool:
    """Whether a payload's text names a lock not recorded as removed: told without
    parsing it; every payload that leaves a lock on does (``lockregister.stored_locks``
    reads only those for the locks on now)."""
    return _NOT_REMOVED.search(results_json) is not None


@dataclass(frozen=True)
class PlannedReading:
    """One insulation reading as the planner's history takes it."""

    element: str
    measured_si: float
    low: float
    temperature_c: float | None
    code_set: str | None


@dataclass(frozen=True)
class PlanningFacts:
    """All the planner's history takes from one record's payload: whether it reads back
    (``read_for_planning``), the day it names, the ground found, and its insulation
    readings (element named, a resistance unit, a value and a minimum), in order."""

    readable: bool
    completed_on: dt.date | None = None
    ground_found_at: str | None = None
    readings: tuple[PlannedReading, ...] = ()


def planning_facts(results_json: str) -> PlanningFacts:
    """What planning takes from a payload, read exactly as ``read_for_planning`` reads it:
    a payload it cannot read gives ``readable=False`` and adds nothing."""
    try:
        view = PlanningView.model_validate_json(results_json, context={_STORED: True})
    except ValidationError:
        return PlanningFacts(readable=False)
    return PlanningFacts(
        readable=True, completed_on=view.results.completed_on,
        ground_found_at=view.results.ground_found_at,
        readings=tuple(PlannedReading(r.element, r.measured_si, r.low, r.temperature_c,
                                      r.code_set)
                       for r in view.evaluation.readings
                       if r.element and r.unit in RESISTANCE_UNITS
                       and r.measured_si is not None and r.low is not None))


def planning_summary(results_json: str) -> str:
    """``planning_facts`` of a payload as the short JSON text a store keeps beside the
    record (written in the record's transaction), so planning need not read every
    payload of the plant each day. ``facts_from_summary`` reads it back unchanged."""
    facts = planning_facts(results_json)
    locks = may_leave_locks(results_json)
    if not facts.readable:
        return json.dumps({"locks_on": locks, "readable": False}, separators=(",", ":"))
    return json.dumps({
        "locks_on": locks, "readable": True,
        "completed_on": facts.completed_on.isoformat() if facts.completed_on else None,
        "ground_found_at": facts.ground_found_at,
        "readings": [[r.element, r.measured_si, r.low, r.temperature_c, r.code_set]
                     for r in facts.readings]}, ensure_ascii=False, separators=(",", ":"))


def facts_from_summary(text: str) -> PlanningFacts:
    """The facts a ``planning_summary`` text holds; ValueError if it is not one."""
    data = json.loads(text)
    if not data["readable"]:
        return PlanningFacts(readable=False)
    day = data["completed_on"]
    return PlanningFacts(
        readable=True, completed_on=dt.date.fromisoformat(day) if day else None,
        ground_found_at=data["ground_found_at"],
        readings=tuple(PlannedReading(element, float(measured), float(low),
                                      None if temperature is None else float(temperature),
                                      code_set)
                       for element, measured, low, temperature, code_set in data["readings"]))


# --- which record is in effect ------------------------------------------------------------

C = TypeVar("C", bound=Chained)


def superseded_by(records: Iterable[Chained]) -> dict[int, int]:
    """Record number → the number of the record that supersedes it (its correction)."""
    return {record.supersedes: record.sequence for record in records
            if record.supersedes is not None}


def latest_effective(records: Iterable[C]) -> dict[str, C]:
    """Package id → its latest effective record, in package id order.

    The definition of the module docstring; the stores' SQL is tested against it.
    """
    chosen = list(records)
    superseded = superseded_by(chosen)
    latest: dict[str, C] = {}
    for record in chosen:
        if record.sequence in superseded:
            continue
        held = latest.get(record.package_id)
        if held is None or record.sequence > held.sequence:
            latest[record.package_id] = record
    return dict(sorted(latest.items()))


# --- what a record holds, as a reader sees it -----------------------------------------------

# The words every rendering prints beside its symbols: an outcome is never colour alone.
OUTCOME_WORDS: dict[Outcome, str] = {"pass": "PASS", "fail": "FAIL",
                                     "not recorded": "NOT RECORDED", "recorded": "RECORDED"}


def entered_text(value: float | str | None) -> str | None:
    """A value as it was written: text unchanged, a number without a spurious ".0"."""
    if value is None:
        return None
    if isinstance(value, bool):
        return str(value).lower()
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        return str(int(value)) if value.is_integer() and abs(value) < 1e15 else repr(value)
    return str(value)


def is_bare_number(text: str) -> bool:
    """Whether an entry is a number alone (so it is in the unit printed beside its box)."""
    try:
        float(text)
    except ValueError:
        return False
    return True


def utc_text(when: dt.datetime) -> str:
    """A stored timestamp for a reader: "2026-12-02 16:00 UTC"."""
    return f"{when.astimezone(dt.UTC):%Y-%m-%d %H:%M} UTC"
