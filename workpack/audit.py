"""The audit report: what was issued, what came back, what it showed, and whether the
records are still what was written.

``build_audit`` takes records already read from a store, the issued packages already
loaded (their JSON twins) and the store's ``Verification``, and returns an ``AuditReport``
of plain frozen data for the renderers. Pure: no file, database or clock; the caller
gives the date the statuses are judged on (``as_of``).

Rules the report follows:

- A package is in the report when its own date lies in ``since``..``until`` (both
  inclusive, either open) and, when ``plant`` is given, it belongs to that plant.
- A record named in a later record's ``supersedes`` is superseded: it is listed, marked as
  such, and nothing else in the report is taken from it. The latest record of a package
  that no other record supersedes is its *latest effective* record; the status, readings
  and deviations come from that one only, so no job is counted twice.
- Status: ``completed`` (latest effective verdict passed), ``failed`` (failed), ``open``
  (no record, or the latest is incomplete, and the package is dated ``as_of`` or later),
  ``overdue`` (the same, dated before ``as_of``).
- Readings are shown as entered (the text or number written on the sheet) beside the SI
  values the evaluation in the record derived from them; nothing is recomputed.
- Isolations not restored are taken from every package's latest effective record (date
  range not applied: a lock left on last month is still on), plant filter applied.
- Insulation trends: every reading of an element in a resistance unit, from the latest
  effective record of each package up to ``until``, for each element measured in a
  package of the report. The value plotted is the one the evaluation compared with the
  limit (corrected to the reference temperature where the limit names a code set). A
  test (one record) may measure several phases of one element; the weakest governs, so
  the trend line runs through the lowest value of each test. The judgement is
  ``workpack.history``'s (the one planning acts on): ``insulation_trend`` over the lowest
  reading of each day, corrected with the code set the readings name or the plant's
  default; where its values differ from those plotted, the report says so.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import math
from collections import defaultdict
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, fields
from typing import TYPE_CHECKING, Any, Literal

from pydantic import ValidationError

from workpack.electrical import TrendJudgement
from workpack.electrical.standards import CodeSet
from workpack.evaluate import Deviation, Evaluation, ReadingVerdict
from workpack.history import History, history_from_records
from workpack.model.package import Reading, WorkPackage
from workpack.model.results import LockRecord, Results
from workpack.numbers import format_quantity
from workpack.store import package_sha256

if TYPE_CHECKING:  # types only: the audit reads what the shell has read
    from workpack.store import Record, Verification

__all__ = [
    "OUTCOME_WORDS",
    "STATUS_WORDS",
    "AuditFilter",
    "AuditReport",
    "DeviationLine",
    "Integrity",
    "IrTrend",
    "OpenIsolation",
    "PackageAudit",
    "ReadingLine",
    "RecordRef",
    "Status",
    "TrendPoint",
    "build_audit",
    "entered_text",
    "evaluation_from_payload",
    "is_bare_number",
    "results_from_payload",
]

Status = Literal["completed", "failed", "open", "overdue"]
Outcome = Literal["pass", "fail", "not recorded", "recorded"]

# The words every rendering prints beside its symbols: status is never colour alone.
OUTCOME_WORDS: dict[str, str] = {"pass": "PASS", "fail": "FAIL",
                                 "not recorded": "NOT RECORDED", "recorded": "RECORDED"}
STATUS_WORDS: dict[str, str] = {"completed": "COMPLETED", "failed": "FAILED", "open": "OPEN",
                                "overdue": "OVERDUE"}
RESISTANCE_UNITS = frozenset({"Ω", "kΩ", "MΩ"})
STATUSES: tuple[Status, ...] = ("completed", "failed", "open", "overdue")


# --- the report ------------------------------------------------------------------------


@dataclass(frozen=True)
class AuditFilter:
    since: dt.date | None
    until: dt.date | None
    plant: str | None
    as_of: dt.date

    def describe(self) -> str:
        """One line: "packages dated 2026-12-01 to 2026-12-31, all plants; status as of …"."""
        if self.since and self.until:
            span = f"dated {self.since.isoformat()} to {self.until.isoformat()}"
        elif self.since:
            span = f"dated {self.since.isoformat()} or later"
        elif self.until:
            span = f"dated {self.until.isoformat()} or earlier"
        else:
            span = "of any date"
        plant = f"plant {self.plant}" if self.plant else "all plants"
        return f"Packages {span}, {plant}; status as of {self.as_of.isoformat()}"

    def covers(self, day: dt.date) -> bool:
        return ((self.since is None or day >= self.since)
                and (self.until is None or day <= self.until))


@dataclass(frozen=True)
class Integrity:
    """The store's verification as the report prints it."""

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

    @property
    def chain_short(self) -> str:
        return self.chain_sha256[:16]


@dataclass(frozen=True)
class ReadingLine:
    """One reading of a job: as entered, as compared, against its limit."""

    reading_id: str
    what: str
    unit: str
    entered: str | None  # the value exactly as written on the results; None if blank
    entered_temperature: str | None
    measured_si: float | None
    temperature_c: float | None
    compared_si: float | None  # the value held against the limit (corrected where asked)
    corrected_to_c: float | None  # the reference temperature, where a correction applied
    low: float | None
    high: float | None
    basis: str
    outcome: Outcome
    note: str

    @property
    def broke(self) -> Literal["minimum", "maximum"] | None:
        """Which bound a failing reading broke."""
        if self.outcome != "fail" or self.compared_si is None:
            return None
        if self.low is not None and self.compared_si < self.low:
            return "minimum"
        if self.high is not None and self.compared_si > self.high:
            return "maximum"
        return None

    @property
    def broken_limit_si(self) -> float | None:
        return {"minimum": self.low, "maximum": self.high, None: None}[self.broke]


@dataclass(frozen=True)
class DeviationLine:
    kind: str  # reading, step, lock, dead, tester, signature
    ref: str
    text: str
    fails: bool  # True: the job failed on it; False: the job is incomplete


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
    deviations: tuple[DeviationLine, ...]
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
    plant: str
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
    lowest_of_test: bool  # the weakest reading of its record: the one the trend follows


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


# --- reading a record's payload ---------------------------------------------------------


def _build(cls: type[Any], data: Mapping[str, Any], what: str) -> Any:
    """A dataclass from a mapping, by field name; ValueError naming what is missing."""
    if not isinstance(data, Mapping):
        raise ValueError(f"{what} is not a mapping (got {type(data).__name__})")
    values: dict[str, Any] = {}
    for f in fields(cls):
        if f.name in data:
            values[f.name] = data[f.name]
        elif f.default is dataclasses.MISSING and f.default_factory is dataclasses.MISSING:
            raise ValueError(f"{what} has no {f.name!r}")
    return cls(**values)


def evaluation_from_payload(payload: Mapping[str, Any]) -> Evaluation:
    """The ``Evaluation`` a record keeps (``record_payload``'s "evaluation"), rebuilt.

    ValueError when the payload does not hold one.
    """
    data = payload.get("evaluation") if isinstance(payload, Mapping) else None
    if not isinstance(data, Mapping):
        raise ValueError("the record holds no evaluation")
    readings = tuple(_build(ReadingVerdict, r, "a reading verdict")
                     for r in data.get("readings", ()))
    deviations = tuple(_build(Deviation, d, "a deviation") for d in data.get("deviations", ()))
    fixed = {**data, "readings": readings, "deviations": deviations,
             "date": dt.date.fromisoformat(str(data.get("date"))),
             "locks_not_removed": tuple(data.get("locks_not_removed", ())),
             "followups": tuple(data.get("followups", ()))}
    built: Evaluation = _build(Evaluation, fixed, "the evaluation")
    return built


def results_from_payload(payload: Mapping[str, Any]) -> Results:
    """The ``Results`` a record keeps, as entered; ValueError when they cannot be read."""
    data = payload.get("results") if isinstance(payload, Mapping) else None
    if not isinstance(data, Mapping):
        raise ValueError("the record holds no results")
    try:
        return Results.model_validate(data)
    except ValidationError as exc:
        raise ValueError(f"the record's results do not read back: "
                         f"{exc.errors()[0]['msg']}") from None


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


@dataclass(frozen=True)
class _Read:
    """One record with its payload read (either may be None when it cannot be read)."""

    record: Record
    evaluation: Evaluation | None
    results: Results | None
    problem: str | None


def _read(record: Record) -> _Read:
    try:
        payload = record.results
    except ValueError:
        return _Read(record, None, None, "the record's payload is not JSON")
    problems = []
    evaluation = results = None
    try:
        evaluation = evaluation_from_payload(payload)
    except (TypeError, ValueError) as exc:
        problems.append(str(exc))
    try:
        results = results_from_payload(payload)
    except ValueError as exc:
        problems.append(str(exc))
    return _Read(record, evaluation, results, "; ".join(problems) or None)


# --- building the report ----------------------------------------------------------------


def build_audit(records: Iterable[Record], packages: Mapping[str, WorkPackage],
                verification: Verification, *, since: dt.date | None,
                until: dt.date | None, plant: str | None, as_of: dt.date,
                standards: Mapping[str, CodeSet],
                default_code_set: str = "ieee43-2013") -> AuditReport:
    """The audit of ``records`` against the issued ``packages`` (id → package).

    ``default_code_set`` is the plant's code set for the trend judgement where a reading's
    limit names none (a plant's ``code_set.rotating_machines``); see the module docstring
    for every rule the report follows.
    """
    flt = AuditFilter(since, until, plant, as_of)
    stored = sorted(records, key=lambda r: r.sequence)
    superseded_by: dict[int, int] = {}
    for record in stored:
        if record.supersedes is not None:
            superseded_by.setdefault(record.supersedes, record.sequence)
    hashes = {pid: package_sha256(package) for pid, package in packages.items()}

    def ref(record: Record) -> RecordRef:
        known = hashes.get(record.package_id)
        return RecordRef(record.sequence, record.package_id, record.recorded_by,
                         record.recorded_at, record.verdict, record.supersedes,
                         superseded_by.get(record.sequence), record.chain_sha256,
                         None if known is None else known == record.package_sha256)

    by_package: dict[str, list[Record]] = defaultdict(list)
    for record in stored:
        by_package[record.package_id].append(record)
    latest: dict[str, _Read] = {}
    for pid, group in by_package.items():
        effective = [r for r in group if r.sequence not in superseded_by]
        if effective:
            latest[pid] = _read(effective[-1])

    audits = []
    for pid in sorted(packages, key=lambda i: (packages[i].date, i)):
        package = packages[pid]
        if not flt.covers(package.date) or (plant is not None and package.plant != plant):
            continue
        audits.append(_package_audit(package, [ref(r) for r in by_package.get(pid, [])],
                                     latest.get(pid), as_of))

    def plant_of(pid: str, read: _Read) -> str | None:
        if pid in packages:
            return packages[pid].plant
        return read.evaluation.plant if read.evaluation is not None else None

    isolations = []
    unmatched = []
    for pid in sorted(latest):
        read = latest[pid]
        shown_plant = plant_of(pid, read)
        if plant is not None and shown_plant is not None and shown_plant != plant:
            continue
        isolations += _open_isolations(pid, shown_plant, packages.get(pid), read, ref)
        if pid not in packages:
            dated = read.evaluation.date if read.evaluation is not None else None
            if dated is None or flt.covers(dated):
                unmatched.append(ref(read.record))

    listed = {a.package_id for a in audits}
    trends = _trends(packages, latest, listed, flt, standards, default_code_set)
    return AuditReport(flt, _integrity(verification), tuple(audits), tuple(isolations),
                       trends, tuple(unmatched))


def _integrity(verification: Verification) -> Integrity:
    head = verification.head
    return Integrity(ok=verification.ok, guards_intact=verification.guards_intact,
                     message=verification.message, count=verification.count,
                     head_sequence=head.sequence if head is not None else None,
                     head_sha256=head.chain_sha256 if head is not None else None)


def _package_audit(package: WorkPackage, refs: list[RecordRef], read: _Read | None,
                   as_of: dt.date) -> PackageAudit:
    status: Status
    verdict = read.record.verdict if read is not None else None
    if verdict == "passed":
        status = "completed"
    elif verdict == "failed":
        status = "failed"
    else:
        status = "open" if package.date >= as_of else "overdue"
    if read is None:
        return PackageAudit(package.id, package.plant, package.date, package.title,
                            package.item, status, None, tuple(refs), (), (), None, None, None)
    latest = next(r for r in refs if r.sequence == read.record.sequence)
    results, evaluation = read.results, read.evaluation
    lines: tuple[ReadingLine, ...] = ()
    deviations: tuple[DeviationLine, ...] = ()
    if evaluation is not None:
        asked = {r.id: r for r in package.readings()}
        lines = tuple(_reading_line(v, results, asked.get(v.id)) for v in evaluation.readings)
        deviations = tuple(DeviationLine(d.kind, d.ref, d.text, d.fails)
                           for d in evaluation.deviations)
    return PackageAudit(
        package.id, package.plant, package.date, package.title, package.item, status, latest,
        tuple(refs), lines, deviations,
        completed_by=evaluation.completed_by if evaluation else None,
        supervisor=evaluation.supervisor if evaluation else None,
        completed_on=results.completed_on if results else None, problem=read.problem)


def _reading_line(verdict: ReadingVerdict, results: Results | None,
                  reading: Reading | None) -> ReadingLine:
    measured = results.readings.get(verdict.id) if results is not None else None
    # the evaluation corrects only where the limit names a code set (see evaluate._judge)
    limit = reading.limit if reading is not None else None
    corrected = (verdict.corrected_to_c if limit is not None and limit.code_set
                 and verdict.compared_si is not None else None)
    return ReadingLine(
        reading_id=verdict.id, what=verdict.what, unit=verdict.unit,
        entered=entered_text(measured.value) if measured is not None else None,
        entered_temperature=entered_text(measured.temperature) if measured is not None
        else None,
        measured_si=verdict.measured_si, temperature_c=verdict.temperature_c,
        compared_si=verdict.compared_si, corrected_to_c=corrected, low=verdict.low,
        high=verdict.high, basis=verdict.basis, outcome=verdict.outcome, note=verdict.note)


def _open_isolations(pid: str, plant: str | None, package: WorkPackage | None, read: _Read,
                     ref: Callable[[Record], RecordRef]) -> list[OpenIsolation]:
    if read.evaluation is None:
        return []
    order = ({p.device: p.order for p in package.isolation} if package is not None else {})
    out = []
    for device in sorted(read.evaluation.locks_not_removed,
                         key=lambda d: (order.get(d, len(order) + 1), d)):
        lock = _lock_record(read.results, device)
        out.append(OpenIsolation(
            pid, plant or "plant not known", read.evaluation.item, device,
            lock.lock if lock else None, lock.tag if lock else None,
            lock.applied_by if lock else None, lock.applied_at if lock else None,
            ref(read.record)))
    return out


def _lock_record(results: Results | None, ref: str) -> LockRecord | None:
    """The lock record of ``ref``: a device, or "F2:DEVICE" in a search's final test F2."""
    if results is None:
        return None
    if ":" in ref:
        final_id, device = ref.split(":", 1)
        final = results.final_tests.get(final_id)
        return final.isolation.get(device) if final is not None else None
    return results.isolation.get(ref)


# --- insulation trends ------------------------------------------------------------------


@dataclass(frozen=True)
class _Taken:
    point: TrendPoint
    reading: Reading


def _trends(packages: Mapping[str, WorkPackage], latest: Mapping[str, _Read],
            listed: set[str], flt: AuditFilter, standards: Mapping[str, CodeSet],
            default_code_set: str) -> tuple[IrTrend, ...]:
    taken: dict[str, list[_Taken]] = defaultdict(list)
    left_out: dict[str, list[str]] = defaultdict(list)
    shown: set[str] = set()
    scope = []
    for pid in sorted(latest):
        package, read = packages.get(pid), latest[pid]
        if package is None or read.evaluation is None:
            continue
        if flt.plant is not None and package.plant != flt.plant:
            continue
        if flt.until is not None and package.date > flt.until:
            continue
        scope.append(read.record)
        verdicts = {v.id: v for v in read.evaluation.readings}
        taken_on = (read.results.completed_on if read.results is not None
                    and read.results.completed_on is not None
                    else read.record.recorded_at.date())
        points = []
        for reading in package.readings():
            if reading.element is None or reading.unit not in RESISTANCE_UNITS:
                continue
            if pid in listed:
                shown.add(reading.element)
            verdict = verdicts.get(reading.id)
            if verdict is None or verdict.compared_si is None or verdict.measured_si is None:
                why = (verdict.note or verdict.outcome) if verdict is not None else "no value"
                left_out[reading.element].append(
                    f"{pid} {reading.id} ({taken_on.isoformat()}): {why}")
                continue
            limit = reading.limit
            corrected = bool(limit and limit.code_set and limit.temperature_corrected_to_c
                             is not None)
            points.append(_Taken(TrendPoint(
                taken_on, verdict.compared_si, verdict.measured_si, verdict.temperature_c,
                corrected, verdict.outcome, pid, reading.id, reading.what,
                read.record.sequence, lowest_of_test=False), reading))
        by_element: dict[str, list[_Taken]] = defaultdict(list)
        for t in points:
            by_element[t.reading.element or ""].append(t)
        for element, group in by_element.items():
            weakest = min(group, key=lambda t: t.point.compared_si)
            taken[element] += [t if t is not weakest else
                               _Taken(dataclasses.replace(t.point, lowest_of_test=True),
                                      t.reading) for t in group]
    # the judgement the planner acts on (workpack.history), from the same records
    history = history_from_records(scope, default_code_set)
    return tuple(_trend(element, taken.get(element, []), tuple(left_out.get(element, [])),
                        history, standards)
                 for element in sorted(shown) if taken.get(element) or left_out.get(element))


def _trend(element: str, taken: Sequence[_Taken], left_out: tuple[str, ...],
           history: History, standards: Mapping[str, CodeSet]) -> IrTrend:
    ordered = sorted(taken, key=lambda t: (t.point.taken_on, t.point.record_sequence,
                                           t.point.reading_id))
    points = tuple(t.point for t in ordered)
    notes = list(left_out)
    series = history.insulation.get(element)
    code_set = series.code_set if series is not None else None
    if not ordered:
        return IrTrend(element, "MΩ", None, code_set, None, "", (), None,
                       ("no reading with a value to plot", *notes))
    last = ordered[-1].reading
    limit = last.limit
    minimum = limit.low if limit is not None else None
    basis = limit.basis if limit is not None else ""
    line = [t.point for t in ordered if t.point.lowest_of_test]
    all_corrected = all(t.point.corrected for t in ordered)
    references = {t.reading.limit.temperature_corrected_to_c
                  for t in ordered if t.reading.limit is not None}
    corrected_to = references.pop() if all_corrected and len(references) == 1 else None
    if not all_corrected and any(t.point.corrected for t in ordered):
        notes.append("some values are corrected to the reference temperature and some are "
                     "not: compare with care")
    if len({t.reading.limit.low for t in ordered if t.reading.limit is not None}) > 1:
        notes.append("the packages give different minimums; the line shows the latest")
    judgement = None
    if len(line) < 2:
        notes.append("one test: no trend yet")
    elif series is None or len(series.readings) < 2:
        notes.append("not judged: the records hold no dated series with a minimum for it")
    elif series.code_set not in standards:
        notes.append(f"not judged: code set {series.code_set!r} is not loaded")
    else:
        try:
            judgement = history.trend(element, standards)
        except ValueError as problem:
            notes.append(f"not judged: {problem}")
    if judgement is not None and (
            len(judgement.corrected_ohm) != len(line)
            or not all(math.isclose(j, p.compared_si, rel_tol=1e-9)
                       for j, p in zip(judgement.corrected_ohm, line, strict=False))):
        shown = ", ".join(format_quantity(v, last.unit) for v in judgement.corrected_ohm)
        notes.append(f"judged on {shown} ({series.code_set if series else ''}, the lowest "
                     "reading of each day, corrected with those tables), not on the values "
                     "plotted, which are as the evaluation compared them")
    return IrTrend(element, last.unit, corrected_to, code_set, minimum, basis, points,
                   judgement, tuple(notes))
