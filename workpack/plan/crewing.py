"""Named people for the day's jobs, from the crew register, within their hours. Pure.

In rank order, each scheduled job gets a lead who holds what the job needs
(``competence.job_needs``), as many helpers as its crew size less one (each a competent
person for the job's voltage), and, where the job needs one, a supervisor who may supervise
at that voltage and is not one of its crew. Each of the crew spends the job's duration of
their hours for the day; supervising is not counted against hours (the register gives
hours for planned work; countersigning is not planned work). Among those who fit, the one
with most hours left is taken, then the lower id, so the same inputs give the same crew.
Those who may supervise are taken as crew only when nobody else fits, so they stay free to
supervise. A job nobody free can lead or supervise is not staffed: it is named, with why.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Sequence
from dataclasses import dataclass, replace

from workpack.competence import JobNeeds, job_needs
from workpack.crew import may_supervise, qualified
from workpack.model.crew import Competence, CrewRegister, Person, Requirement
from workpack.model.package import WorkPackage
from workpack.numbers import format_number
from workpack.plan.day import Conflict, DayPlan


@dataclass(frozen=True)
class Staffing:
    """Who does one job, or why nobody can."""

    package: str
    crew: tuple[Person, ...]  # the lead first
    supervisor: Person | None
    problem: str | None  # None: staffed


def present(register: CrewRegister, day: dt.date) -> list[Person]:
    """The people who may work on ``day``: not left."""
    return [p for p in register.people if p.left_on is None or day <= p.left_on]


def available_hours(register: CrewRegister, day: dt.date) -> float:
    """Person-hours the crew has for planned work on ``day``."""
    return sum(p.hours_per_day for p in present(register, day))


def shown(person: Person) -> str:
    return f"{person.name} ({person.id})"


def staff_jobs(packages: Sequence[WorkPackage], register: CrewRegister,
               day: dt.date) -> list[Staffing]:
    """A crew (and supervisor) for each of ``packages`` in the order given."""
    left = {p.id: p.hours_per_day for p in present(register, day)}
    people = present(register, day)
    staffed = []
    for package in packages:
        needs = job_needs(package)
        staffed.append(_staff(package, needs, people, left, day))
    return staffed


def _pick(candidates: list[Person], left: dict[str, float], volts: float,
          day: dt.date) -> Person | None:
    """Those who may not supervise first (a supervisor used as crew cannot supervise the
    job), then most hours left, then the lower id."""
    return min(candidates, key=lambda p: (may_supervise(p, volts, day), -left[p.id], p.id),
               default=None)


def _staff(package: WorkPackage, needs: JobNeeds, people: list[Person],
           left: dict[str, float], day: dt.date) -> Staffing:
    hours = package.duration_h

    def free(person: Person, taken: Sequence[Person]) -> bool:
        return person not in taken and left[person.id] + 1e-9 >= hours

    lead = _pick([p for p in people if free(p, ()) and all(
        qualified(p, need, day) for need in needs.needs)], left, needs.volts, day)
    if lead is None:
        held = " and ".join(n.kind.value for n in needs.needs) or "the work"
        return Staffing(package.id, (), None,
                        f"{package.id}: nobody with {format_number(hours)} h left holds "
                        f"{held} for {format_number(needs.volts)} V: not staffed")
    crew = [lead]
    helper_need = Requirement(kind=Competence.competent_person, volts=needs.volts)
    for _ in range(package.crew - 1):
        helper = _pick([p for p in people if free(p, crew) and qualified(p, helper_need, day)],
                       left, needs.volts, day)
        if helper is None:
            return Staffing(package.id, (), None,
                            f"{package.id}: needs {package.crew} people; nobody else with "
                            f"{format_number(hours)} h left is a competent person for "
                            f"{format_number(needs.volts)} V: not staffed")
        crew.append(helper)
    supervisor = None
    if needs.supervisor_needed:
        supervisor = min((p for p in people if p not in crew
                          and may_supervise(p, needs.volts, day)),
                         key=lambda p: p.id, default=None)
        if supervisor is None:
            return Staffing(package.id, (), None,
                            f"{package.id}: nobody but its crew may supervise at "
                            f"{format_number(needs.volts)} V: not staffed")
    for person in crew:
        left[person.id] -= hours
    return Staffing(package.id, tuple(crew), supervisor, None)


def with_staff(package: WorkPackage, staffing: Staffing) -> WorkPackage:
    """The package with its named crew and supervisor, to print."""
    if staffing.problem is not None:
        return package
    return package.model_copy(update={
        "assigned": tuple(shown(p) for p in staffing.crew),
        "supervisor_assigned": shown(staffing.supervisor) if staffing.supervisor else None})


def staff_day(plan: DayPlan, register: CrewRegister) -> DayPlan:
    """``plan`` with named people on each scheduled job; a job nobody can staff moves to the
    deferred ones, and a conflict says why."""
    chosen = [p for p in plan.packages if p.id in plan.scheduled]
    staffing = {s.package: s for s in staff_jobs(chosen, register, plan.date)}
    unstaffed = [s for s in staffing.values() if s.problem is not None]
    packages = tuple(with_staff(p, staffing[p.id]) if p.id in staffing else p
                     for p in plan.packages)
    missing = {s.package for s in unstaffed}
    return replace(
        plan, packages=packages,
        scheduled=tuple(i for i in plan.scheduled if i not in missing),
        deferred=tuple(p.id for p in plan.packages if p.id in plan.deferred or p.id in missing),
        conflicts=(*plan.conflicts, *(Conflict((s.package,), s.problem or "")
                                      for s in unstaffed)))
