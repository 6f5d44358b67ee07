"""Tomorrow's jobs: diagnoses and due routine tests, through the rules, into work packages.

1. Each diagnosis, and each routine test that falls due on the plan date, is
   offered to the rules that apply to its kind; a rule whose condition holds
   gives a job on an item. Jobs of one rule on the same item (or system, as
   the rule says) are one package.
2. Each package is filled from the plant and the calculations: isolation plan
   and proving dead, steps with computed readings and limits, cautions (named
   by the rule, automatic ones from the library, the isolation's hazards, the
   ground's hazards), approach boundaries, the phasor diagram of a ground
   finding and a one-line sketch.
3. The day: packages ranked (second-ground risk first), fitted into the crew
   hours, conflicts named.

Pure: rules, tables and weights arrive loaded; nothing here reads or writes.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from workpack.calculations import CALCULATIONS, CalcContext, CalcError
from workpack.diagnose import DayDiagnosis, Diagnosis, diagnose_day, downstream_loads
from workpack.electrical import (
    GroundHazard,
    HazardNote,
    TrendStatus,
    VoltageToEarth,
    approach_boundary,
    line_to_neutral,
    worst_voltage_to_earth,
)
from workpack.electrical.standards import CodeSet
from workpack.history import History
from workpack.isolation import HazardKind, IsolationPlan, plan_isolation
from workpack.model.findings import Findings, Severity
from workpack.model.package import (
    ApproachBoundaries,
    Caution,
    FinalTest,
    IsolationPoint,
    Limit,
    Origin,
    Phasor,
    ProvingDead,
    Reading,
    SignalWord,
    Sketch,
    SketchNode,
    Step,
    StepKind,
    WorkPackage,
)
from workpack.model.plant import (
    Bus,
    Cable,
    Device,
    Element,
    Load,
    LoadKind,
    Plant,
    Routine,
    RoutineTest,
    Source,
    Transformer,
    Vitality,
)
from workpack.model.weights import SearchWeights
from workpack.restoration import (
    IN_SERVICE,
    Restoring,
    gate_text,
    number_steps,
    restoration_steps,
    return_to_service,
    take_out_of_service,
)
from workpack.rules import Compiled, CompiledRule, CompiledStep, RuleError, RuleSet
from workpack.search import (
    FinalTests,
    SectionTest,
    final_test_isolation,
    plan_fault_search,
)
from workpack.search_wording import (
    PackageNumbering,
    board_heading,
    circuit_below,
    disconnect_electronics,
    final_tests_condition,
    final_tests_title,
    ground_found_gate,
    indication_back,
    section_reading,
    section_test,
    step_words,
)
from workpack.topology import Topology, element_of

# --- the context rules see -------------------------------------------------------------------

ELEMENT_KINDS: dict[type[Element], str] = {
    Source: "source", Bus: "bus", Device: "device", Transformer: "transformer",
    Cable: "cable", Load: "load",
}
_ITEM_FIELDS = sorted({name for model in ELEMENT_KINDS for name in model.model_fields}
                      | {"element", "label", "from", "feeds", "loads_below"} - {"from_"})


def item_context(topology: Topology, element: Element) -> dict[str, Any]:
    """The item as rules see it: every element field (None where it has none), what it
    feeds directly and the loads below it in the normal state."""
    data: dict[str, Any] = dict.fromkeys(_ITEM_FIELDS)
    dumped = element.model_dump(mode="json", by_alias=True)
    data.update(dumped)
    data["element"] = ELEMENT_KINDS[type(element)]
    data["label"] = element.label
    data["feeds"] = list(topology.normal_children.get(element.id, ()))
    data["loads_below"] = [load.id for load in downstream_loads(topology, element.id)]
    return data


def _finding_fields() -> list[str]:
    from typing import get_args

    from workpack.model.findings import Finding

    union = get_args(get_args(Finding)[0])
    return sorted({name for model in union for name in model.model_fields})


SYSTEM_FIELDS = ("id", "voltage", "earthing", "insulated", "detectors", "monitor", "board",
                 "grounded", "ground_phases", "second_ground", "highest_phase_to_earth_v",
                 "transformer_fed")
DIAGNOSIS_FIELDS = ("severity", "summary", "ground_present", "grounded_phase", "certain",
                    "fault_resistance_ohm", "notes", "next_steps")
ROUTINE_FIELDS = ("test", "every", "last_done", "due_on", "days_overdue")


def context_schema(finding: bool, routine: bool) -> dict[str, Any]:
    """What a rule's expressions may name, for the lint."""
    schema: dict[str, Any] = {
        "plant": dict.fromkeys(("name", "kind", "frequency")),
        "item": dict.fromkeys(_ITEM_FIELDS),
        "system": dict.fromkeys(SYSTEM_FIELDS),
        "true": None, "false": None, "none": None,
        "True": None, "False": None, "None": None,
    }
    if finding:
        schema["finding"] = dict.fromkeys([*_finding_fields(), "kind"])
        schema["diagnosis"] = dict.fromkeys(DIAGNOSIS_FIELDS)
    if routine:
        schema["routine"] = dict.fromkeys(ROUTINE_FIELDS)
    return schema


@dataclass(frozen=True)
class SystemState:
    """What the day's diagnoses say about one galvanic system."""

    ground_phases: tuple[str, ...] = ()
    grounded: bool = False
    highest_phase_to_earth_v: float | None = None
    cautions: tuple[HazardNote, ...] = ()
    phasor: Phasor | None = None
    findings: tuple[str, ...] = ()


def system_states(topology: Topology, day: DayDiagnosis) -> dict[str, SystemState]:
    states: dict[str, SystemState] = {}
    for diagnosis in day.diagnoses:
        if diagnosis.ground is None or diagnosis.island is None:
            continue
        state = states.get(diagnosis.island, SystemState())
        phases = set(state.ground_phases)
        if diagnosis.ground.phase and diagnosis.ground.certain:
            phases.add(diagnosis.ground.phase)
        highest = state.highest_phase_to_earth_v
        if diagnosis.hazards is not None:
            highest = max(highest or 0.0, diagnosis.hazards.highest_phase_to_earth_v)
        phasor = state.phasor or _phasor(topology, diagnosis)
        states[diagnosis.island] = SystemState(
            ground_phases=tuple(sorted(phases)), grounded=True,
            highest_phase_to_earth_v=highest,
            cautions=tuple(dict.fromkeys((*state.cautions, *diagnosis.cautions))),
            phasor=phasor, findings=(*state.findings, diagnosis.finding))
    return states


def _phasor(topology: Topology, diagnosis: Diagnosis) -> Phasor | None:
    detail = diagnosis.detail
    readings = getattr(detail, "readings_v", None)
    if not readings or diagnosis.system_voltage_v is None:
        return None
    point = getattr(detail, "earth_point_v", None)
    return Phasor(line_voltage_v=diagnosis.system_voltage_v,
                  sequence=topology.plant.plant.sequence, readings_v=dict(readings),
                  earth_point_v=(point.real, point.imag) if point is not None else None,
                  grounded_phase=diagnosis.ground.phase if diagnosis.ground else None)


def system_context(topology: Topology, element_id: str,
                   states: Mapping[str, SystemState]) -> dict[str, Any]:
    island = topology.island_of(topology.node_out(element_id))
    state = states.get(island.id, SystemState())
    monitors = [d.id for d in island.detectors if d.alarm is not None]
    voltage = island.voltage
    return {
        "id": island.id,
        "voltage": int(voltage) if voltage is not None and voltage.is_integer() else voltage,
        "earthing": island.earthing.value if island.earthing else None,
        "insulated": island.earthing is not None and island.earthing.value == "insulated",
        "detectors": [d.id for d in island.detectors], "monitor": monitors[0] if monitors
        else None, "board": (island.buses or (island.id,))[0], "grounded": state.grounded,
        "ground_phases": list(state.ground_phases),
        "second_ground": len(state.ground_phases) >= 2,
        "highest_phase_to_earth_v": state.highest_phase_to_earth_v,
        "transformer_fed": island.transformer_fed,
    }


def diagnosis_context(diagnosis: Diagnosis) -> dict[str, Any]:
    ground = diagnosis.ground
    return {
        "severity": diagnosis.severity.value, "summary": diagnosis.summary,
        "ground_present": ground is not None,
        "grounded_phase": ground.phase if ground else None,
        "certain": bool(ground and ground.certain),
        "fault_resistance_ohm": ground.resistance_ohm if ground else None,
        "notes": list(diagnosis.notes), "next_steps": list(diagnosis.next_steps),
    }


def finding_context(findings: Findings, finding_id: str) -> dict[str, Any]:
    finding = next(f for f in findings.findings if f.id == finding_id)
    data: dict[str, Any] = dict.fromkeys(_finding_fields())
    data.update(finding.model_dump(mode="json"))
    return data


# --- the day ------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Conflict:
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


@dataclass(frozen=True)
class _Job:
    rule: CompiledRule
    item: str
    key: str
    context: dict[str, Any]
    findings: tuple[str, ...] = ()
    routine: str | None = None
    diagnoses: tuple[Diagnosis, ...] = field(default=())


# Trend verdicts that bring an insulation test forward (see electrical.insulation_trend).
EARLY_TREND = (TrendStatus.FALLING, TrendStatus.REACHES_MINIMUM_SOON,
               TrendStatus.BELOW_MINIMUM)


def due_routines(plant: Plant, day: dt.date, history: History | None = None,
                 standards: Mapping[str, CodeSet] | None = None,
                 ) -> list[tuple[Element, Routine, dt.date]]:
    """Routine tests whose interval has run out by ``day`` (or that were never done), and
    insulation tests brought forward because the item's recorded trend falls fast."""
    due = []
    for element in plant.elements():
        for routine in element.routine:
            due_on = (routine.last_done + dt.timedelta(days=routine.interval_days)
                      if routine.last_done else day)
            if due_on > day and routine.test is RoutineTest.insulation_resistance and (
                history is not None and standards is not None
            ):
                trend = history.trend(element.id, standards)
                if trend is not None and trend.status in EARLY_TREND:
                    due_on = day
            if due_on <= day:
                due.append((element, routine, due_on))
    return due


def plan_day(plant: Plant, topology: Topology, findings: Findings, day: dt.date,
             ruleset: RuleSet, standards: Mapping[str, CodeSet], weights: SearchWeights,
             crew_hours: float, history: History | None = None,
             progress: Callable[[int, int], None] | None = None) -> DayPlan:
    """Every package for ``day``, ranked and fitted into ``crew_hours`` (person-hours).

    ``history`` (from the records) raises the likelihood of circuits that grounded before
    and brings forward insulation tests of items whose readings fall fast."""
    history = history or History()
    diagnosis = diagnose_day(plant, topology, findings, standards)
    states = system_states(topology, diagnosis)
    due = due_routines(plant, day, history, standards)
    jobs, deferrals = _match(plant, topology, findings, diagnosis, states, day, ruleset, due)
    builder = _PackageBuilder(plant, topology, ruleset, standards, weights, day, states,
                              history.past_grounds, diagnosis)
    drafts = []
    for done, job in enumerate(jobs, start=1):
        drafts.append(builder.build(job))
        if progress:
            progress(done, len(jobs))
    ranked = sorted(drafts, key=_rank)
    packages = tuple(p.model_copy(update={"id": f"WP-{day:%Y%m%d}-{n:02d}"})
                     for n, p in enumerate(ranked, start=1))
    scheduled, deferred, used = [], [], 0.0
    for package in packages:
        need = package.duration_h * package.crew
        if used + need <= crew_hours + 1e-9:
            scheduled.append(package.id)
            used += need
        else:
            deferred.append(package.id)
    chosen = [p for p in packages if p.id in scheduled]
    warnings = [Conflict((p.id,), f"{p.id} (priority {p.priority}: {p.title}) does not fit in "
                                  f"{crew_hours:g} person-hours and is deferred: find the crew")
                for p in packages if p.id in deferred and p.priority <= 2]
    handled = {f for job in jobs for f in job.findings}
    warnings += [Conflict((), f"finding {d.finding} ({d.kind.replace('_', ' ')} at {d.where}, "
                              f"{d.severity.value}) matched no rule: no package was made for "
                              f"it — {d.summary}")
                 for d in diagnosis.diagnoses
                 if d.finding not in handled and d.severity in (Severity.urgent, Severity.high)]
    return DayPlan(plant=plant.plant.name, date=day, crew_hours=crew_hours, packages=packages,
                   scheduled=tuple(scheduled), deferred=tuple(deferred),
                   conflicts=tuple(warnings + deferrals + find_conflicts(topology, chosen)),
                   diagnosis=diagnosis)


def _rank(package: WorkPackage) -> tuple[Any, ...]:
    """Priority; then jobs that remove a ground (the second-ground risk); findings before
    routine; shorter first; then by item and rule, so the order never depends on input order."""
    return (package.priority, not package.clears_ground, package.origin.routine is not None,
            package.duration_h, package.item, package.origin.rule)


def _match(plant: Plant, topology: Topology, findings: Findings, diagnosis: DayDiagnosis,
           states: Mapping[str, SystemState], day: dt.date, ruleset: RuleSet,
           due: Sequence[tuple[Element, Routine, dt.date]],
           ) -> tuple[list[_Job], list[Conflict]]:
    """The jobs the rules give, and the routine jobs a rule defers today (with why)."""
    merged: dict[tuple[str, str], _Job] = {}
    deferrals: dict[tuple[str, str], Conflict] = {}
    base = {"plant": {"name": plant.plant.name, "kind": plant.plant.kind.value,
                      "frequency": plant.plant.frequency}}
    offers: list[tuple[dict[str, Any], str, tuple[str, ...], str | None,
                       tuple[Diagnosis, ...]]] = []
    for found in diagnosis.diagnoses:
        where = found.where
        element_id = where if where in topology.elements else _detector_bus(topology, where)
        context = {**base, "finding": finding_context(findings, found.finding),
                   "diagnosis": diagnosis_context(found),
                   "item": item_context(topology, topology.elements[element_id]),
                   "system": system_context(topology, element_id, states)}
        offers.append((context, found.kind, (found.finding,), None, (found,)))
    for element, routine, due_on in due:
        context = {**base, "routine": {
            "test": routine.test.value, "every": routine.every,
            "last_done": routine.last_done.isoformat() if routine.last_done else None,
            "due_on": due_on.isoformat(), "days_overdue": (day - due_on).days},
            "item": item_context(topology, element),
            "system": system_context(topology, element.id, states)}
        offers.append((context, f"routine:{routine.test.value}", (), routine.test.value, ()))
    for context, kind, finding_ids, routine_test, diagnoses in offers:
        for rule in ruleset.rules:
            wanted = (routine_test in rule.routine) if routine_test else (kind in rule.findings)
            if not wanted or (rule.items and context["item"]["element"] not in rule.items):
                continue
            if not _evaluate(rule, rule.when, context):
                continue
            item = str(_evaluate(rule, rule.item, context)).strip()
            if rule.defer_when is not None and _evaluate(rule, rule.defer_when, context):
                reason = str(_evaluate(rule, rule.defer_reason, context)).strip() \
                    if rule.defer_reason is not None else ""
                deferrals[(rule.id, item)] = Conflict((), (
                    f"{rule.id} on {item} ({routine_test or kind}) is due but deferred: "
                    f"{reason}"))
                continue
            if item not in topology.elements:
                raise RuleError(f"{rule.place}: rule {rule.id}: item {item!r} is not an "
                                "element of the plant")
            context = {**context, "item": item_context(topology, topology.elements[item]),
                       "system": system_context(topology, item, states)}
            key = {"item": item, "system": context["system"]["id"],
                   "finding": ",".join(finding_ids) or item}[rule.one_per]
            existing = merged.get((rule.id, key))
            if existing is None:
                merged[(rule.id, key)] = _Job(rule, item, key, context, finding_ids,
                                              routine_test, diagnoses)
            else:
                merged[(rule.id, key)] = _Job(
                    rule, existing.item, key, existing.context,
                    existing.findings + finding_ids, existing.routine or routine_test,
                    existing.diagnoses + diagnoses)
    return [merged[k] for k in sorted(merged)], [deferrals[k] for k in sorted(deferrals)]


def _detector_bus(topology: Topology, detector_id: str) -> str:
    for element in topology.plant.buses:
        if element.detector and element.detector.id == detector_id:
            return element.id
    raise KeyError(detector_id)


def _evaluate(rule: CompiledRule, compiled: Compiled, context: Mapping[str, Any]) -> Any:
    try:
        return compiled(context)
    except RuleError as error:
        raise RuleError(f"{rule.place}: rule {rule.id}: {error}") from None


class _PackageBuilder:
    def __init__(self, plant: Plant, topology: Topology, ruleset: RuleSet,
                 standards: Mapping[str, CodeSet], weights: SearchWeights, day: dt.date,
                 states: Mapping[str, SystemState], past_grounds: Mapping[str, int],
                 diagnosis: DayDiagnosis):
        self.plant = plant
        self.topology = topology
        self.ruleset = ruleset
        self.standards = standards
        self.weights = weights
        self.day = day
        self.states = states
        self.past_grounds = past_grounds
        self.diagnosis = diagnosis
        # A tripped breaker is open: the search neither opens nor recloses it.
        self.tripped = frozenset(d.where for d in diagnosis.diagnoses
                                 if d.kind == "breaker_tripped")
        self._isolations: dict[str, IsolationPlan] = {}

    def build(self, job: _Job) -> WorkPackage:
        rule, context = job.rule, job.context
        item = self.topology.elements[job.item]
        system = context["system"]
        priority = int(_evaluate(rule, rule.priority, context))
        if system["second_ground"]:
            priority = 1
        isolation = self._isolation_of(self.topology, job.item) if rule.isolate else None
        points = _isolation_points(isolation)
        proving = _proving_dead(self.plant, isolation)
        vital = self._vital_loads(points, [job.item]) if isolation is not None else ()
        work = [d for d in (self._step(rule, step, context) for step in rule.steps) if d]
        after = [d for d in (self._step(rule, step, context, "check")
                             for step in rule.restoration) if d]
        facts = _facts(points, proving, [d.step for d in (*work, *after)],
                       isolation is not None and isinstance(item, Transformer),
                       rule.search_plan)
        work_steps = [self._with_cautions(rule, d, context, facts) for d in work]
        if isolation is not None:
            work_steps.insert(0, Step(number=0, text=take_out_of_service(item.label, vital),
                                      kind="take_out_of_service", check_only=True,
                                      before_isolation=True))
        work_steps.sort(key=lambda step: not step.before_isolation)  # stable: rule order
        steps = number_steps(work_steps, "S")
        final_tests: tuple[FinalTest, ...] = ()
        switched: tuple[str, ...] = ()
        if rule.search_plan:
            searched, final_tests, switched = self._with_search(len(steps) + 1, job, rule)
            steps += searched
        checks = [(d.stage, self._with_cautions(rule, d, context, facts)) for d in after]
        restoration = number_steps(self._restoration(
            job.item, points if isolation is not None else None, vital, steps, checks), "X")
        cautions = self._cautions(rule, context, isolation, steps + restoration, facts)
        title = str(_evaluate(rule, rule.title, context)).strip()
        package_id = f"{rule.id}:{job.key}"
        supply = (str(_evaluate(rule, rule.instrument_supply, context)).strip()
                  if rule.instrument_supply is not None else None)
        state = self.states.get(system["id"], SystemState())
        others = [system_context(self.topology, node, self.states)
                  for node in self._touching(job.item) if node != system["id"]]
        # One worst-case voltage to earth per system (electrical.worst_voltage_to_earth):
        # the hazard facts, the approach table entry and the glove class all use it.
        worsts = {s["id"]: _worst_to_earth(s, self.states.get(s["id"], SystemState()))
                  for s in [system, *others]}
        hazard_facts = self._hazard_facts(system, state, worsts[system["id"]]) + tuple(
            fact for other in others
            for fact in self._hazard_facts(other, self.states.get(other["id"], SystemState()),
                                           worsts[other["id"]]))
        for other in others:
            cautions = _merge_cautions(cautions, self._cautions(
                rule, {**context, "system": other}, None, (), facts))
        worst = max((w for w in worsts.values() if w is not None),
                    key=lambda w: w.exposure_v, default=None)
        listed = {c.text for c in cautions}
        final_tests = tuple(f.model_copy(update={"cautions": tuple(
            c for c in f.cautions if c.text not in listed)}) for f in final_tests)
        return WorkPackage(
            id=package_id, plant=self.plant.plant.name, date=self.day, title=title,
            job_kind=rule.job_kind, clears_ground=rule.clears_ground,
            priority=max(1, min(5, priority)),
            priority_reason=self._priority_reason(job, system),
            duration_h=rule.hours, crew=rule.crew, permits=rule.permits, item=job.item,
            item_label=item.label, system=system["id"],
            origin=Origin(rule=rule.id, findings=job.findings, routine=job.routine),
            hazard_facts=hazard_facts,
            cautions=cautions, approach=self._approach(job.item, worst),
            ppe=self._ppe(worst),
            isolation=points,
            isolation_gaps=_gaps(isolation),
            stored_energy=isolation.stored_energy if isolation else (),
            proving_dead=proving,
            steps=steps, final_tests=final_tests,
            acceptance=self._acceptance(rule, context, steps, restoration, final_tests),
            restoration=restoration,
            phasor=state.phasor if job.findings and state.grounded else None,
            sketch=_sketch(self.topology, job.item, isolation),
            instrument_supply=supply or None, switches=switched,
        )

    def _priority_reason(self, job: _Job, system: Mapping[str, Any]) -> str:
        if system["second_ground"]:
            return (f"grounds on phases {' and '.join(system['ground_phases'])} of the "
                    f"{system['id']} system: second-ground risk")
        if job.diagnoses:
            worst = min(job.diagnoses, key=lambda d: _SEVERITY[d.severity])
            return f"{worst.severity.value}: {worst.summary}"
        if job.routine:
            return f"routine {job.routine.replace('_', ' ')} due"
        return "rule"

    def _restoration(self, item_id: str, points: Sequence[IsolationPoint] | None,
                     vital: Sequence[str], steps: Sequence[Step],
                     checks: Sequence[tuple[str, Step]]) -> list[Step]:
        """The package's restoration: written from its isolation (see ``restoration``),
        the rule's checks placed by their stage; without an isolation, what the steps
        disconnected is reconnected, then the rule's steps in their order."""
        reconnects = [(s.number, s.reconnect) for s in steps if s.reconnect]
        if points is None:
            return [*(Step(number=0, text=text, kind="reconnect", undoes=number,
                           check_only=True) for number, text in reversed(reconnects)),
                    *(step for _, step in checks)]
        label = self.topology.elements[item_id].label
        by_stage: dict[str, list[Step]] = {}
        for stage, step in checks:
            by_stage.setdefault(stage, []).append(step)
        normal = self._normal_devices([item_id])
        return restoration_steps(Restoring(
            item_label=label, points=points, normal_devices=normal,
            tripped=tuple(sorted(self.tripped & normal)), reconnects=reconnects,
            vital_loads=vital,
            gate=gate_text("every acceptance criterion of this package is met",
                           f"tell the supervisor, and the bridge or control room, that "
                           f"{label} stays out of service"),
            rule_steps=by_stage, return_text=return_to_service(label, vital)))

    def _isolation_of(self, topology: Topology, item_id: str) -> IsolationPlan:
        """``plan_isolation``, once per item for the day: final tests of several searches
        (and packages on the same item) share it."""
        if item_id not in self._isolations:
            self._isolations[item_id] = plan_isolation(topology, item_id)
        return self._isolations[item_id]

    def _vital_loads(self, points: Iterable[IsolationPoint],
                     places: Iterable[str]) -> tuple[str, ...]:
        """Vital loads an isolation takes out: below any device it opens (a heater's
        circuit test can lock a fire pump's main supply), and the places of work."""
        loads = [load for point in points if not point.already_open
                 for load in downstream_loads(self.topology, point.device)]
        loads += [e for e in (self.topology.elements[p] for p in places) if isinstance(e, Load)]
        return tuple(sorted({load.id for load in loads if load.vitality is Vitality.vital}))

    def _normal_devices(self, places: Iterable[str]) -> frozenset[str]:
        """Devices on the normal supply paths of the places of work."""
        return frozenset(element_of(node) for place in places
                         for path in self.topology.normal_supply_paths(place)
                         for node in path)

    def _step(self, rule: CompiledRule, step: CompiledStep, context: Mapping[str, Any],
              kind: StepKind = "work") -> _Draft | None:
        """One rule step with its computed readings (ids are set when numbered), the ids
        of the cautions it names and its restoration stage; None when its condition is
        false."""
        if step.when is not None and not _evaluate(rule, step.when, context):
            return None
        readings: list[Reading] = []
        for calc, params, judge in step.readings:
            values = {name: str(_evaluate(rule, source, context)).strip()
                      for name, source in params.items()}
            calc_context = CalcContext(self.topology, self.standards,
                                       f"S0.{len(readings) + 1}")
            try:
                readings.extend(r if judge else r.model_copy(update={"acceptance": False})
                                for r in CALCULATIONS[calc](calc_context, **values))
            except CalcError as error:
                raise RuleError(f"{rule.place}: rule {rule.id}: {calc}: {error}") from None
        reconnect = (str(_evaluate(rule, step.reconnect, context)).strip()
                     if step.reconnect is not None else None)
        built = Step(number=0, text=str(_evaluate(rule, step.text, context)),
                     readings=tuple(readings), check_only=step.check_only and not readings,
                     kind=kind, before_isolation=step.before_isolation,
                     reconnect=reconnect or None,
                     search_outcome=step.search_outcome)  # type: ignore[arg-type]
        return _Draft(built, step.cautions, step.stage)

    def _with_cautions(self, rule: CompiledRule, draft: _Draft, context: Mapping[str, Any],
                       facts: frozenset[str]) -> Step:
        found = [c for c in (self._caution_if(rule, cid, context, facts)
                             for cid in draft.cautions) if c is not None]
        return draft.step.model_copy(update={"cautions": tuple(found)})

    def _with_search(self, first: int, job: _Job, rule: CompiledRule,
                     ) -> tuple[tuple[Step, ...], tuple[FinalTest, ...], tuple[str, ...]]:
        """The fault search as numbered package steps from ``first``, the final tests of
        each circuit it can end at, and the devices the search may open."""
        state = self.states.get(job.context["system"]["id"], SystemState())
        as_found = state.phasor.readings_v if state.phasor else None
        search = plan_fault_search(self.topology, job.item, self.weights, self.standards,
                                   self.day, past_grounds=self.past_grounds,
                                   as_found_v=as_found, exclude=self.tripped)
        numbering = PackageNumbering(search, first)
        levels = [s.level for s in search.steps]
        added: list[Step] = []
        for step in search.steps:
            words = step_words(search, step, numbering)
            lines = [board_heading(step.level, levels.count(step.level)),
                     *(text for text in (words.transfer, words.permission) if text),
                     words.open, words.if_clears, words.if_stays]
            added.append(Step(number=first + len(added), text="\n".join(lines),
                              check_only=True, optional=True, kind="search"))
        finals = tuple(self._final_test(rule, job.context, final,
                                        numbering.final_ids[final.feeder])
                       for final in search.final_tests)
        switched = tuple(sorted({d for s in search.steps for d in s.open_devices}))
        return tuple(added), finals, switched

    def _final_test(self, rule: CompiledRule, context: Mapping[str, Any], final: FinalTests,
                    final_id: str) -> FinalTest:
        """One circuit's final tests as a complete isolation of their own."""
        plan = final_test_isolation(self.topology, final, self._isolation_of)
        points = _isolation_points(plan)
        proving = _proving_dead(self.plant, plan)
        circuit = circuit_below(final.feeder)
        vital = self._vital_loads(points, [s.element for s in final.sections])
        testable = _testable(self.topology, final)
        skipped = sorted({s.element for s in final.sections if s not in testable})
        drafts: list[tuple[_Draft, str]] = []
        if skipped:
            disconnect, reconnect = disconnect_electronics(skipped)
            drafts.append((_Draft(Step(number=0, check_only=True, text=disconnect,
                                       reconnect=reconnect)), final.feeder))
        for section in testable:
            reading = Reading(
                id="", what=section_reading(section),
                unit="MΩ" if section.minimum_ohm >= 1e6 else "kΩ",
                limit=Limit(low=section.minimum_ohm, basis=section.basis,
                            temperature_corrected_to_c=section.reference_c,
                            code_set=section.code_set if section.reference_c is not None
                            else None),
                needs_temperature=section.reference_c is not None,
                element=None if section.circuit else section.element,
                test_voltage_v=section.test_voltage_v[1])
            drafts.append((_Draft(Step(number=0, text=section_test(section),
                                       readings=(reading,)),
                                  ("disconnect-electronics", "insulation-test-board",
                                   "stored-charge")), section.element))
        transformer = any(isinstance(self.topology.elements[s.element], Transformer)
                          for s in final.sections if not s.circuit)
        check = Step(number=0, check_only=True, kind="check",
                     text=indication_back(final.feeder))
        facts = _facts(points, proving, [d.step for d, _ in drafts], transformer, False)
        built = [Step(number=0, text=take_out_of_service(circuit, vital),
                      kind="take_out_of_service", check_only=True, before_isolation=True)]
        for draft, element in drafts:
            scope = {**context, "item": item_context(self.topology,
                                                     self.topology.elements[element])}
            built.append(self._with_cautions(rule, draft, scope, facts))
        steps = number_steps(built, f"{final_id}.S")
        restoring = restoration_steps(Restoring(
            item_label=circuit, points=points,
            normal_devices=self._normal_devices({s.element for s in final.sections}),
            reconnects=[(s.number, s.reconnect) for s in steps if s.reconnect],
            vital_loads=vital,
            gate=ground_found_gate(final.feeder),
            rule_steps={IN_SERVICE: [check]},
            return_text=return_to_service(circuit, vital)))
        restoration = number_steps(restoring, f"{final_id}.X")
        cautions: list[Caution] = []
        for entry in self.ruleset.cautions.values():
            if entry.automatic and entry.needs:
                found = self._caution_if(rule, entry.id, context, facts)
                if found is not None:
                    cautions.append(found)
        cautions += [Caution(signal_word=h.signal_word, text=h.text) for h in plan.hazards]
        cautions += [c for step in steps for c in step.cautions]
        return FinalTest(
            id=final_id, feeder=final.feeder, title=final_tests_title(final_id, final.feeder),
            condition=final_tests_condition(final.feeder),
            isolation=points, isolation_gaps=_gaps(plan), stored_energy=plan.stored_energy,
            cautions=_merge_cautions((), cautions), proving_dead=proving,
            steps=steps, restoration=restoration,
            elements=tuple(dict.fromkeys(s.element for s in final.sections)))

    def _caution_if(self, rule: CompiledRule, caution_id: str, context: Mapping[str, Any],
                    facts: frozenset[str]) -> Caution | None:
        """The library's caution, where its text is true: the package does what it needs
        and its condition holds; else None."""
        entry = self.ruleset.cautions[caution_id]
        if not set(entry.needs) <= facts or not _evaluate(rule, entry.when, context):
            return None
        return self._caution(rule, caution_id, context)

    def _caution(self, rule: CompiledRule, caution_id: str,
                 context: Mapping[str, Any]) -> Caution:
        entry = self.ruleset.cautions[caution_id]
        return Caution(signal_word=entry.signal_word,
                       text=str(_evaluate(rule, entry.text, context)).strip(), id=entry.id)

    def _cautions(self, rule: CompiledRule, context: Mapping[str, Any],
                  isolation: IsolationPlan | None, steps: Iterable[Step],
                  facts: frozenset[str]) -> tuple[Caution, ...]:
        found: list[Caution] = [c for c in (self._caution_if(rule, cid, context, facts)
                                            for cid in rule.cautions) if c is not None]
        for entry in self.ruleset.cautions.values():
            if entry.automatic and entry.id not in rule.cautions:
                caution = self._caution_if(rule, entry.id, context, facts)
                if caution is not None:
                    found.append(caution)
        state = self.states.get(context["system"]["id"], SystemState())
        found += [Caution(signal_word=note.signal_word, text=note.text)
                  for note in state.cautions
                  # the library's second-ground caution says it for every grounded system
                  if note.kind is not GroundHazard.second_ground]
        if isolation is not None:
            found += [Caution(signal_word=h.signal_word, text=h.text) for h in isolation.hazards]
        for step in steps:
            found.extend(step.cautions)
        return _merge_cautions((), found)

    def _hazard_facts(self, system: Mapping[str, Any], state: SystemState,
                      worst: VoltageToEarth | None) -> tuple[str, ...]:
        facts: list[str] = []
        voltage = system["voltage"]
        if worst is None or not voltage:
            return ()
        treat = f"treat every conductor as up to {worst.worst_v:.0f} V to earth"
        if state.ground_phases:
            healthy = [p for p in self.plant.plant.sequence if p not in state.ground_phases]
            normal = line_to_neutral(voltage)
            standing = (f"at up to {state.highest_phase_to_earth_v:.0f} V to earth as measured "
                        f"(normally {normal:.0f} V)" if state.highest_phase_to_earth_v
                        else f"above their normal {normal:.0f} V to earth (not measured)")
            facts.append(
                f"Phase {' and '.join(state.ground_phases)} of the {voltage:g} V "
                f"{system['id']} system {'is' if len(state.ground_phases) == 1 else 'are'} "
                f"grounded: phase{'s' if len(healthy) > 1 else ''} {' and '.join(healthy)} "
                f"stand{'' if len(healthy) > 1 else 's'} {standing}; "
                f"{worst.why(ground_present=True)}: {treat}.")
        elif state.grounded:
            facts.append(f"A ground is indicated on the {voltage:g} V {system['id']} system, "
                         f"phase not certain; {worst.why(ground_present=True)}: {treat}.")
        elif worst.insulated:
            facts.append(f"The {voltage:g} V {system['id']} system is insulated from earth: "
                         f"{worst.basis}: {treat}.")
        if system["second_ground"]:
            facts.append("Grounds on two phases of one system: a phase-to-phase fault through "
                         "earth is waiting to happen.")
        return tuple(facts)

    def _touching(self, item_id: str) -> list[str]:
        """Ids of the systems the item's own conductors belong to (both sides of a bank)."""
        nodes = self.topology.work_nodes(item_id)
        return sorted({self.topology.island_of(n).id for n in nodes})

    def _approach(self, item_id: str,
                  worst: VoltageToEarth | None) -> ApproachBoundaries | None:
        code_set = self.standards[self.plant.plant.code_set.approach_boundaries]
        voltages = [self.topology.voltage_at(n) for n in self.topology.work_nodes(item_id)]
        voltage = max((v for v in voltages if v), default=None)
        if voltage is None:
            return None
        entered = max(voltage, worst.exposure_v if worst is not None else 0.0)
        boundary = approach_boundary(code_set, voltage, entered)
        if boundary is None:
            return None

        def shown(metres: float | None, text: str) -> str:
            return text if metres is None else f"{metres:.1f} m ({text})"

        return ApproachBoundaries(
            entered_at_v=entered,
            limited_movable=shown(boundary.limited_movable_m, boundary.limited_movable_text),
            limited_fixed=shown(boundary.limited_fixed_m, boundary.limited_fixed_text),
            restricted=shown(boundary.restricted_m, boundary.restricted_text),
            source=str(boundary.citation))

    def _ppe(self, worst: VoltageToEarth | None) -> tuple[str, ...]:
        gloves = ("rubber insulating gloves with leather protectors, of a class rated for the "
                  "system's voltage (not in the plant file)")
        if worst is not None:
            gloves = (f"rubber insulating gloves with leather protectors, of a class rated for "
                      f"at least {worst.exposure_v:.0f} V AC (the worst case on this job; see "
                      "the hazard facts)")
        return (
            gloves + " (ASTM D120 classes: 00 to 500 V, 0 to 1 kV; from memory)",
            "safety glasses or face shield; arc-rated clothing as the employer's arc-flash "
            "assessment requires (not computed here)",
            "voltage tester rated for the system, with its own proving unit",
            "padlocks and tags, one lock per person",
        )

    def _acceptance(self, rule: CompiledRule, context: Mapping[str, Any],
                    steps: Sequence[Step], restoration: Sequence[Step],
                    final_tests: Sequence[FinalTest] = ()) -> tuple[str, ...]:
        lines = [str(_evaluate(rule, text, context)).strip() for text in rule.acceptance]
        final = [step for test in final_tests for step in (*test.steps, *test.restoration)]
        for step in (*steps, *final, *restoration):
            for reading in step.readings:
                if reading.limit is not None and reading.acceptance:
                    lines.append(f"{reading.id} {reading.what}: {_limit_text(reading)}")
        return tuple(lines)


@dataclass(frozen=True)
class _Draft:
    """A step before it is numbered: the cautions it names are attached once the
    package's facts are known, the stage places a restoration step."""

    step: Step
    cautions: tuple[str, ...] = ()
    stage: str = IN_SERVICE


def _facts(points: Sequence[IsolationPoint], proving: Sequence[ProvingDead],
           steps: Iterable[Step], isolates_transformer: bool,
           search: bool) -> frozenset[str]:
    """What a package (or one final test) does, as the caution library's ``needs`` name it."""
    facts = {"isolated" if points else "live"}
    if proving:
        facts.add("proves_dead")
    if any(r.test_voltage_v is not None for step in steps for r in step.readings):
        facts.add("insulation_test")
    if isolates_transformer and points:
        facts.add("isolates_transformer")
    if search:
        facts.add("search")
    return frozenset(facts)


def _gaps(plan: IsolationPlan | None) -> tuple[str, ...]:
    """Paths no lock can cut: printed as DANGER beside the isolation."""
    if plan is None:
        return ()
    return tuple(h.text for h in plan.hazards if h.kind is HazardKind.no_lock)


_WORD_ORDER = {SignalWord.danger: 0, SignalWord.warning: 1, SignalWord.caution: 2,
               SignalWord.notice: 3}


def _merge_cautions(first: Iterable[Caution], more: Iterable[Caution]) -> tuple[Caution, ...]:
    """One of each text, the gravest first (stable within a signal word)."""
    unique: dict[str, Caution] = {}
    for caution in (*first, *more):
        unique.setdefault(caution.text, caution)
    return tuple(sorted(unique.values(), key=lambda c: _WORD_ORDER[c.signal_word]))


_SEVERITY = {Severity.urgent: 0, Severity.high: 1, Severity.routine: 2, Severity.low: 3}


def _testable(topology: Topology, final: FinalTests) -> list[SectionTest]:
    """Sections an insulation test may be applied to: not electronics."""
    return [s for s in final.sections
            if getattr(topology.elements[s.element], "kind", None) is not LoadKind.electronics]


def _worst_to_earth(system: Mapping[str, Any], state: SystemState) -> VoltageToEarth | None:
    """The system's one worst-case voltage to earth (None when its voltage is unknown)."""
    if not system["voltage"]:
        return None
    return worst_voltage_to_earth(float(system["voltage"]), system["earthing"] != "solid",
                                  state.highest_phase_to_earth_v)


def _limit_text(reading: Reading) -> str:
    assert reading.limit is not None
    return f"{reading.limit.describe(reading.unit)} ({reading.limit.basis})"


def _isolation_points(plan: IsolationPlan | None) -> tuple[IsolationPoint, ...]:
    if plan is None:
        return ()
    return tuple(IsolationPoint(order=p.order, device=p.device, device_kind=p.device_kind,
                                location=p.location, cuts=p.reason, voltage_v=p.voltage,
                                already_open=p.already_open, blocks=p.blocks, how=p.how)
                 for p in plan.points)


def _proving_dead(plant: Plant, plan: IsolationPlan | None) -> tuple[ProvingDead, ...]:
    if plan is None:
        return ()
    a, b, c = plant.plant.sequence
    pairs = {
        2: ("1-2", "1-E", "2-E"),
        3: (f"{a}-{b}", f"{b}-{c}", f"{c}-{a}", f"{a}-E", f"{b}-E", f"{c}-E"),
        # with a neutral: phase-to-neutral and neutral-to-earth as well (common practice)
        4: (f"{a}-{b}", f"{b}-{c}", f"{c}-{a}", f"{a}-N", f"{b}-N", f"{c}-N",
            f"{a}-E", f"{b}-E", f"{c}-E", "N-E"),
    }
    return tuple(ProvingDead(where=v.where, voltage_v=v.voltage, pairs=pairs[v.wires])
                 for v in plan.verify)


def _sketch(topology: Topology, item_id: str, plan: IsolationPlan | None) -> Sketch | None:
    """Item, its normal supply, and every isolation point with the path to it."""
    nodes: dict[str, SketchNode] = {}
    edges: list[tuple[str, str]] = []
    locked = set(plan.devices) if plan else set()

    def add(element_id: str) -> None:
        if element_id in nodes:
            return
        element = topology.elements[element_id]
        kind = "item" if element_id == item_id else ELEMENT_KINDS[type(element)]
        label = element_id
        if isinstance(element, Bus):
            label = f"{element_id} {element.voltage:g} V"
        nodes[element_id] = SketchNode(id=element_id, label=label, kind=kind,
                                       isolate=element_id in locked)

    def chain(path: Sequence[str]) -> None:
        kept = [p for p in dict.fromkeys(element_of(n) for n in path)
                if p == item_id or p in locked
                or isinstance(topology.elements[p], Source | Bus | Transformer)]
        for element_id in kept:
            add(element_id)
        for upstream, downstream in zip(kept, kept[1:], strict=False):
            if (upstream, downstream) not in edges and upstream != downstream:
                edges.append((upstream, downstream))

    for path in topology.normal_supply_paths(item_id):  # all: the renderer fits them
        chain(path)
    if plan is not None:
        for point in plan.points:
            if point.blocks is not None:
                continue  # a start or transfer block is a control, not a place in the wiring
            upstream = topology.normal_supply_paths(point.device)[:1]
            chain([*(upstream[0] if upstream else (point.device,)),
                   *reversed(point.via)])
    add(item_id)
    if len(nodes) < 2:
        return None
    return Sketch(nodes=tuple(nodes.values()), edges=tuple(edges))


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
