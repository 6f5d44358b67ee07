"""The audit report's data: plain frozen values, built by ``audit.build`` and laid out
by the renderers (``render.audit_html``, ``render.audit_pdf``) with the words of
``audit.wording``. Nothing here is worded for a reader; SI values, dates and states.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass
from typing import Literal

from workpack.electrical import TrendJudgement
from workpack.model.evaluation import Deviation, Outcome, ReadingVerdict

Status = Literal["completed", "failed", "open", "overdue"]
STATUSES: tuple[Status, ...] = ("completed", "failed", "open", "overdue")


@dataclass(frozen=True)
class AuditFilter:
    """Which packages the report covers, and the day their statuses are judged on."""

    since: dt.date | None
    until: dt.date | None
    plant: str | None
    as_of: dt.date

    def covers(self, day: dt.date) -> bool:
        return ((self.since is None or day >= self.since)
                and (self.until is None or day <= self.until))


@dataclass(frozen=True)
class Integrity:
    """The store's verification as the report shows it."""

    ok: bool  # the hash chain is intact
    guards_intact: bool  # the append-only triggers are in place
    message: str  # one line, from the store's verification
    count: int  # records in the store
    head_sequence: int | None
    head_sha256: str | None

    @property
    def intact(self) -> bool:
        """Chain and guards both as written: anything else is shown prominently."""
        return self.ok and self.guards_intact


@dataclass(frozen=True)
class RecordRef:
    """One stored record, as the report names it."""

    sequence: int
    package_id: str
    recorded_by: str
    recorded_at: dt.datetime  # aware, UTC
    verdict: str
    supersedes: int | None
    superseded_by: int | None  # the correction that replaced this record, if any
    chain_sha256: str
    package_matches: bool | None  # its package hash is the given package's; None: none given

    @property
    def superseded(self) -> bool:
        return self.superseded_by is not None


class ReadingLine(ReadingVerdict):
    """One reading of a job as its record holds it: the evaluation's verdict, and the
    value and temperature exactly as written on the results (None where left blank)."""

    entered: str | None
    entered_temperature: str | None


@dataclass(frozen=True)
class PackageAudit:
    """One issued package, its status, its records and what its latest record holds."""

    package_id: str
    plant: str
    date: dt.date
    title: str
    item: str
    status: Status
    latest: RecordRef | None  # the latest effective record
    records: tuple[RecordRef, ...]  # every record of the package, in sequence order
    readings: tuple[ReadingLine, ...]
    deviations: tuple[Deviation, ...]
    completed_by: str | None
    supervisor: str | None
    completed_on: dt.date | None
    problem: str | None = None  # the latest record's payload could not be read

    @property
    def failing(self) -> tuple[ReadingLine, ...]:
        return tuple(r for r in self.readings if r.outcome == "fail")


@dataclass(frozen=True)
class OpenIsolation:
    """A lock recorded as applied and never recorded as removed."""

    package_id: str
    plant: str | None  # None: neither the package nor its record could say
    item: str
    device: str
    lock: str | None
    tag: str | None
    applied_by: str | None
    applied_at: str | None
    record: RecordRef


@dataclass(frozen=True)
class TrendPoint:
    taken_on: dt.date
    compared_si: float  # Ω, as the evaluation compared it
    measured_si: float  # Ω, as measured
    temperature_c: float | None
    corrected: bool  # compared_si is corrected to the reference temperature
    outcome: Outcome
    package_id: str
    reading_id: str
    what: str
    record_sequence: int
    lowest_of_test: bool  # the weakest reading of its test: the one the trend follows
    as_found: bool = False  # before the work (recorded, not judged): a test of its own,
    # apart from the test after the work on the same day


@dataclass(frozen=True)
class IrTrend:
    """Insulation resistance of one element over time (Ω, dates)."""

    element: str
    unit: str  # the unit the readings were taken in, for display
    corrected_to_c: float | None  # every point corrected to this; None: not (all) corrected
    code_set: str | None  # the tables the judgement corrected with (workpack.history)
    minimum_si: float | None  # the limit's minimum (Ω) of the latest test
    minimum_basis: str
    points: tuple[TrendPoint, ...]  # oldest first; within a date, by record and reading
    judgement: TrendJudgement | None  # None with fewer than two tests or no minimum
    notes: tuple[str, ...]  # what was left out, mixed corrections, why no judgement

    @property
    def line(self) -> tuple[TrendPoint, ...]:
        """The lowest point of each test, oldest first: what the trend is judged on."""
        return tuple(p for p in self.points if p.lowest_of_test)


@dataclass(frozen=True)
class AuditReport:
    filter: AuditFilter
    integrity: Integrity
    packages: tuple[PackageAudit, ...]  # by date, then id
    open_isolations: tuple[OpenIsolation, ...]
    trends: tuple[IrTrend, ...]  # by element
    unmatched: tuple[RecordRef, ...]  # latest records of packages not given to the audit

    def counts(self) -> dict[Status, int]:
        tally = dict.fromkeys(STATUSES, 0)
        for package in self.packages:
            tally[package.status] += 1
        return tally

    @property
    def superseded(self) -> tuple[RecordRef, ...]:
        return tuple(r for p in self.packages for r in p.records if r.superseded)

