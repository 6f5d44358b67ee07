"""The week as the store's job events tell it: each job's state, what tomorrow's plan
carries, and the morning's status. Pure: events arrive as data (``store.JobEvent``).

A job's state is read from its events, never stored: the last event other than
``carried_over`` (which only notes that the plan of a day took the job, or the findings
it left, along). ``completed`` and ``cancelled`` end a job; its id is never given to
another. A job recorded while its locks stay on is ``suspended``: it stays open, comes
first in the next plan with the locks it holds, and every day's record of it is a daily
entry of the same job (a dry-out over three days is one job with three entries).

What the next plan takes from the events (``carry_forward``):

- every open job keeps its id (by job key), and a job begun (started, suspended,
  resumed) is ranked first; one planned before and not done returns above new routine
  work;
- an open job planned on an earlier day from findings of that day brings those
  findings along, so the same rule makes the same job again;
- a job completed as failed brings its findings along again, and any job's follow-up
  findings (low insulation readings) become findings, once: the plan of the next day
  marks them carried over;
- a routine test recorded as passed moves its next due date (``routines_done``); so
  does another job of the item completed as passed since the routine job was planned
  (a dry-out's acceptance test), when every reading the routine's work judges was
  passed there by a test at least as demanding (``plan.carry.shortfall``): the routine
  job is then cancelled with the day it counts from, and the plan says so, or why not;
- the locks still on are named, with whose, since when and for which job.
"""

from __future__ import annotations

import datetime as dt
import json
from collections.abc import Iterable, Mapping, Sequence, Set
from dataclasses import dataclass, field
from typing import Any, Protocol

from pydantic import TypeAdapter

from workpack.lockregister import LockKind, locks_on, results_locks, shown
from workpack.model.evaluation import Evaluation
from workpack.model.findings import Finding, Findings
from workpack.model.package import WorkPackage
from workpack.model.plant import Plant
from workpack.model.results import Results
from workpack.plan.carry import (
    Carried,
    HeldLock,
    IssuedIds,
    finding_identity,
    judged_work_readings,
    reading_test,
    routine_of_key,
    shortfall,
)
from workpack.plan.day import DayPlan
from workpack.plan.jobs import last_done
from workpack.store._events import NewEvent

_FINDING: TypeAdapter[Finding] = TypeAdapter(Finding)

FINISHED = frozenset({"completed", "cancelled"})
BEGUN = frozenset({"started", "suspended", "resumed"})
# Which events may follow a job's state (None: no event yet). carried_over and a
# correcting "completed" are checked apart.
_MAY_FOLLOW: dict[str, frozenset[str | None]] = {
    "planned": frozenset({None, "planned", "issued", "started", "suspended", "resumed"}),
    "issued": frozenset({"planned", "issued"}),
    "started": frozenset({"planned", "issued"}),
    "suspended": frozenset({"planned", "issued", "started", "suspended", "resumed"}),
    "resumed": frozenset({"suspended"}),
    "completed": frozenset({"planned", "issued", "started", "suspended", "resumed"}),
    "cancelled": frozenset({"planned", "issued", "started", "suspended", "resumed"}),
}


class Event(Protocol):
    """A job event as the store gives it back (``store.JobEvent``)."""

    @property
    def sequence(self) -> int: ...
    @property
    def package_id(self) -> str: ...
    @property
    def job_key(self) -> str: ...
    @property
    def kind(self) -> str: ...
    @property
    def day(self) -> dt.date: ...
    @property
    def at(self) -> dt.datetime: ...
    @property
    def by(self) -> str: ...
    @property
    def detail_json(self) -> str: ...
    @property
    def detail(self) -> Mapping[str, Any]: ...


# As canonical JSON (RFC 8785: no spaces, one spelling) writes these, so a detail can be
# asked without parsing it.
_NO_ANSWERS, _NO_FOLLOWUPS, _FAILED = '"answers":[]', '"followups":[]', '"verdict":"failed"'
# A detail without this text names no answers at all (most plans' events: not parsed).
_ANSWERS_KEY = '"answers"'
_COUNTED_KEY = '"counted_on"'


@dataclass(frozen=True)
class JobState:
    """One job as its events leave it. What its last plan and its last record said is
    read from those events when asked for (``item``, ``findings``, ``verdict``…)."""

    package_id: str
    job_key: str
    state: str  # the last event's kind other than carried_over
    since: dt.datetime  # when that event happened
    by: str  # who wrote it
    first_day: dt.date  # the day it was first planned for
    last_planned: dt.date  # the last day a plan took it
    carried_to: tuple[dt.date, ...] = ()  # days whose plan took it (or what it left)
    entries: tuple[dt.date, ...] = ()  # days it has a record for (daily entries)
    finished_on: dt.date | None = None  # the day a completion or cancellation was for
    answers: tuple[str, ...] = ()  # jobs whose carried findings it was made from
    planned_event: Event | None = None  # its last "planned" event
    record_event: Event | None = None  # its last "suspended" or "completed" event
    cancel_event: Event | None = None  # its "cancelled" event

    @property
    def open(self) -> bool:
        return self.state not in FINISHED

    def _planned(self, name: str, default: Any = None) -> Any:
        return self.planned_event.detail.get(name, default) if self.planned_event else default

    @property
    def item(self) -> str:
        return str(self._planned("item", ""))

    @property
    def title(self) -> str:
        return str(self._planned("title", ""))

    @property
    def routine(self) -> tuple[str, str] | None:
        """(element, routine test) of a routine job, from its job key."""
        test, element = routine_of_key(self.job_key)
        return (element, test) if test and element else None

    @property
    def findings(self) -> tuple[Mapping[str, Any], ...]:
        """What its last plan was made from."""
        return tuple(self._planned("findings", ()))

    @property
    def verdict(self) -> str | None:
        return self.record_event.detail.get("verdict") if self.record_event else None

    @property
    def counted_on(self) -> dt.date | None:
        """A routine job cancelled because another job's passed tests stood for it: the
        day those passed (read without parsing other cancellations)."""
        event = self.cancel_event
        if event is None or _COUNTED_KEY not in event.detail_json:
            return None
        return dt.date.fromisoformat(event.detail[_COUNTED_KEY.strip('"')])

    @property
    def followups(self) -> tuple[Mapping[str, Any], ...]:
        return tuple(self.record_event.detail.get("followups", ())) if self.record_event \
            else ()

    @property
    def leaves_findings(self) -> bool:
        """Whether its last record left follow-ups or failed (read without parsing: a
        year of passed jobs is looked at every morning)."""
        found = self.record_event.detail_json if self.record_event else ""
        return _NO_FOLLOWUPS not in found or _FAILED in found

    @property
    def locks(self) -> tuple[HeldLock, ...]:
        """The locks on now: as its last record left them, none once it is finished."""
        if not self.open or self.record_event is None:
            return ()
        return tuple(HeldLock(**lock) for lock in self.record_event.detail.get("locks", ()))


def fold(events: Iterable[Event]) -> dict[str, JobState]:
    """Each job's state after its events (in sequence order), by package id."""
    jobs: dict[str, dict[str, Any]] = {}
    for event in sorted(events, key=lambda e: e.sequence):
        job = jobs.get(event.package_id)
        if job is None:
            job = jobs[event.package_id] = {
                "package_id": event.package_id, "job_key": event.job_key,
                "first_day": event.day, "last_planned": event.day, "carried_to": [],
                "entries": [], "answers": set()}
        if event.kind == "carried_over":
            job["carried_to"].append(event.day)
            continue
        job.update(state=event.kind, since=event.at, by=event.by)
        if event.kind == "planned":
            job["last_planned"] = max(job["last_planned"], event.day)
            job["planned_event"] = event
            text = event.detail_json
            if _ANSWERS_KEY in text and _NO_ANSWERS not in text:
                job["answers"].update(event.detail.get("answers", ()))
        elif event.kind in ("suspended", "completed"):
            job["record_event"] = event
            job["entries"].append(event.day)
        elif event.kind == "cancelled":
            job["cancel_event"] = event
        if event.kind in FINISHED:
            job["finished_on"] = event.day
    return {package_id: JobState(**{
        **job, "carried_to": tuple(job["carried_to"]), "entries": tuple(job["entries"]),
        # every job it was ever made from (a re-plan lists only the day's)
        "answers": tuple(sorted(job["answers"] - {package_id}))})
        for package_id, job in sorted(jobs.items())}


def refusal(job: JobState | None, kind: str, *, correction: bool = False) -> str | None:
    """Why ``kind`` may not follow the job's state, in words; None if it may."""
    if kind == "carried_over":
        return None
    state = job.state if job is not None else None
    if correction and kind == "completed" and state == "completed":
        return None
    if state in _MAY_FOLLOW.get(kind, frozenset()):
        return None
    if job is None:
        return f"no job has that id in the store (it was never planned with --db); {kind} " \
               "needs a planned job"
    return f"{job.package_id} is {job.state.replace('_', ' ')} (since {job.since:%Y-%m-%d %H:%M} " \
           f"UTC, by {job.by}); it cannot be {kind.replace('_', ' ')} now"


# --- what a record says happened --------------------------------------------------------


def held_locks(package_id: str, results: Results,
               evaluation: Evaluation) -> tuple[HeldLock, ...]:
    """The locks a record leaves on, as the lock register reads them
    (``workpack.lockregister``: applied and not recorded removed, held by whoever took
    them over at a shift change), with the reason the results give for leaving them."""
    uses, _, _ = results_locks(results, evaluation.plant, package_id, strict=False)
    return tuple(HeldLock(
        device=on.place if on.kind is LockKind.point else f"lock box {on.place}",
        package_id=package_id, lock=on.lock, applied_by=on.holder,
        applied_at=shown(on.held_since) if on.held_since else None,
        why=results.locks_left_on or "") for on in locks_on(uses))


def record_event(package_id: str, results: Results, evaluation: Evaluation,
                 package: WorkPackage | None = None) -> tuple[str, dict[str, Any]]:
    """The event a record makes and its detail: ``suspended`` while locks stay on or the
    work is incomplete (the job goes on), else ``completed`` with its verdict. Given the
    package, a completed job names the judged tests of its work that passed
    (``passed_tests``), which may stand for a routine test of the item
    (``workpack.plan.carry.shortfall``)."""
    locks = held_locks(package_id, results, evaluation)
    left_on = locks or evaluation.locks_left_on or evaluation.locks_not_removed
    kind = "suspended" if left_on or evaluation.verdict == "incomplete" else "completed"
    detail: dict[str, Any] = {
        "verdict": evaluation.verdict,
        "locks": [lock.__dict__ for lock in locks],
        "followups": [f.model_dump(mode="json") for f in evaluation.followups],
    }
    if package is not None and kind == "completed":
        passed = {r.id for r in evaluation.readings if r.judged and r.outcome == "pass"}
        detail["passed_tests"] = [reading_test(reading) for reading in
                                  judged_work_readings(package) if reading.id in passed]
    return kind, detail


# --- the next plan ----------------------------------------------------------------------


@dataclass(frozen=True)
class CarriedFinding:
    """A finding the next plan takes from the store: from which job, as a findings file
    would hold it."""

    source: str  # the package id it comes from
    finding: Mapping[str, Any]


@dataclass(frozen=True)
class CarryOver:
    carried: Carried
    findings: tuple[CarriedFinding, ...] = ()
    sources: tuple[str, ...] = ()  # jobs whose findings or follow-ups the plan takes
    open_jobs: Mapping[str, JobState] = field(default_factory=dict)  # by job key
    keys: Mapping[str, str] = field(default_factory=dict)  # every job's key by package id
    counted: Mapping[str, tuple[dt.date, str]] = field(default_factory=dict)
    # routine job key → the day another job's passed tests stood for it, and a line saying so
    notes: tuple[str, ...] = ()  # routine jobs another job did or did not stand for


def carry_forward(jobs: Mapping[str, JobState], day: dt.date) -> CarryOver:
    """What the plan of ``day`` takes from the jobs (see the module docstring)."""
    open_jobs = {job.job_key: job for job in jobs.values() if job.open}
    findings: list[CarriedFinding] = []
    sources: list[str] = []
    for job in jobs.values():
        if job.open:
            if job.last_planned < day and (job.findings or job.followups):
                findings += [CarriedFinding(job.package_id, f)
                             for f in (*job.findings, *job.followups)]
                sources.append(job.package_id)
            continue
        if job.finished_on is None or job.finished_on >= day or job.state != "completed" \
                or not job.leaves_findings:
            continue
        if any(to < day for to in job.carried_to):
            continue  # an earlier day's plan took them already
        taken = [*job.followups, *(job.findings if job.verdict == "failed" else ())]
        if taken:
            findings += [CarriedFinding(job.package_id, f) for f in taken]
            sources.append(job.package_id)
    done: dict[tuple[str, str], dt.date] = {}
    answered: set[tuple[str, str]] = set()

    def passed(routine: tuple[str, str], on: dt.date) -> None:
        done[routine] = max(done.get(routine, on), on)

    for job in jobs.values():
        if job.state == "completed" and job.routine and job.finished_on and \
                job.verdict == "passed":
            passed(job.routine, job.finished_on)
        elif job.state == "cancelled" and job.routine and (on := job.counted_on):
            passed(job.routine, on)
        # A routine test that failed is answered by the job made from what it found
        # (a dry-out, a repair): not planned again as a plain routine test meanwhile,
        # and done on the day that job passes.
        for source in (jobs[s] for s in job.answers if s in jobs):
            if (routine := source.routine) is None:
                continue
            if job.open:
                answered.add(routine)
            elif job.state == "completed" and job.verdict == "passed" and job.finished_on:
                passed(routine, job.finished_on)
    answered |= {r for s in sources if not jobs[s].open and (r := jobs[s].routine)}
    counted, notes = _standing_for_routines(jobs, open_jobs, day)
    for key, (on, _) in counted.items():
        if (routine := open_jobs[key].routine) is not None:
            passed(routine, on)
    # An item under a job begun and not finished (locked out, being worked on) gets no
    # routine test of its own: that job's tests answer for it.
    begun_items = {job.item for job in open_jobs.values() if job.state in BEGUN}
    carried = Carried(
        issued=IssuedIds(open={key: job.package_id for key, job in open_jobs.items()},
                         taken=frozenset(jobs)),
        held=frozenset(key for key, job in open_jobs.items() if job.state in BEGUN),
        returning=frozenset(key for key, job in open_jobs.items() if job.last_planned < day),
        locks=tuple(lock for job in open_jobs.values() for lock in job.locks),
        routines_done=done, answered=frozenset(answered), busy_items=frozenset(begun_items))
    return CarryOver(carried, tuple(findings), tuple(sources), open_jobs,
                     {job.package_id: job.job_key for job in jobs.values()},
                     counted, notes)


def _standing_for_routines(jobs: Mapping[str, JobState], open_jobs: Mapping[str, JobState],
                           day: dt.date) -> tuple[dict[str, tuple[dt.date, str]],
                                                  tuple[str, ...]]:
    """Open routine jobs that another job of their item, completed since they were first
    planned, stands for (by job key: the day it passed and a line saying so), and a line
    for each it does not stand for, saying why (``workpack.plan.carry.shortfall``)."""
    waiting = {key: job for key, job in open_jobs.items() if job.routine
               and job.planned_event is not None and "requires" in job.planned_event.detail}
    if not waiting:
        return {}, ()
    since = min(job.first_day for job in waiting.values())
    elements = {routine[0] for job in waiting.values() if (routine := job.routine)}
    # The item as canonical JSON writes it: a year of jobs is looked at without parsing.
    items = [json.dumps({"item": element}, ensure_ascii=False, separators=(",", ":"))[1:-1]
             for element in sorted(elements)]
    by_item: dict[str, list[JobState]] = {}
    for job in jobs.values():  # by package id
        if job.state == "completed" and job.routine is None and job.finished_on \
                and since <= job.finished_on < day and job.planned_event is not None \
                and any(item in job.planned_event.detail_json for item in items):
            by_item.setdefault(job.item, []).append(job)
    counted: dict[str, tuple[dt.date, str]] = {}
    notes: list[str] = []
    for key, routine_job in sorted(waiting.items()):
        element, test = routine_job.routine or ("", "")
        why_not = []
        for job in by_item.get(element, ()):
            if job.finished_on is None or job.finished_on < routine_job.first_day:
                continue
            if job.verdict != "passed":
                why_not.append(f"{job.package_id} was recorded as {job.verdict}")
                continue
            passed_tests = job.record_event.detail.get("passed_tests") \
                if job.record_event else None
            why = ("its record names no passed tests" if passed_tests is None else
                   shortfall(routine_job.planned_event.detail["requires"]
                             if routine_job.planned_event else (), passed_tests))
            if why is None:
                counted[key] = (job.finished_on, (
                    f"{element} {test} ({routine_job.package_id}) counted as done on "
                    f"{job.finished_on} by {job.package_id}: every reading it asks for was "
                    "passed there by a test at least as demanding"))
                break
            why_not.append(f"{job.package_id} does not count as it: {why}")
        if key not in counted and why_not:
            notes.append(f"{element} {test} ({routine_job.package_id}) is still planned: "
                         + "; ".join(why_not))
    return counted, (*(note for _, note in sorted(counted.values())), *notes)


# --- the morning's status ---------------------------------------------------------------


@dataclass(frozen=True)
class RoutineDue:
    element: str
    test: str
    due_on: dt.date
    last_done: dt.date | None


@dataclass(frozen=True)
class JobSummary:
    """An open job as the status shows it."""

    package_id: str
    state: str
    since: dt.datetime
    by: str
    item: str
    title: str
    first_day: dt.date
    last_planned: dt.date
    entries: tuple[dt.date, ...]  # days recorded (a job over days: one a day)
    locks: tuple[HeldLock, ...]

    @classmethod
    def of(cls, job: JobState) -> JobSummary:
        return cls(job.package_id, job.state, job.since, job.by, job.item, job.title,
                   job.first_day, job.last_planned, job.entries, job.locks)


@dataclass(frozen=True)
class Status:
    """What a supervisor reads first thing, and hands over at a change of supervisor."""

    plant: str
    day: dt.date
    open: tuple[JobSummary, ...]  # planned, issued, started or resumed
    suspended: tuple[JobSummary, ...]
    carried_over: tuple[JobSummary, ...]  # open since an earlier day
    locks_on: tuple[HeldLock, ...]
    overdue: tuple[RoutineDue, ...]  # due before ``day`` and not recorded as passed
    due_soon: tuple[RoutineDue, ...]  # due from ``day`` to ``day`` + the days asked for


def routine_dates(plant: Plant, done: Mapping[tuple[str, str], dt.date],
                  day: dt.date) -> list[RoutineDue]:
    """Every routine test's next due date: the later of the plant file's ``last_done``
    and the last recorded pass, plus its interval (never done: due on ``day``)."""
    due = []
    for element in plant.elements():
        for routine in element.routine:
            last = last_done(routine, done.get((element.id, routine.test.value)))
            due_on = last + dt.timedelta(days=routine.interval_days) if last else day
            due.append(RoutineDue(element.id, routine.test.value, due_on, last))
    return sorted(due, key=lambda d: (d.due_on, d.element, d.test))


def status(plant: Plant, jobs: Mapping[str, JobState], day: dt.date,
           days_ahead: int) -> Status:
    carry = carry_forward(jobs, day)
    open_jobs = [JobSummary.of(job) for job in
                 sorted(carry.open_jobs.values(), key=lambda j: j.package_id)]
    dates = routine_dates(plant, carry.carried.routines_done, day)
    horizon = day + dt.timedelta(days=days_ahead)
    return Status(
        plant=plant.plant.name, day=day,
        open=tuple(j for j in open_jobs if j.state != "suspended"),
        suspended=tuple(j for j in open_jobs if j.state == "suspended"),
        carried_over=tuple(j for j in open_jobs if j.first_day < day),
        locks_on=carry.carried.locks,
        overdue=tuple(d for d in dates if d.due_on < day),
        due_soon=tuple(d for d in dates if day <= d.due_on <= horizon))


def status_text(report: Status, days_ahead: int) -> str:
    def job_line(job: JobSummary) -> str:
        since = f"since {job.first_day}" if job.first_day < report.day else "today"
        return (f"  {job.package_id}  {job.state.replace('_', ' '):9}  {job.item}: "
                f"{job.title} ({since}, last by {job.by})")

    lines = [f"{report.plant}: status on {report.day}", ""]
    sections: Sequence[tuple[str, Sequence[str]]] = (
        ("Locks on now", [f"  {lock.describe()}" for lock in report.locks_on]),
        ("Suspended", [job_line(j) for j in report.suspended]),
        ("Open", [job_line(j) for j in report.open]),
        ("Carried over from earlier days", [f"  {j.package_id}  {j.item}: first planned "
                                            f"{j.first_day}" for j in report.carried_over]),
        ("Routine tests overdue", [f"  {d.element} {d.test}: due {d.due_on}"
                                   for d in report.overdue]),
        (f"Routine tests due in the next {days_ahead} days",
         [f"  {d.element} {d.test}: due {d.due_on}" for d in report.due_soon]),
    )
    for title, entries in sections:
        lines.append(f"{title}: {len(entries) or 'none'}")
        lines.extend(entries)
    return "\n".join(lines) + "\n"


# --- the plan's own events --------------------------------------------------------------


def with_carried(findings: Findings, carried: Sequence[CarriedFinding],
                 places: Set[str]) -> tuple[Findings, tuple[str, ...]]:
    """The day's findings and those carried from the store, each once (by kind, place
    and time); a carried finding gets the id ``<package>.<its id>``. Also, in words, any
    carried finding whose place is no longer in the plant (left out)."""
    seen = {finding_identity(f) for f in findings.findings}
    added: list[Finding] = []
    left_out = []
    counts: dict[str, int] = {}
    for each in carried:
        counts[each.source] = counts.get(each.source, 0) + 1
        data = {k: v for k, v in each.finding.items() if k != "id"}
        own = str(each.finding.get("id") or f"U{counts[each.source]}")
        own = own.removeprefix(f"{each.source}.")  # carried before: keep one prefix
        if data.get("where") not in places:
            left_out.append(f"{each.source}: its finding at {data.get('where')!r} is not in "
                            "the plant any more; it was not carried into this plan")
            continue
        finding = _FINDING.validate_python({**data, "id": f"{each.source}.{own}"})
        if finding_identity(finding) in seen:
            continue
        seen.add(finding_identity(finding))
        added.append(finding)
    merged = Findings(date=findings.date, findings=(*findings.findings, *added))
    return merged, tuple(left_out)


def plan_events(plan: DayPlan, carry: CarryOver, findings: Findings, at: dt.datetime,
                by: str) -> list[NewEvent]:
    """The events a plan writes: each package planned (an open job carried over first),
    the jobs whose findings it took marked carried over, and the open jobs planned for
    this day that a re-plan no longer makes cancelled."""
    day = plan.date
    by_id = {str(f.id): f for f in findings.findings}
    taken: dict[str, list[str]] = {}  # source job → the packages made from its findings
    for package in plan.packages:
        for finding in package.origin.findings:
            source = finding.rpartition(".")[0]
            if source in carry.sources:
                taken.setdefault(source, []).append(package.id)
    events: list[NewEvent] = []
    for package in plan.packages:
        key = plan.keys[package.id]
        job = carry.open_jobs.get(key)
        if job is not None and job.last_planned < day:
            events.append(NewEvent(package.id, key, "carried_over", day, at, by,
                                   {"from_day": job.last_planned.isoformat()}))
        test, element = routine_of_key(key)
        events.append(NewEvent(package.id, key, "planned", day, at, by, {
            "item": package.item, "rule": package.origin.rule, "title": package.title,
            "priority": package.priority, "routine": test, "routine_element": element,
            "scheduled": package.id in plan.scheduled,
            **({"requires": [reading_test(r) for r in judged_work_readings(package)]}
               if test else {}),
            "answers": sorted(s for s, ids in taken.items() if package.id in ids),
            "findings": [by_id[f].model_dump(mode="json", exclude_none=True)
                         for f in package.origin.findings if f in by_id]}))
    made = set(plan.keys.values())
    for source in carry.sources:
        job = next((j for j in carry.open_jobs.values() if j.package_id == source), None)
        if job is None:  # a finished job: its findings are now the plan's
            events.append(NewEvent(source, _key_of(carry, source), "carried_over", day, at,
                                   by, {"into": sorted(set(taken.get(source, [])))}))
    for key, job in sorted(carry.open_jobs.items()):
        if key not in made and job.state in ("planned", "issued"):
            if key in carry.counted:
                on, note = carry.counted[key]
                detail = {"reason": note, "counted_on": on.isoformat()}
            else:
                detail = {"reason": f"the plan of {day} no longer calls for it"}
            events.append(NewEvent(job.package_id, key, "cancelled", day, at, by, detail))
    return events


def _key_of(carry: CarryOver, package_id: str) -> str:
    return carry.keys.get(package_id, package_id)


def left_out(carry: CarryOver, plan: DayPlan) -> tuple[str, ...]:
    """Begun jobs (locks on, or work started) the day's plan made no package for: the
    supervisor settles them; the plan never cancels them."""
    made = set(plan.keys.values())
    return tuple(f"{job.package_id} ({job.item}) is {job.state} but today's plan made no "
                 "package for it: settle it (resume, complete or cancel it)"
                 for key, job in sorted(carry.open_jobs.items())
                 if key not in made and job.state in BEGUN)
