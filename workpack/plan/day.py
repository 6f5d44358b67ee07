"""The day: every package, ranked (second-ground risk first), fitted into the crew's
hours, and the conflicts between the scheduled ones named. Pure."""

from __future__ import annotations

import datetime as dt
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from workpack.diagnose import DayDiagnosis, diagnose_day, downstream_loads
from workpack.electrical.standards import CodeSet
from workpack.history import History
from workpack.model.findings import Findings, Severity
from workpack.model.package import LockStillOn, WorkPackage
from workpack.model.plant import Vitality
from workpack.model.weights import SearchWeights
from workpack.plan.carry import Carried, HeldLock, assign_ids, job_key
from workpack.plan.inputs import DayInputs
from workpack.plan.jobs import Deferral, Job, due_routines, match_jobs
from workpack.plan.lockout import Isolations
from workpack.plan.package import build_package
from workpack.plan.systems import system_states
from workpack.rules import RuleSet
from workpack.topology import Topology


@dataclass(frozen=True)
class Conflict:
    """Something the supervisor settles before work starts: packages that clash, a job
    that does not fit or is put off, a finding no rule answered."""

    packages: tuple[str, ...]
    text: str


@dataclass(frozen=True)
class DayPlan:
    plant: str
    date: dt.date
    crew_hours: float
    packages: tuple[WorkPackage, ...]  # ranked
    scheduled: tuple[str, ...]
    deferred: tuple[str, ...]
    conflicts: tuple[Conflict, ...]
    diagnosis: DayDiagnosis
    keys: Mapping[str, str] = field(default_factory=dict)  # package id → its job key


def plan_day(topology: Topology, findings: Findings, day: dt.date, ruleset: RuleSet,
             standards: Mapping[str, CodeSet], weights: SearchWeights, crew_hours: float,
             history: History | None = None,
             progress: Callable[[int, int], None] | None = None,
             carried: Carried | None = None) -> DayPlan:
    """Every package for ``day``, ranked and fitted into ``crew_hours`` (person-hours).

    ``history`` (from the records) raises the likelihood of circuits that grounded before
    and brings forward insulation tests of items whose readings fall fast. ``carried``
    (from the store's job events) gives open jobs their ids and their place at the head
    of the day, moves recorded routine tests' due dates and names the locks still on."""
    plant = topology.plant
    history = history or History()
    carried = carried or Carried()
    diagnosis = diagnose_day(plant, topology, findings, standards)
    states = system_states(topology, diagnosis)
    matched = match_jobs(topology, findings, diagnosis, states, day, ruleset,
                         [due for due in due_routines(plant, day, history, standards,
                                                      carried.routines_done)
                          if due.element.id not in carried.busy_items
                          and (due.element.id, due.routine.test.value) not in carried.answered])
    inputs = DayInputs(
        topology=topology, ruleset=ruleset, standards=standards, weights=weights, day=day,
        states=states, past_grounds=history.past_grounds,
        tripped=frozenset(d.where for d in diagnosis.diagnoses
                          if d.kind == "breaker_tripped"),
        isolations=Isolations())
    drafts = []
    for done, job in enumerate(matched.jobs, start=1):
        drafts.append((job_key(job), build_package(inputs, job)))
        if progress:
            progress(done, len(matched.jobs))
    drafts.sort(key=lambda draft: _rank(draft[1], draft[0], carried))
    ids = assign_ids(plant.plant.code, day, [key for key, _ in drafts], carried.issued)
    packages = tuple(p.model_copy(update={
        "id": n, "locks_on": tuple(
            LockStillOn(device=held.device, lock=held.lock, held_by=held.applied_by,
                        since=held.applied_at, text=held.describe())
            for held in carried.locks if held.package_id == n)})
        for n, (_, p) in zip(ids, drafts, strict=True))
    scheduled, deferred = _fit(packages, crew_hours)
    chosen = [p for p in packages if p.id in scheduled]
    conflicts = [*_not_fitted(packages, deferred, crew_hours),
                 *_unanswered(diagnosis, matched.jobs),
                 *(_deferral(d) for d in matched.deferrals),
                 *find_conflicts(topology, chosen),
                 *locks_still_on(carried.locks, chosen)]
    return DayPlan(plant=plant.plant.name, date=day, crew_hours=crew_hours,
                   packages=packages, scheduled=scheduled, deferred=deferred,
                   conflicts=tuple(conflicts), diagnosis=diagnosis,
                   keys={n: key for n, (key, _) in zip(ids, drafts, strict=True)})


def _rank(package: WorkPackage, key: str, carried: Carried) -> tuple[Any, ...]:
    """Jobs begun and not finished first (their locks are on); then priority; jobs that
    remove a ground (the second-ground risk); findings, then routine jobs carried from an
    earlier day, then new routine work; shorter first; then by item and rule, so the
    order never depends on input order."""
    routine = package.origin.routine is not None
    return (key not in carried.held, package.priority, not package.clears_ground,
            routine, routine and key not in carried.returning, package.duration_h,
            package.item, package.origin.rule)


def locks_still_on(locks: Sequence[HeldLock],
                   scheduled: Sequence[WorkPackage]) -> list[Conflict]:
    """Each lock still on from an earlier day, and the day's packages that would isolate
    or switch its device: the lock's own job takes it off, no one else."""
    conflicts = []
    for held in locks:
        others = [p.id for p in scheduled if p.id != held.package_id and (
            held.device in p.switches or any(pt.device == held.device for pt in p.isolation))]
        text = f"locks still on: {held.describe()}"
        if others:
            text += (f"; {', '.join(others)} also isolate or switch {held.device}: they add "
                     f"their own locks and never remove this one")
        conflicts.append(Conflict((held.package_id, *others), text))
    return conflicts


def _fit(packages: Sequence[WorkPackage],
         crew_hours: float) -> tuple[tuple[str, ...], tuple[str, ...]]:
    """Scheduled and deferred package ids: in rank order, each that still fits."""
    scheduled, deferred, used = [], [], 0.0
    for package in packages:
        need = package.duration_h * package.crew
        if used + need <= crew_hours + 1e-9:
            scheduled.append(package.id)
            used += need
        else:
            deferred.append(package.id)
    return tuple(scheduled), tuple(deferred)


def _not_fitted(packages: Sequence[WorkPackage], deferred: Sequence[str],
                crew_hours: float) -> list[Conflict]:
    return [Conflict((p.id,), f"{p.id} (priority {p.priority}: {p.title}) does not fit in "
                              f"{crew_hours:g} person-hours and is deferred: find the crew")
            for p in packages if p.id in deferred and p.priority <= 2]


def _unanswered(diagnosis: DayDiagnosis, jobs: Sequence[Job]) -> list[Conflict]:
    """Urgent and high findings no rule made a package for."""
    handled = {f for job in jobs for f in job.finding_ids}
    return [Conflict((), f"finding {d.finding} ({d.kind.replace('_', ' ')} at {d.where}, "
                         f"{d.severity.value}) matched no rule: no package was made for "
                         f"it — {d.summary}")
            for d in diagnosis.diagnoses
            if d.finding not in handled and d.severity in (Severity.urgent, Severity.high)]


def _deferral(deferral: Deferral) -> Conflict:
    return Conflict((), f"{deferral.rule} on {deferral.item} ({deferral.what}) is due but "
                        f"deferred: {deferral.reason}")


def find_conflicts(topology: Topology, packages: Sequence[WorkPackage]) -> list[Conflict]:
    """Clashes between the day's scheduled packages."""
    conflicts: list[Conflict] = []
    by_device: dict[str, list[str]] = {}
    dead: dict[str, set[str]] = {}
    for package in packages:
        for point in package.isolation:
            by_device.setdefault(point.device, []).append(package.id)
        dead[package.id] = {load.id for point in package.isolation
                            for load in downstream_loads(topology, point.device)}
        dead[package.id] |= {package.item}
    for device, ids in sorted(by_device.items()):
        if len(ids) > 1:
            conflicts.append(Conflict(tuple(ids), f"{' and '.join(ids)} both isolate {device}: "
                                                  "each applies its own lock; neither "
                                                  "restores it while the other is open"))
    for searcher in packages:
        for other in packages:
            held = sorted(set(searcher.switches) & {p.device for p in other.isolation})
            if other.id != searcher.id and held:
                conflicts.append(Conflict(
                    (searcher.id, other.id),
                    f"{searcher.id}'s search opens and recloses {', '.join(held)}, which "
                    f"{other.id} keeps locked open: do not run them at the same time, or skip "
                    "those search steps while the locks are on"))
    vital = {load.id for load in topology.plant.loads if load.vitality is Vitality.vital}
    for n, first in enumerate(packages):
        for second in packages[n + 1:]:
            both = sorted(dead[first.id] & vital), sorted(dead[second.id] & vital)
            if both[0] and both[1] and set(both[0]) != set(both[1]):
                conflicts.append(Conflict(
                    (first.id, second.id),
                    f"{first.id} takes out {', '.join(both[0])} and {second.id} takes out "
                    f"{', '.join(both[1])}: two vital loads; never at the same time"))
    for user in packages:
        if user.instrument_supply is None:
            continue
        for other in packages:
            below = {e for point in other.isolation for e in topology.below(point.device)}
            if other.id != user.id and user.instrument_supply in below:
                conflicts.append(Conflict(
                    (user.id, other.id),
                    f"{other.id} isolates the supply of {user.instrument_supply}, which "
                    f"{user.id} needs for its test instrument: do them at different times"))
    return conflicts
