"""Building the audit report: what was issued, what came back, what it showed, and
whether the records are still what was written.

``build_audit`` takes records already read from a store, the issued packages already
loaded (their JSON twins) and the store's ``Verification``, and returns an
``AuditReport`` (``audit.report``) of plain frozen data for the renderers. Pure: no file,
database or clock; the caller gives the date the statuses are judged on (``as_of``).

Rules the report follows:

- A package is in the report when its own date lies in ``since``..``until`` (both
  inclusive, either open) and, when ``plant`` is given, it belongs to that plant.
- A record named in a later record's ``supersedes`` is superseded: it is listed, marked as
  such, and nothing else in the report is taken from it. The status, readings and
  deviations come from the package's latest effective record only
  (``records.latest_effective``), so no job is counted twice.
- Status: ``completed`` (latest effective verdict passed), ``failed`` (failed), ``open``
  (no record, or the latest is incomplete, and the package is dated ``as_of`` or later),
  ``overdue`` (the same, dated before ``as_of``).
- Every record is judged again from its results and its package (``workpack.rejudge``):
  a stored verdict that disagrees is an integrity failure at the top of the report, and
  the status, readings and deviations shown are those judged again (the stored evaluation
  only where the package was not given or the record could not be judged).
- Given a crew register, every record's signatures are checked against it
  (``workpack.record_signatures``); a record refused is an integrity failure too.
- Readings are shown as entered (the text or number written on the sheet) beside the SI
  values the evaluation derived from them.
- Isolations not restored are taken from every package's latest effective record (date
  range not applied: a lock left on last month is still on), plant filter applied.
- Insulation trends: see ``audit.trends``.
"""

from __future__ import annotations

import datetime as dt
from collections import defaultdict
from collections.abc import Callable, Iterable, Mapping
from typing import TYPE_CHECKING

from workpack.audit.report import (
    AuditFilter,
    AuditReport,
    Integrity,
    OpenIsolation,
    PackageAudit,
    ReadingLine,
    RecordRef,
    Status,
)
from workpack.audit.trends import insulation_trends
from workpack.electrical.standards import CodeSet
from workpack.model.crew import CrewRegister
from workpack.model.evaluation import Evaluation, ReadingVerdict
from workpack.model.package import WorkPackage
from workpack.model.results import LockRecord, Results
from workpack.record_signatures import SignatureReport, check_records
from workpack.records import (
    ReadBack,
    entered_text,
    latest_effective,
    read_back,
    superseded_by,
)
from workpack.rejudge import Rejudging, rejudge
from workpack.store._chain import package_sha256

if TYPE_CHECKING:  # types only: the audit reads what the shell has read
    from workpack.store import Record, Verification


def build_audit(records: Iterable[Record], packages: Mapping[str, WorkPackage],
                verification: Verification, *, since: dt.date | None,
                until: dt.date | None, plant: str | None, as_of: dt.date,
                standards: Mapping[str, CodeSet],
                default_code_set: str = "ieee43-2013",
                register: CrewRegister | None = None) -> AuditReport:
    """The audit of ``records`` against the issued ``packages`` (id → package); with a
    crew ``register``, every record's signatures are checked against it too.

    ``default_code_set`` is the plant's code set for the trend judgement where a reading's
    limit names none (a plant's ``code_set.rotating_machines``); see the module docstring
    for every rule the report follows.
    """
    flt = AuditFilter(since, until, plant, as_of)
    stored = sorted(records, key=lambda r: r.sequence)
    corrected_by = superseded_by(stored)
    hashes = {pid: package_sha256(package) for pid, package in packages.items()}

    def ref(record: Record) -> RecordRef:
        known = hashes.get(record.package_id)
        return RecordRef(record.sequence, record.package_id, record.recorded_by,
                         record.recorded_at, record.verdict, record.supersedes,
                         corrected_by.get(record.sequence), record.chain_sha256,
                         None if known is None else known == record.package_sha256)

    by_package: dict[str, list[Record]] = defaultdict(list)
    for record in stored:
        by_package[record.package_id].append(record)
    latest = {pid: read_back(record) for pid, record in latest_effective(stored).items()}
    judged = rejudge(stored, packages, standards, hashes)

    audits = []
    for pid in sorted(packages, key=lambda i: (packages[i].date, i)):
        package = packages[pid]
        if not flt.covers(package.date) or (plant is not None and package.plant != plant):
            continue
        read = latest.get(pid)
        again = judged.evaluations.get(read.record.sequence) if read is not None else None
        audits.append(_package_audit(package, [ref(r) for r in by_package.get(pid, [])],
                                     read, again, as_of))

    def plant_of(pid: str, read: ReadBack[Record]) -> str | None:
        if pid in packages:
            return packages[pid].plant
        return read.evaluation.plant if read.evaluation is not None else None

    isolations = []
    unmatched = []
    for pid, read in latest.items():
        shown_plant = plant_of(pid, read)
        if plant is not None and shown_plant is not None and shown_plant != plant:
            continue
        isolations += _open_isolations(pid, shown_plant, packages.get(pid), read, ref)
        if pid not in packages:
            dated = read.evaluation.date if read.evaluation is not None else None
            if dated is None or flt.covers(dated):
                unmatched.append(ref(read.record))

    listed = {a.package_id for a in audits}
    trends = insulation_trends(packages, latest, listed, flt, standards, default_code_set)
    signed = check_records(register, stored) if register is not None else None
    return AuditReport(flt, _integrity(verification, judged, signed), tuple(audits),
                       tuple(isolations), trends, tuple(unmatched))


def _integrity(verification: Verification, judged: Rejudging,
               signed: SignatureReport | None) -> Integrity:
    head = verification.head
    return Integrity(ok=verification.ok, guards_intact=verification.guards_intact,
                     message=verification.message, count=verification.count,
                     head_sequence=head.sequence if head is not None else None,
                     head_sha256=head.chain_sha256 if head is not None else None,
                     verdict_problems=tuple(d.message for d in judged.disagreements),
                     verdicts_said=judged.summary,
                     signature_problems=tuple(r.message for r in signed.failing)
                     if signed is not None else (),
                     signatures_said=signed.summary if signed is not None else "")


def _package_audit(package: WorkPackage, refs: list[RecordRef], read: ReadBack[Record] | None,
                   again: Evaluation | None, as_of: dt.date) -> PackageAudit:
    status: Status
    verdict = (again.verdict if again is not None else
               read.record.verdict if read is not None else None)
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
    results = read.results
    evaluation = again if again is not None else read.evaluation
    lines = tuple(_reading_line(v, results) for v in evaluation.readings) if evaluation else ()
    return PackageAudit(
        package.id, package.plant, package.date, package.title, package.item, status, latest,
        tuple(refs), lines, evaluation.deviations if evaluation else (),
        completed_by=evaluation.completed_by if evaluation else None,
        supervisor=evaluation.supervisor if evaluation else None,
        completed_on=results.completed_on if results else None, problem=read.problem)


def _reading_line(verdict: ReadingVerdict, results: Results | None) -> ReadingLine:
    measured = results.readings.get(verdict.id) if results is not None else None
    return ReadingLine(**verdict.model_dump(),
                       entered=entered_text(measured.value) if measured else None,
                       entered_temperature=entered_text(measured.temperature) if measured
                       else None)


def _open_isolations(pid: str, plant: str | None, package: WorkPackage | None,
                     read: ReadBack[Record],
                     ref: Callable[[Record], RecordRef]) -> list[OpenIsolation]:
    if read.evaluation is None:
        return []
    order = ({p.device: p.order for p in package.isolation} if package is not None else {})
    out = []
    for device in sorted(read.evaluation.locks_not_removed,
                         key=lambda d: (order.get(d, len(order) + 1), d)):
        lock = _lock_record(read.results, device)
        out.append(OpenIsolation(
            pid, plant, read.evaluation.item, device,
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
