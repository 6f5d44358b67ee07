"""What a day's plan carries from the days before it: which job a package is, the id it
carries, the locks still on and the routine tests done. Pure: the shell reads the store
(``workpack.joblog`` folds its job events) and passes a ``Carried``.

A *job key* says what makes a job the same job from one plan to the next: its rule and
what the rule makes one job of (``one_per``: its item, its system, or its findings),
and the routine test or the findings behind it. A finding is known by what it is,
where and when it was seen (``kind@where@time``), not by its position in a file, so a
late reading added to the day's file leaves every other job's key as it was.

A *package id* is ``WP-<plant code>-<day first issued>-<number>``: the plant's code keeps
ids of two plants apart; the day and number are the plan's. While a job stays open its
id stays with it (``IssuedIds.open``, read from the store by the shell); a number once
issued (``IssuedIds.taken``) is never given to another job, so a re-plan numbers new
jobs after every number of the day already issued, even those of jobs since cancelled.
"""

from __future__ import annotations

import datetime as dt
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from workpack.model.findings import Finding
from workpack.model.package import Reading, WorkPackage
from workpack.plan.jobs import Job

PACKAGE_ID = re.compile(r"^WP-(?P<code>[A-Z0-9]{2,8})-(?P<day>\d{8})-(?P<number>\d{2,})$")


def finding_identity(finding: Finding) -> str:
    """A finding as the same finding in any file: kind, place and time seen."""
    return f"{finding.kind}@{finding.where}@{finding.at:%Y-%m-%dT%H:%M}"


def job_key(job: Job) -> str:
    """What makes ``job`` the same job across re-plans and days (see the module doc)."""
    rule = job.rule
    if rule.one_per == "finding" and job.findings:
        what = "findings:" + ",".join(finding_identity(f) for f in job.findings)
    elif rule.one_per == "system":
        what = f"system:{job.system.id}"
    else:
        what = f"item:{job.item}"
    if job.routine is not None:
        what += f"|routine:{job.routine.routine.test.value}@{job.routine.element.id}"
    return f"{rule.id}|{what}"


def routine_of_key(key: str) -> tuple[str | None, str | None]:
    """The routine test and its element a job key names, or (None, None)."""
    _, found, rest = key.rpartition("|routine:")
    if not found:
        return None, None
    test, _, element = rest.partition("@")
    return test, element


@dataclass(frozen=True)
class IssuedIds:
    """What the store says was issued before: the open jobs' ids by job key, and every
    id ever issued for the plant (open, done or cancelled)."""

    open: Mapping[str, str] = field(default_factory=dict)
    taken: frozenset[str] = frozenset()


def package_id(code: str, day: dt.date, number: int) -> str:
    return f"WP-{code}-{day:%Y%m%d}-{number:02d}"


def assign_ids(code: str, day: dt.date, keys: Sequence[str],
               issued: IssuedIds) -> list[str]:
    """An id for each job key, in the order given (the rank order): an open job's own id;
    a new job the next number of ``day`` after every number of that day ever issued.

    ValueError if two keys are the same (the planner makes one job per key).
    """
    if len(set(keys)) != len(keys):
        raise ValueError("two jobs of one plan have the same job key")
    numbers = [_number(taken, code, day) for taken in issued.taken]
    last = max((n for n in numbers if n is not None), default=0)
    ids = []
    for key in keys:
        known = issued.open.get(key)
        if known is None:
            last += 1
            known = package_id(code, day, last)
        ids.append(known)
    return ids


def _number(taken: str, code: str, day: dt.date) -> int | None:
    found = PACKAGE_ID.match(taken)
    if found is None or found["code"] != code or found["day"] != f"{day:%Y%m%d}":
        return None
    return int(found["number"])


@dataclass(frozen=True)
class HeldLock:
    """A lock still on from an earlier day: where, whose, since when, for which job."""

    device: str
    package_id: str
    lock: str | None = None
    applied_by: str | None = None
    applied_at: str | None = None
    why: str = ""

    def describe(self) -> str:
        whose = ", ".join(part for part in (
            f"lock {self.lock}" if self.lock else None, self.applied_by,
            f"since {self.applied_at}" if self.applied_at else None) if part)
        return f"{self.device} is still locked for {self.package_id}" + (
            f" ({whose})" if whose else "") + (f": {self.why}" if self.why else "")


@dataclass(frozen=True)
class Carried:
    """Everything from earlier days the plan of a day takes in.

    ``held``: job keys of jobs begun and not finished (started, or suspended with locks
    on): ranked before everything. ``returning``: job keys of jobs planned on an earlier
    day and not done (deferred, or not reached): ranked above new routine work of their
    priority. ``routines_done``: (element, routine test) → the last day it passed, as
    recorded; a later date than the plant file's ``last_done`` moves the next due date.
    ``answered`` and ``busy_items``: routine tests not planned today, because another
    job answers for them (see ``workpack.joblog.carry_forward``).
    """

    issued: IssuedIds = field(default_factory=IssuedIds)
    held: frozenset[str] = frozenset()
    returning: frozenset[str] = frozenset()
    locks: tuple[HeldLock, ...] = ()
    routines_done: Mapping[tuple[str, str], dt.date] = field(default_factory=dict)
    answered: frozenset[tuple[str, str]] = frozenset()  # (element, test) not planned today:
    # a job made from what the test found last time is open or being planned
    busy_items: frozenset[str] = frozenset()  # items under a begun job: no routine test


# --- a passed test standing for a routine test --------------------------------------------
#
# A job that passed (a dry-out's acceptance test) is counted as an item's routine test
# when, for every reading the routine's package judges in its work, the job passed a
# reading of the same test (same element, phase or winding and kind: the reading's
# ``what`` before its first comma) at least as demanding: a DC test voltage at least
# the routine's, a duration at least the routine's, the same temperature correction
# (code set and reference temperature) and a limit at least as strict. Common practice:
# an acceptance test that meets everything the periodic test asks for is that test.

_DURATION = re.compile(r"\bfor (?P<minutes>\d+(?:\.\d+)?) min\b")


def reading_test(reading: Reading) -> dict[str, Any]:
    """A judged reading as a test another job's reading may stand for (JSON-ready)."""
    limit = reading.limit
    test, _, rest = reading.what.partition(", ")
    duration = _DURATION.search(rest)
    return {"test": test, "unit": reading.unit, "test_voltage_v": reading.test_voltage_v,
            "minutes": float(duration["minutes"]) if duration else None,
            "low": limit.low if limit else None, "high": limit.high if limit else None,
            "corrected_to_c": limit.temperature_corrected_to_c if limit else None,
            "code_set": limit.code_set if limit else None}


def judged_work_readings(package: WorkPackage) -> list[Reading]:
    """The readings a package's work steps are judged by (not the as-found readings,
    not the checks after energising)."""
    return [reading for step in package.steps if step.kind == "work"
            for reading in step.readings if reading.acceptance and reading.limit]


def _at_least(passed: float | None, needed: float | None) -> bool:
    return needed is None or (passed is not None and passed >= needed)


def _short_of(passed: Mapping[str, Any], needed: Mapping[str, Any]) -> str | None:
    """How one passed test falls short of a needed one, in words; None if it does not."""
    if not _at_least(passed.get("test_voltage_v"), needed.get("test_voltage_v")):
        return "a lower test voltage"
    if not _at_least(passed.get("minutes"), needed.get("minutes")):
        return "a shorter duration"
    if (passed.get("corrected_to_c"), passed.get("code_set")) != (
            needed.get("corrected_to_c"), needed.get("code_set")):
        return "a different temperature correction"
    if not _at_least(passed.get("low"), needed.get("low")):
        return "a lower minimum"
    high, needed_high = passed.get("high"), needed.get("high")
    if needed_high is not None and (high is None or high > needed_high):
        return "a higher maximum"
    return None


def shortfall(needed: Sequence[Mapping[str, Any]],
              passed: Sequence[Mapping[str, Any]]) -> str | None:
    """Why ``passed`` tests do not stand for the ``needed`` ones, in words; None when
    every needed test was passed by one at least as demanding. Nothing needed: nothing
    to compare, so it never stands (the routine stays planned)."""
    if not needed:
        return "the routine's package names no judged reading to compare"
    for need in needed:
        same = [test for test in passed if test.get("test") == need.get("test")]
        if not same:
            return f"it passed no test of {need.get('test')}"
        reasons = [_short_of(test, need) for test in same]
        if all(reasons):
            return f"its test of {need.get('test')} had {reasons[0]} than the routine's"
    return None
