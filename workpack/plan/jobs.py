"""Which jobs the day needs: diagnoses and due routine tests offered to the rules.

Each diagnosis, and each routine test that falls due on the plan date, is offered to
the rules that apply to its kind; a rule whose condition holds gives a job on an item.
Jobs of one rule on the same item (or system, or finding, as the rule's ``one_per``
says) are one job, which keeps every finding and diagnosis that went into it. A routine
rule may defer its job (``defer_when``): the day plan names it with the reason. Pure.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any, NamedTuple

from workpack.diagnose import DayDiagnosis, Diagnosis
from workpack.electrical import TrendStatus
from workpack.electrical.standards import CodeSet
from workpack.history import History
from workpack.model.findings import Finding, Findings
from workpack.model.plant import Element, Plant, Routine, RoutineTest
from workpack.plan.context import (
    ELEMENT_KINDS,
    evaluate,
    evaluate_text,
    finding_rule_context,
    routine_rule_context,
)
from workpack.plan.systems import System, SystemState, system_at
from workpack.rules import CompiledRule, RuleError, RuleSet
from workpack.topology import Topology

# Trend verdicts that bring an insulation test forward (see electrical.insulation_trend).
EARLY_TREND = (TrendStatus.FALLING, TrendStatus.REACHES_MINIMUM_SOON,
               TrendStatus.BELOW_MINIMUM)


class DueRoutine(NamedTuple):
    """A routine test that has fallen due: on which element, which test, since when."""

    element: Element
    routine: Routine
    due_on: dt.date


def due_routines(plant: Plant, day: dt.date, history: History | None = None,
                 standards: Mapping[str, CodeSet] | None = None,
                 done: Mapping[tuple[str, str], dt.date] | None = None) -> list[DueRoutine]:
    """Routine tests whose interval has run out by ``day`` (or that were never done), and
    insulation tests brought forward because the item's recorded trend falls fast.

    ``done``: (element, test) → the last day the test passed as the records say; the
    later of it and the plant file's ``last_done`` starts the interval."""
    due = []
    done = done or {}
    for element in plant.elements():
        for routine in element.routine:
            last = last_done(routine, done.get((element.id, routine.test.value)))
            due_on = last + dt.timedelta(days=routine.interval_days) if last else day
            if due_on > day and routine.test is RoutineTest.insulation_resistance and (
                history is not None and standards is not None
            ):
                trend = history.trend(element.id, standards)
                if trend is not None and trend.status in EARLY_TREND:
                    due_on = day
            if due_on <= day:
                due.append(DueRoutine(element, routine, due_on))
    return due


def last_done(routine: Routine, recorded: dt.date | None) -> dt.date | None:
    """The later of the plant file's ``last_done`` and the last recorded pass."""
    known = [d for d in (routine.last_done, recorded) if d is not None]
    return max(known) if known else None


@dataclass(frozen=True)
class _Calls:
    """What calls for one job: a rule on an item, and every finding or test behind it."""

    rule: CompiledRule
    item: str
    key: str  # the item, system or finding(s) that make it one job (``one_per``)
    system: System  # the item's system
    findings: tuple[Finding, ...] = ()  # in the order found
    diagnoses: tuple[Diagnosis, ...] = ()  # one per finding
    routine: DueRoutine | None = None


@dataclass(frozen=True)
class Job(_Calls):
    """One package to build, with the context its rule's texts see (the rule contract:
    the builder works on the typed fields and only hands ``context`` to the rule)."""

    context: Mapping[str, Any] = field(default_factory=dict)

    @property
    def finding_ids(self) -> tuple[str, ...]:
        return tuple(str(f.id) for f in self.findings)


@dataclass(frozen=True)
class Deferral:
    """A routine job a rule puts off today."""

    rule: str
    item: str
    what: str  # the routine test, or the finding kind
    reason: str


@dataclass(frozen=True)
class Matched:
    jobs: tuple[Job, ...]  # sorted by rule and key
    deferrals: tuple[Deferral, ...]


@dataclass(frozen=True)
class _Offer:
    """A diagnosis or a due routine test, offered to the rules of its kind."""

    kind: str  # the finding's kind, or "routine:<test>"
    element: str  # where it is
    findings: tuple[Finding, ...]
    diagnoses: tuple[Diagnosis, ...]
    routine: DueRoutine | None

    def wants(self, rule: CompiledRule) -> bool:
        if self.routine is not None:
            return self.routine.routine.test.value in rule.routine
        return self.kind in rule.findings

    def context(self, topology: Topology, element: str, system: System,
                day: dt.date) -> dict[str, Any]:
        if self.routine is not None:
            return routine_rule_context(topology, topology.elements[element], system,
                                        self.routine.routine, self.routine.due_on, day)
        return finding_rule_context(topology, topology.elements[element], system,
                                    self.findings, self.diagnoses)


def match_jobs(topology: Topology, findings: Findings, diagnosis: DayDiagnosis,
               states: Mapping[str, SystemState], day: dt.date, ruleset: RuleSet,
               due: Sequence[DueRoutine]) -> Matched:
    """The jobs the rules give, and the routine jobs a rule defers today (with why)."""
    by_id = {str(f.id): f for f in findings.findings}
    offers = [_Offer(found.kind, found.where if found.where in topology.elements
                     else _detector_bus(topology, found.where),
                     (by_id[found.finding],), (found,), None)
              for found in diagnosis.diagnoses]
    offers += [_Offer(f"routine:{d.routine.test.value}", d.element.id, (), (), d) for d in due]
    merged: dict[tuple[str, str], _Calls] = {}
    deferrals: dict[tuple[str, str], Deferral] = {}
    for offer in offers:
        context = offer.context(topology, offer.element,
                                system_at(topology, offer.element, states), day)
        kind = ELEMENT_KINDS[type(topology.elements[offer.element])]
        for rule in ruleset.rules:
            if not offer.wants(rule) or (rule.items and kind not in rule.items):
                continue
            if not evaluate(rule, rule.when, context):
                continue
            item = evaluate_text(rule, rule.item, context)
            what = offer.routine.routine.test.value if offer.routine else offer.kind
            if rule.defer_when is not None and evaluate(rule, rule.defer_when, context):
                reason = (evaluate_text(rule, rule.defer_reason, context)
                          if rule.defer_reason is not None else "")
                deferrals[(rule.id, item)] = Deferral(rule.id, item, what, reason)
                continue
            if item not in topology.elements:
                raise RuleError(f"{rule.place}: rule {rule.id}: item {item!r} is not an "
                                "element of the plant")
            system = system_at(topology, item, states)
            key = {"item": item, "system": system.id,
                   "finding": ",".join(str(f.id) for f in offer.findings) or item
                   }[rule.one_per]
            found = merged.get((rule.id, key))
            if found is None:
                merged[(rule.id, key)] = _Calls(rule, item, key, system, offer.findings,
                                                offer.diagnoses, offer.routine)
            else:  # the job keeps its first item; every finding joins it
                merged[(rule.id, key)] = _Calls(
                    rule, found.item, key, found.system, found.findings + offer.findings,
                    found.diagnoses + offer.diagnoses, found.routine or offer.routine)
    jobs = tuple(_with_context(merged[k], topology, day) for k in sorted(merged))
    return Matched(jobs, tuple(deferrals[k] for k in sorted(deferrals)))


def _with_context(calls: _Calls, topology: Topology, day: dt.date) -> Job:
    """The job with the context its rule's texts see: its item, its system, and every
    finding that went into it."""
    item = topology.elements[calls.item]
    if calls.findings or calls.routine is None:
        context = finding_rule_context(topology, item, calls.system, calls.findings,
                                       calls.diagnoses)
    else:
        context = routine_rule_context(topology, item, calls.system, calls.routine.routine,
                                       calls.routine.due_on, day)
    return Job(calls.rule, calls.item, calls.key, calls.system, calls.findings,
               calls.diagnoses, calls.routine, context)


def _detector_bus(topology: Topology, detector_id: str) -> str:
    for element in topology.plant.buses:
        if element.detector and element.detector.id == detector_id:
            return element.id
    raise KeyError(detector_id)
