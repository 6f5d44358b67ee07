"""The search for a ground as part of a package: the search's steps, numbered on from
the package's own, and the final tests of every circuit it can end at, each a complete
isolation of its own. ``search`` decides, ``search_wording`` words. Pure."""

from __future__ import annotations

from collections import Counter
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any, NamedTuple

from workpack.model.package import FinalTest, Limit, Reading, SearchDecision, SearchGoto, Step
from workpack.model.plant import LoadKind, Transformer
from workpack.plan.cautions import (
    CautionWriter,
    DraftStep,
    isolation_cautions,
    merge_cautions,
    package_facts,
)
from workpack.plan.context import with_item
from workpack.plan.inputs import DayInputs
from workpack.plan.jobs import Job
from workpack.plan.lockout import isolation_gaps, isolation_points, normal_devices, proving_dead
from workpack.plan.lockout import vital_loads as vital_loads_of
from workpack.restoration import (
    IN_SERVICE,
    Restoring,
    number_steps,
    restoration_steps,
    return_to_service,
    take_out_of_service,
)
from workpack.search import (
    FaultSearch,
    FinalTests,
    SearchStep,
    SectionTest,
    final_test_isolation,
    plan_fault_search,
)
from workpack.search_core import Branch
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
from workpack.topology import Topology


@dataclass(frozen=True)
class SearchSection:
    """What a search adds to its package."""

    steps: tuple[Step, ...]  # numbered on from the package's work steps
    final_tests: tuple[FinalTest, ...]
    switches: tuple[str, ...]  # devices the search may open and reclose
    board: str  # where the search starts
    board_order: tuple[tuple[int, tuple[str, ...]], ...]  # the board's steps: number, opens


def search_section(inputs: DayInputs, job: Job, cautions: CautionWriter,
                   first: int) -> SearchSection:
    """The search of the job's system as package steps numbered from ``first``, with
    the final tests of each circuit it can end at."""
    phasor = job.system.state.phasor
    search = plan_fault_search(inputs.topology, job.item, inputs.weights, inputs.standards,
                               inputs.day, past_grounds=inputs.past_grounds,
                               as_found_v=phasor.readings_v if phasor else None,
                               exclude=inputs.tripped)
    numbering = PackageNumbering(search, first)
    on_board = Counter(s.level for s in search.steps)  # steps per board, counted once
    steps: list[Step] = []
    for step in search.steps:
        words = step_words(search, step, numbering)
        lines = [board_heading(step.level, on_board[step.level]),
                 *(text for text in (words.transfer, words.permission) if text),
                 words.open, words.if_clears, words.if_stays]
        steps.append(Step(number=first + len(steps), text="\n".join(lines), check_only=True,
                          optional=True, kind="search",
                          decision=_decision(search, step, numbering)))
    finals = tuple(_final_test(inputs, cautions, job.context, final,
                               numbering.final_ids[final.feeder])
                   for final in search.final_tests)
    switches = tuple(sorted({d for s in search.steps for d in s.open_devices}))
    board_order = tuple((first + index, step.open_devices)
                        for index, step in enumerate(search.steps) if step.level == search.board)
    return SearchSection(tuple(steps), finals, switches, search.board, board_order)


def _goto(search: FaultSearch, level: str, branch: Branch, numbering: PackageNumbering,
          text: str) -> SearchGoto:
    """Where one outcome of a step leads, as package step numbers and final-test ids."""
    if branch.kind == "step":
        return SearchGoto(kind="step", step=numbering.number[(level, branch.step)], text=text)
    if branch.kind == "found" and branch.candidate_id in numbering.starts:
        return SearchGoto(kind="step", step=numbering.starts[branch.candidate_id],
                          below=branch.candidate_id, text=text)
    if branch.kind == "found":
        return SearchGoto(kind="final", final=numbering.final_ids[branch.candidate_id],
                          below=branch.candidate_id, text=text)
    return SearchGoto(kind="not_found", text=text)


def _decision(search: FaultSearch, step: SearchStep,
              numbering: PackageNumbering) -> SearchDecision:
    words = step_words(search, step, numbering)
    return SearchDecision(
        board=step.level,
        opens=tuple(f"{d} ({w})" if w else d
                    for d, w in zip(step.open_devices, step.where, strict=True)),
        devices=step.open_devices,
        first=tuple(text for text in (words.transfer, words.permission) if text),
        cleared=words.cleared, unchanged=words.unchanged,
        on_clear=_goto(search, step.level, step.on_clear, numbering, words.on_clear),
        on_stay=_goto(search, step.level, step.on_stay, numbering, words.on_stay))


class _OnElement(NamedTuple):
    """A final test's step and the element it is made on (what its cautions see as the
    item)."""

    draft: DraftStep
    element: str


def _testable(topology: Topology, final: FinalTests) -> list[SectionTest]:
    """Sections an insulation test may be applied to: not electronics."""
    return [s for s in final.sections
            if getattr(topology.elements[s.element], "kind", None) is not LoadKind.electronics]


def _section_reading(section: SectionTest) -> Reading:
    return Reading(
        id="", what=section_reading(section),
        unit="MΩ" if section.minimum_ohm >= 1e6 else "kΩ",
        limit=Limit(low=section.minimum_ohm, basis=section.basis,
                    temperature_corrected_to_c=section.reference_c,
                    code_set=section.code_set if section.reference_c is not None else None),
        needs_temperature=section.reference_c is not None,
        element=None if section.circuit else section.element,
        test_voltage_v=section.test_voltage_v[1])


def _final_test(inputs: DayInputs, cautions: CautionWriter, context: Mapping[str, Any],
                final: FinalTests, final_id: str) -> FinalTest:
    """One circuit's final tests as a complete isolation of their own."""
    topology = inputs.topology
    plan = final_test_isolation(topology, final, inputs.isolations)
    points = isolation_points(plan)
    proving = proving_dead(topology, plan)
    circuit = circuit_below(final.feeder)
    vital = vital_loads_of(topology, points, [s.element for s in final.sections])
    testable = _testable(topology, final)
    skipped = sorted({s.element for s in final.sections if s not in testable})
    drafts: list[_OnElement] = []
    if skipped:
        disconnect, reconnect = disconnect_electronics(skipped)
        drafts.append(_OnElement(DraftStep(Step(number=0, check_only=True, text=disconnect,
                                                reconnect=reconnect)), final.feeder))
    drafts += [_OnElement(DraftStep(Step(number=0, text=section_test(section),
                                         readings=(_section_reading(section),)),
                                    ("disconnect-electronics", "insulation-test-board",
                                     "stored-charge")), section.element)
               for section in testable]
    transformer = any(isinstance(topology.elements[s.element], Transformer)
                      for s in final.sections if not s.circuit)
    facts = package_facts(points, proving, [d.draft.step for d in drafts], transformer, False)
    built = [Step(number=0, text=take_out_of_service(circuit, vital),
                  kind="take_out_of_service", check_only=True, before_isolation=True)]
    built += [cautions.on_step(d.draft, with_item(context, topology, topology.elements[d.element]),
                               facts) for d in drafts]
    steps = number_steps(built, f"{final_id}.S")
    check = Step(number=0, check_only=True, kind="check", text=indication_back(final.feeder))
    restoration = number_steps(restoration_steps(Restoring(
        item_label=circuit, points=points,
        normal_devices=normal_devices(topology, {s.element for s in final.sections}),
        reconnects=[(s.number, s.reconnect) for s in steps if s.reconnect],
        vital_loads=vital, gate=ground_found_gate(final.feeder),
        rule_steps={IN_SERVICE: [check]},
        return_text=return_to_service(circuit, vital))), f"{final_id}.X")
    found = [*cautions.automatic(context, facts, only_needing=True),
             *isolation_cautions(plan), *(c for step in steps for c in step.cautions)]
    return FinalTest(
        id=final_id, feeder=final.feeder, title=final_tests_title(final_id, final.feeder),
        condition=final_tests_condition(final.feeder),
        isolation=points, isolation_gaps=isolation_gaps(plan),
        stored_energy=plan.stored_energy, cautions=merge_cautions((), found),
        proving_dead=proving, steps=steps, restoration=restoration,
        elements=tuple(dict.fromkeys(s.element for s in final.sections)),
        vital_loads=tuple(vital), disconnect=tuple(skipped))
