"""One work package, built from a job: the rule's steps with their computed readings,
the isolation and proving dead, the search where the rule asks for one, the restoration
written from the isolation, the cautions, hazard facts, approach boundaries and PPE, the
phasor diagram of a ground finding and a one-line sketch.

The builder works on the job's typed state (its item, system, findings, diagnoses); the
rule's context is only handed to the rule's own texts. Pure.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import replace
from typing import Any

from workpack.calculations import CALCULATIONS, CalcContext, CalcError
from workpack.competence import derive_needs
from workpack.model.package import (
    FinalTest,
    IsolationPoint,
    Origin,
    Reading,
    Step,
    StepKind,
    WorkPackage,
)
from workpack.model.plant import Transformer
from workpack.plan.cautions import CautionWriter, DraftStep, merge_cautions, package_facts
from workpack.plan.context import SEVERITY_ORDER, evaluate, evaluate_text, with_system
from workpack.plan.fault_search import search_section
from workpack.plan.inputs import DayInputs
from workpack.plan.jobs import Job
from workpack.plan.lockout import (
    isolation_gaps,
    isolation_points,
    normal_devices,
    proving_dead,
    vital_loads,
)
from workpack.plan.protection import approach, hazard_facts, ppe, worst_to_earth
from workpack.plan.sketch import package_sketch
from workpack.plan.systems import systems_touched
from workpack.restoration import (
    Restoring,
    gate_text,
    number_steps,
    restoration_steps,
    return_to_service,
    take_out_of_service,
)
from workpack.rules import CompiledRule, CompiledStep, RuleError
from workpack.search_wording import FINAL_TESTS_ACCEPTANCE


def build_package(inputs: DayInputs, job: Job) -> WorkPackage:
    """The job's package, its id ``rule:key`` until the day plan numbers it."""
    topology, rule, context = inputs.topology, job.rule, job.context
    item = topology.elements[job.item]
    system = job.system
    cautions = CautionWriter(inputs.ruleset, rule)
    priority = 1 if system.second_ground else int(evaluate(rule, rule.priority, context))
    isolation = inputs.isolations(topology, job.item) if rule.isolate else None
    points = isolation_points(isolation)
    proving = proving_dead(topology, isolation)
    vital = vital_loads(topology, points, [job.item]) if isolation is not None else ()
    work = [d for d in (_draft(inputs, rule, step, context) for step in rule.steps) if d]
    after = [d for d in (_draft(inputs, rule, step, context, "check")
                         for step in rule.restoration) if d]
    facts = package_facts(points, proving, [d.step for d in (*work, *after)],
                          isolation is not None and isinstance(item, Transformer),
                          rule.search_plan)
    work_steps = [cautions.on_step(d, context, facts) for d in work]
    if isolation is not None:
        work_steps.insert(0, Step(number=0, text=take_out_of_service(item.label, vital),
                                  kind="take_out_of_service", check_only=True,
                                  before_isolation=True))
    work_steps.sort(key=lambda step: not step.before_isolation)  # stable: rule order
    steps = number_steps(work_steps, "S")
    final_tests: tuple[FinalTest, ...] = ()
    switches: tuple[str, ...] = ()
    search = None
    if rule.search_plan:
        search = search_section(inputs, job, cautions, len(steps) + 1)
        steps += search.steps
        final_tests, switches = search.final_tests, search.switches
    checks = [replace(d, step=cautions.on_step(d, context, facts)) for d in after]
    restoration = number_steps(_restoration(
        inputs, job.item, points if isolation is not None else None, vital, steps, checks),
        "X")
    printed = cautions.for_package(context, facts, system.state, isolation,
                                   steps + restoration)
    others = [s for s in systems_touched(topology, job.item, inputs.states)
              if s.id != system.id]
    # One worst-case voltage to earth per system (electrical.worst_voltage_to_earth):
    # the hazard facts, the approach table entry and the glove class all use it.
    worsts = {s.id: worst_to_earth(s) for s in [system, *others]}
    sequence = topology.plant.plant.sequence
    facts_printed = tuple(fact for s in [system, *others]
                          for fact in hazard_facts(s, worsts[s.id], sequence))
    for other in others:
        printed = merge_cautions(printed, cautions.for_package(
            with_system(context, other), facts, other.state))
    worst = max((w for w in worsts.values() if w is not None),
                key=lambda w: w.exposure_v, default=None)
    listed = {c.text for c in printed}  # a final test repeats none of the package's
    final_tests = tuple(f.model_copy(update={"cautions": tuple(
        c for c in f.cautions if c.text not in listed)}) for f in final_tests)
    supply = (evaluate_text(rule, rule.instrument_supply, context)
              if rule.instrument_supply is not None else None)
    who = derive_needs(rule.job_kind, bool(points) or any(f.isolation for f in final_tests),
                       any(s.readings for s in (*steps, *restoration)) or bool(proving),
                       system.voltage)
    return WorkPackage(
        id=f"{rule.id}:{job.key}", plant=topology.plant.plant.name, date=inputs.day,
        title=evaluate_text(rule, rule.title, context),
        job_kind=rule.job_kind, clears_ground=rule.clears_ground,
        priority=max(1, min(5, priority)), priority_reason=_priority_reason(job),
        duration_h=rule.hours, crew=rule.crew, permits=rule.permits, item=job.item,
        item_label=item.label, system=system.id,
        origin=Origin(rule=rule.id, findings=job.finding_ids,
                      routine=job.routine.routine.test.value if job.routine else None),
        hazard_facts=facts_printed, cautions=printed,
        approach=approach(topology, inputs.standards, job.item, worst), ppe=ppe(worst),
        isolation=points, isolation_gaps=isolation_gaps(isolation),
        stored_energy=isolation.stored_energy if isolation else (),
        proving_dead=proving, steps=steps, final_tests=final_tests,
        acceptance=_acceptance(rule, context, steps, restoration, final_tests),
        restoration=restoration,
        phasor=system.state.phasor if job.findings and system.state.grounded else None,
        sketch=package_sketch(topology, job.item, isolation,
                              search.board if search else None,
                              search.board_order if search else ()),
        instrument_supply=supply or None, switches=switches,
        needs=who.needs, supervisor_needed=who.supervisor_needed,
    )


def _priority_reason(job: Job) -> str:
    system = job.system
    if system.second_ground:
        return (f"grounds on phases {' and '.join(system.state.ground_phases)} of the "
                f"{system.id} system: second-ground risk")
    if job.diagnoses:
        worst = min(job.diagnoses, key=lambda d: SEVERITY_ORDER[d.severity])
        return f"{worst.severity.value}: {worst.summary}"
    if job.routine:
        return f"routine {job.routine.routine.test.value.replace('_', ' ')} due"
    return "rule"


def _draft(inputs: DayInputs, rule: CompiledRule, step: CompiledStep,
           context: Mapping[str, Any], kind: StepKind = "work") -> DraftStep | None:
    """One rule step with its computed readings (ids are set when numbered), the ids of
    the cautions it names and its restoration stage; None when its condition is false."""
    if step.when is not None and not evaluate(rule, step.when, context):
        return None
    readings: list[Reading] = []
    for asked in step.readings:
        values = {name: evaluate_text(rule, source, context)
                  for name, source in asked.params.items()}
        calc_context = CalcContext(inputs.topology, inputs.standards,
                                   f"S0.{len(readings) + 1}")
        try:
            readings.extend(r if asked.judge else r.model_copy(update={"acceptance": False})
                            for r in CALCULATIONS[asked.calc](calc_context, **values))
        except CalcError as error:
            raise RuleError(f"{rule.place}: rule {rule.id}: {asked.calc}: {error}") from None
    reconnect = (evaluate_text(rule, step.reconnect, context)
                 if step.reconnect is not None else None)
    built = Step(number=0, text=str(evaluate(rule, step.text, context)),
                 readings=tuple(readings), check_only=step.check_only and not readings,
                 kind=kind, before_isolation=step.before_isolation,
                 reconnect=reconnect or None, search_outcome=step.search_outcome)
    return DraftStep(built, step.cautions, step.stage)


def _restoration(inputs: DayInputs, item_id: str, points: Sequence[IsolationPoint] | None,
                 vital: Sequence[str], steps: Sequence[Step],
                 checks: Sequence[DraftStep]) -> list[Step]:
    """The package's restoration: written from its isolation (see ``restoration``), the
    rule's checks placed by their stage; without an isolation, what the steps
    disconnected is reconnected, then the rule's steps in their order."""
    reconnects = [(s.number, s.reconnect) for s in steps if s.reconnect]
    if points is None:
        return [*(Step(number=0, text=text, kind="reconnect", undoes=number,
                       check_only=True) for number, text in reversed(reconnects)),
                *(check.step for check in checks)]
    topology = inputs.topology
    label = topology.elements[item_id].label
    by_stage: dict[str, list[Step]] = {}
    for check in checks:
        by_stage.setdefault(check.stage, []).append(check.step)
    normal = normal_devices(topology, [item_id])
    return restoration_steps(Restoring(
        item_label=label, points=points, normal_devices=normal,
        tripped=tuple(sorted(inputs.tripped & normal)), reconnects=reconnects,
        vital_loads=vital,
        gate=gate_text("every acceptance criterion of this package is met",
                       f"tell the supervisor, and the bridge or control room, that "
                       f"{label} stays out of service"),
        rule_steps=by_stage, return_text=return_to_service(label, vital)))


def _acceptance(rule: CompiledRule, context: Mapping[str, Any], steps: Sequence[Step],
                restoration: Sequence[Step],
                final_tests: Sequence[FinalTest] = ()) -> tuple[str, ...]:
    """The rule's criteria, then every judged reading against its limit and source."""
    lines = [evaluate_text(rule, text, context) for text in rule.acceptance]
    if any(r.limit is not None and r.acceptance for test in final_tests
           for step in (*test.steps, *test.restoration) for r in step.readings):
        lines.append(FINAL_TESTS_ACCEPTANCE)
    for step in (*steps, *restoration):
        judged = [r for r in step.readings if r.limit is not None and r.acceptance]
        # one line for a step's readings under the same limit from the same source (the
        # three phases of one board): every id, what and limit as on separate lines
        groups: dict[tuple[str, str], list[Reading]] = {}
        for reading in judged:
            assert reading.limit is not None
            key = (reading.limit.describe(reading.unit), reading.limit.basis)
            groups.setdefault(key, []).append(reading)
        for (limit, basis), same in groups.items():
            each = "each " if len(same) > 1 else ""
            lines.append(f"{_readings_named(same)}: {each}{limit} ({basis})")
    return tuple(lines)


def _readings_named(readings: Sequence[Reading]) -> str:
    """'X3.R1 phase A to earth at MSB' for one reading; for several whose wording ends
    alike, the end said once: 'X3.R1 phase A, X3.R2 phase B and X3.R3 phase C to earth
    at MSB'. The shared end starts at a word and never inside brackets; otherwise each
    reading is named in full."""
    named = [(r.id, r.what.split(" ")) for r in readings]
    if len(named) == 1:
        return f"{named[0][0]} {' '.join(named[0][1])}"
    shortest = min(len(words) for _, words in named)
    common = 0  # words every wording ends with, leaving each at least one of its own
    while common < shortest - 1 and len({tuple(w[len(w) - common - 1:]) for _, w in named}) == 1:
        common += 1
    for shared in range(common, -1, -1):
        heads = [" ".join(words[:len(words) - shared]) for _, words in named]
        tail = " ".join(named[0][1][len(named[0][1]) - shared:])
        if all(_balanced(text) for text in (*heads, tail)):
            break
    comma = shared > 0 and all(head.endswith(",") for head in heads)
    heads = [f"{rid} {head.removesuffix(',') if comma else head}"
             for (rid, _), head in zip(named, heads, strict=True)]
    listed = ", ".join(heads[:-1]) + " and " + heads[-1]
    if not shared:
        return listed
    return f"{listed}{',' if comma else ''} {tail}"


def _balanced(text: str) -> bool:
    depth = 0
    for char in text:
        depth += {"(": 1, ")": -1}.get(char, 0)
        if depth < 0:
            return False
    return depth == 0
