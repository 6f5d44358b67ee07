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
    assigned: tuple[str, ...] = ()  # "S. Quayle (LCS-0107)", the lead first (plan --crew)
    supervisor_assigned: str | None = None  # who supervises and countersigns (plan --crew)


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
class CheckFinding:
    """One check ``verify`` makes beyond the chain: an anchor (and who signed it), the
    verdicts judged again, the records' signatures; one line each."""

    ok: bool
    message: str


@dataclass(frozen=True)
class VerifyReport:
    """``verify``: every chain checked, and what --anchor, --packages and --crew asked
    (exit 1 if any chain is broken or any check fails)."""

    ok: bool
    chains: tuple[ChainReport, ...]
    checks: tuple[CheckFinding, ...] = ()


@dataclass(frozen=True)
class AuditReport:
    """``audit``: the chain it read and the report files (exit 1 if the chain broke, or a
    verdict or signature does not stand)."""

    chain: ChainReport
    packages: int
    records: int
    files: tuple[str, ...]
    # verdicts that disagree when judged again, and records whose signatures are refused
    # (--crew), as the report lists them at its top (exit 1 if any)
    problems: tuple[str, ...] = ()


@dataclass(frozen=True)
class CloseoutReport:
    package: str
    sequence: int
    verdict: str
    file: str
    signed_by: str | None = None  # the signer's id in the crew register (--sign-as)


@dataclass(frozen=True)
class SyncExportReport:
    """``sync export``: the bundle written and the records it holds."""

    plant: str
    store: str
    after: int  # the last record the office holds already (0: none)
    through: int  # the bundle's last record (= after when it holds none)
    records: int
    signed_by: str  # the exporter's id in the crew register
    file: str


@dataclass(frozen=True)
class BundleOutcome:
    """One bundle given to ``sync import``: taken in, or refused and why."""

    file: str
    imported: bool
    plant: str | None  # None where the bundle could not be read
    added: int
    already_held: int
    head: ChainHead | None  # the plant's chain after the import
    refused: str | None  # why it was refused, one line


@dataclass(frozen=True)
class SyncImportReport:
    """``sync import``: every bundle, in the order handled (exit 2 if any was refused)."""

    ok: bool
    bundles: tuple[BundleOutcome, ...]


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
