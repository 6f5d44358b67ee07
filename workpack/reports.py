"""What the commands that write files or records report with ``--json``: plain data.

The commands whose result is a core object (check, isolate, diagnose, locate) print that
object; the others print one of these. Their schemas follow from the annotations
(``output_schemas.py``), so a field added here is a field documented there. Pure.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass
from typing import TYPE_CHECKING, Literal

if TYPE_CHECKING:
    from workpack.crew import PersonSummary
    from workpack.lockregister import LockOn
    from workpack.model.crew import CrewHeader
    from workpack.model.evaluation import Evaluation
    from workpack.plan.day import Conflict
    from workpack.store._chain import ChainBreak, ChainHead


@dataclass(frozen=True)
class PlannedPackage:
    id: str
    title: str
    item: str
    priority: int  # 1 = most urgent
    duration_h: float
    crew: int
    scheduled: bool  # False: deferred (does not fit the crew hours, or put off)
    clears_ground: bool


@dataclass(frozen=True)
class PlanReport:
    """``plan``: the day's packages, the files written and what to settle first."""

    plant: str
    date: dt.date
    crew_hours: float
    packages: tuple[PlannedPackage, ...]  # ranked
    conflicts: tuple[Conflict, ...]
    folder: str
    files: tuple[str, ...]  # names written into the folder


@dataclass(frozen=True)
class FilesReport:
    """A command that writes one or more files and judges nothing."""

    files: tuple[str, ...]


@dataclass(frozen=True)
class RecordReport:
    """``record``: the judgement and where it was stored (exit 1 unless it passed)."""

    package: str
    sequence: int
    store: str  # a URL's password left out
    verdict: Literal["passed", "failed", "incomplete"]
    evaluation: Evaluation
    followups: str | None  # the file of follow-up findings written, if any


@dataclass(frozen=True)
class ChainReport:
    """One plant's chain of records, as ``verify`` found it."""

    plant: str | None  # None: an SQLite file (one plant per file)
    store: str
    ok: bool
    records: int
    head: ChainHead | None
    first_break: ChainBreak | None
    guards_intact: bool
    message: str


@dataclass(frozen=True)
class VerifyReport:
    """``verify``: every chain checked (exit 1 if any is broken)."""

    ok: bool
    chains: tuple[ChainReport, ...]


@dataclass(frozen=True)
class AuditReport:
    """``audit``: the chain it read and the report files (exit 1 if the chain broke)."""

    chain: ChainReport
    packages: int
    records: int
    files: tuple[str, ...]


@dataclass(frozen=True)
class CloseoutReport:
    package: str
    sequence: int
    verdict: str
    file: str


@dataclass(frozen=True)
class DrawReport:
    paper: str
    sheets: int
    enlarged: tuple[int, ...]  # sheets larger than the paper: nothing left to split at
    file: str


@dataclass(frozen=True)
class StoreInitReport:
    store: str
    done: tuple[str, ...]  # one line per thing done or found in place


@dataclass(frozen=True)
class ImportReport:
    plant: str
    counts: dict[str, int]  # section -> elements read
    file: str


@dataclass(frozen=True)
class ExportedTable:
    name: str
    columns: tuple[str, ...]
    rows: int


@dataclass(frozen=True)
class ExportReport:
    tables: tuple[ExportedTable, ...]
    files: tuple[str, ...]


@dataclass(frozen=True)
class CrewCheckReport:
    """``crew check``: the register's header and each person as of ``at``."""

    crew: CrewHeader
    at: dt.datetime
    people: tuple[PersonSummary, ...]


@dataclass(frozen=True)
class LocksReport:
    """``locks``: every lock on now in one plant's records (lockregister.locks_on)."""

    plant: str
    store: str  # a URL's password left out
    locks_on: tuple[LockOn, ...]  # point locks first, then personal locks on lock boxes


@dataclass(frozen=True)
class JobEventReport:
    """``job``: the event written for a job (issued, started, resumed or cancelled)."""

    package_id: str
    event: str
    by: str
    at: dt.datetime
    note: str | None
    store: str  # a URL's password left out
