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
from workpack.store._chain import format_timestamp, parse_timestamp
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

    @property
    def requires(self) -> Sequence[Mapping[str, Any]] | None:
        """The tests a routine job's work judges, as its last plan named them (None: its
        plan named none, as plans before ``requires`` existed)."""
        if self.planned_event is None or '"requires"' not in self.planned_event.detail_json:
            return None
        detail = self.planned_event.detail
        if "requires" not in detail:
            return None
        return tuple(detail["requires"] or ())

    @property
    def passed_tests(self) -> Sequence[Mapping[str, Any]] | None:
        """The judged tests its last record passed (None: the record names none)."""
        found: Sequence[Mapping[str, Any]] | None = \
            self.record_event.detail.get("passed_tests") if self.record_event else None
        return found

    def names_item(self, elements: Set[str], fragments: Sequence[str]) -> bool:
        """Whether its last plan may be for one of ``elements`` (each also given as
        canonical JSON writes it, ``"item":"…"``): told from the plan's text, so a year
        of jobs is looked at without parsing; ``item`` says for sure."""
        found = self.planned_event.detail_json if self.planned_event else ""
        return any(fragment in found for fragment in fragments)


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


class Job(Protocol):
    """What the status and the routine tests' dates read of a job: a ``JobState`` (folded
    from the events) or a ``KeptJob`` (the summary a store keeps beside them)."""

    @property
    def package_id(self) -> str: ...
    @property
    def job_key(self) -> str: ...
    @property
    def state(self) -> str: ...
    @property
    def since(self) -> dt.datetime: ...
    @property
    def by(self) -> str: ...
    @property
    def first_day(self) -> dt.date: ...
    @property
    def last_planned(self) -> dt.date: ...
    @property
    def entries(self) -> tuple[dt.date, ...]: ...
    @property
    def finished_on(self) -> dt.date | None: ...
    @property
    def answers(self) -> tuple[str, ...]: ...
    @property
    def open(self) -> bool: ...
    @property
    def item(self) -> str: ...
    @property
    def title(self) -> str: ...
    @property
    def routine(self) -> tuple[str, str] | None: ...
    @property
    def verdict(self) -> str | None: ...
    @property
    def counted_on(self) -> dt.date | None: ...
    @property
    def locks(self) -> tuple[HeldLock, ...]: ...
    @property
    def requires(self) -> Sequence[Mapping[str, Any]] | None: ...
    @property
    def passed_tests(self) -> Sequence[Mapping[str, Any]] | None: ...
    def names_item(self, elements: Set[str], fragments: Sequence[str]) -> bool: ...


# --- the job states a store keeps beside the events --------------------------------------

# The version of ``kept_job``'s text and columns: a store keeps each job's summary with
# it and reads the summaries only while every one is of this version and they were
# brought up to the last event; else it folds the events, as before summaries were kept.
JOB_STATE_VERSION = 1


@dataclass(frozen=True)
class KeptJob:
    """A job's state as a store keeps it beside its events (``kept_job``): everything
    the status and the routine tests' dates read of the job, without its events."""

    package_id: str
    job_key: str
    state: str
    since: dt.datetime
    by: str
    first_day: dt.date
    last_planned: dt.date
    entries: tuple[dt.date, ...]
    finished_on: dt.date | None
    answers: tuple[str, ...]
    item: str
    title: str
    verdict: str | None
    counted_on: dt.date | None
    locks: tuple[HeldLock, ...]
    requires: Sequence[Mapping[str, Any]] | None
    passed_tests: Sequence[Mapping[str, Any]] | None

    @property
    def open(self) -> bool:
        return self.state not in FINISHED

    @property
    def routine(self) -> tuple[str, str] | None:
        test, element = routine_of_key(self.job_key)
        return (element, test) if test and element else None

    def names_item(self, elements: Set[str], fragments: Sequence[str]) -> bool:
        return bool(self.item) and self.item in elements


@dataclass(frozen=True)
class KeptColumns:
    """A kept job as a store's row: the columns a store selects on (which jobs are open,
    which routine test a job passed and when, which jobs are made from a routine test's
    findings, done jobs by item and day) and the summary's text."""

    package_id: str
    version: int
    open: bool
    state: str
    item: str
    routine_test: str | None
    routine_element: str | None
    finished_on: str | None  # ISO date
    own_pass_on: str | None  # ISO date: ``own_pass``
    answers_passed: bool  # completed as passed and made from other jobs' findings
    summary_json: str

    def as_tuple(self) -> tuple[Any, ...]:
        return tuple(getattr(self, f) for f in KEPT_COLUMNS)


KEPT_COLUMNS = ("package_id", "version", "open", "state", "item", "routine_test",
                "routine_element", "finished_on", "own_pass_on", "answers_passed",
                "summary_json")


def _day(value: dt.date | None) -> str | None:
    return value.isoformat() if value is not None else None


def kept_job(job: Job) -> KeptColumns:
    """The row a store keeps for ``job`` (a ``JobState`` folded from its events): the
    same text and columns for the same events, whoever writes them."""
    test, element = routine_of_key(job.job_key)
    summary = {
        "package_id": job.package_id, "job_key": job.job_key, "state": job.state,
        "since": format_timestamp(job.since), "by": job.by,
        "first_day": job.first_day.isoformat(), "last_planned": job.last_planned.isoformat(),
        "entries": [day.isoformat() for day in job.entries],
        "finished_on": _day(job.finished_on), "answers": list(job.answers),
        "item": job.item, "title": job.title, "verdict": job.verdict,
        "counted_on": _day(job.counted_on),
        "locks": [dict(lock.__dict__) for lock in job.locks],
        "requires": None if job.requires is None else list(job.requires),
        "passed_tests": job.passed_tests}
    passed = job.state == "completed" and job.verdict == "passed" and job.finished_on
    return KeptColumns(
        package_id=job.package_id, version=JOB_STATE_VERSION, open=job.open,
        state=job.state, item=job.item, routine_test=test, routine_element=element,
        finished_on=_day(job.finished_on), own_pass_on=_day(own_pass(job)),
        answers_passed=bool(passed and job.answers),
        summary_json=json.dumps(summary, ensure_ascii=False, sort_keys=True,
                                separators=(",", ":")))


# The kept text of a job whose events do not read as a job's (details not of the shape
# workpack writes them): the status folds the events then, and says what it always said.
UNREADABLE = '{"readable":false}'


def kept_jobs(events: Iterable[Event]) -> list[KeptColumns]:
    """The rows a store keeps for the jobs of ``events`` (every event of each job); a
    job whose events do not read as a job's is kept as ``UNREADABLE``, open, so the
    status sees it and folds the events instead."""
    rows = []
    for job in fold(events).values():
        try:
            rows.append(kept_job(job))
        except (TypeError, ValueError, KeyError, AttributeError):
            rows.append(KeptColumns(
                package_id=job.package_id, version=JOB_STATE_VERSION, open=True,
                state=job.state, item="", routine_test=None, routine_element=None,
                finished_on=None, own_pass_on=None, answers_passed=False,
                summary_json=UNREADABLE))
    return rows


def job_from_kept(text: str) -> KeptJob:
    """The job a kept summary's text holds; ValueError or KeyError if it is not one."""
    data = json.loads(text)

    def day(value: str | None) -> dt.date | None:
        return dt.date.fromisoformat(value) if value is not None else None

    return KeptJob(
        package_id=data["package_id"], job_key=data["job_key"], state=data["state"],
        since=parse_timestamp(data["since"]), by=data["by"],
        first_day=dt.date.fromisoformat(data["first_day"]),
        last_planned=dt.date.fromisoformat(data["last_planned"]),
        entries=tuple(dt.date.fromisoformat(d) for d in data["entries"]),
        finished_on=day(data["finished_on"]), answers=tuple(data["answers"]),
        item=data["item"], title=data["title"], verdict=data["verdict"],
        counted_on=day(data["counted_on"]),
        locks=tuple(HeldLock(**lock) for lock in data["locks"]),
        requires=None if data["requires"] is None else tuple(data["requires"]),
        passed_tests=data["passed_tests"])


@dataclass(frozen=True)
class StatusWants:
    """Which kept jobs the status reads, beyond the open ones and the routine tests'
    last passes (``status_wants``): jobs named by id, and jobs completed for these items
    from ``since`` to before ``before``."""

    package_ids: tuple[str, ...] = ()
    items: tuple[str, ...] = ()
    since: dt.date | None = None
    before: dt.date | None = None


def status_wants(jobs: Mapping[str, Job], day: dt.date) -> StatusWants:
    """What else the status needs, given the kept jobs a store gave for it (every open
    job, each routine test's last own pass, every job completed as passed that was made
    from other jobs' findings): those jobs, and the jobs done for items whose open
    routine job another job may stand for."""
    named = sorted({s for job in jobs.values() if job.answers for s in job.answers}
                   - set(jobs))
    waiting = [job for job in jobs.values() if job.open and job.routine
               and job.requires is not None]
    if not waiting:
        return StatusWants(tuple(named))
    return StatusWants(tuple(named), tuple(sorted({r[0] for j in waiting if (r := j.routine)})),
                       min(job.first_day for job in waiting), day)


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
    done, answered, counted, notes = _routines(jobs, open_jobs, day)
    answered |= {r for s in sources if not jobs[s].open and (r := jobs[s].routine)}
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


def _routines(jobs: Mapping[str, Job], open_jobs: Mapping[str, Job], day: dt.date
              ) -> tuple[dict[tuple[str, str], dt.date], set[tuple[str, str]],
                         dict[str, tuple[dt.date, str]], tuple[str, ...]]:
    """The routine tests done (element, test → the last day passed), those answered by
    an open job made from what they found, the open routine jobs another job stands for
    and the lines saying so or why not (``_standing_for_routines``)."""
    done: dict[tuple[str, str], dt.date] = {}
    answered: set[tuple[str, str]] = set()

    def passed(routine: tuple[str, str], on: dt.date) -> None:
        done[routine] = max(done.get(routine, on), on)

    for job in jobs.values():
        if (on := own_pass(job)) is not None and job.routine:
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
    counted, notes = _standing_for_routines(jobs, open_jobs, day)
    for key, (on, _) in counted.items():
        if (routine := open_jobs[key].routine) is not None:
            passed(routine, on)
    return done, answered, counted, notes


def own_pass(job: Job) -> dt.date | None:
    """The day a routine job counts as its routine test passed: its completion as
    passed, or the day another job's passed tests stood for it; None for any other job."""
    if not job.routine:
        return None
    if job.state == "completed" and job.finished_on and job.verdict == "passed":
        return job.finished_on
    if job.state == "cancelled":
        return job.counted_on
    return None


def _standing_for_routines(jobs: Mapping[str, Job], open_jobs: Mapping[str, Job],
                           day: dt.date) -> tuple[dict[str, tuple[dt.date, str]],
                                                  tuple[str, ...]]:
    """Open routine jobs that another job of their item, completed since they were first
    planned, stands for (by job key: the day it passed and a line saying so), and a line
    for each it does not stand for, saying why (``workpack.plan.carry.shortfall``)."""
    waiting = {key: job for key, job in open_jobs.items()
               if job.routine and job.requires is not None}
    if not waiting:
        return {}, ()
    since = min(job.first_day for job in waiting.values())
    elements = {routine[0] for job in waiting.values() if (routine := job.routine)}
    # The item as canonical JSON writes it: a year of jobs is looked at without parsing.
    items = [json.dumps({"item": element}, ensure_ascii=False, separators=(",", ":"))[1:-1]
             for element in sorted(elements)]
    by_item: dict[str, list[Job]] = {}
    for job in jobs.values():  # by package id
        if job.state == "completed" and job.routine is None and job.finished_on \
                and since <= job.finished_on < day and job.names_item(elements, items):
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
            passed_tests = job.passed_tests
            why = ("its record names no passed tests" if passed_tests is None else
                   shortfall(routine_job.requires or (), passed_tests))
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
    def of(cls, job: Job) -> JobSummary:
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


def status(plant: Plant, jobs: Mapping[str, Job], day: dt.date,
           days_ahead: int) -> Status:
    """The status on ``day``, from every job by package id (``fold``), or from the kept
    jobs a store gives for the status (``status_wants`` says which): each routine test's
    last pass and the jobs that may stand for one are among those, so both give the
    same status (tests/test_jobstates.py holds them to it)."""
    jobs = dict(sorted(jobs.items()))
    # by job key, as carry_forward takes them: the order the locks are listed in
    by_key = {job.job_key: job for job in jobs.values() if job.open}
    done, _, _, _ = _routines(jobs, by_key, day)
    open_jobs = [JobSummary.of(job) for job in
                 sorted(by_key.values(), key=lambda j: j.package_id)]
    dates = routine_dates(plant, done, day)
    horizon = day + dt.timedelta(days=days_ahead)
    return Status(
        plant=plant.plant.name, day=day,
        open=tuple(j for j in open_jobs if j.state != "suspended"),
        suspended=tuple(j for j in open_jobs if j.state == "suspended"),
        carried_over=tuple(j for j in open_jobs if j.first_day < day),
        locks_on=tuple(lock for job in by_key.values() for lock in job.locks),
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
