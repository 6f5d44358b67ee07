"""Plain-text views for the terminal. Numbers arrive computed; this only lays them out."""

from __future__ import annotations

from typing import TYPE_CHECKING

from workpack.numbers import format_quantity, format_volts

# Apart so the quick diagnose loads no planner; still importable from here.
from workpack.render.quick_text import quick_diagnosis as quick_diagnosis

# Types only: `check` prints a summary without loading the planner, rules or search.
if TYPE_CHECKING:
    from collections.abc import Sequence

    from workpack.diagnose import DayDiagnosis
    from workpack.evaluate import Evaluation
    from workpack.isolation import IsolationPlan
    from workpack.lockregister import LockOn
    from workpack.plan import DayPlan
    from workpack.search import FaultSearch
    from workpack.summary import PlantSummary


def isolation_plan(plan: IsolationPlan, item_label: str) -> str:
    lines = [f"Isolation of {item_label}", ""]
    for hazard in plan.hazards:
        lines.append(f"{hazard.signal_word.value}: {hazard.text}")
    if plan.hazards:
        lines.append("")
    lines.append("Open, lock and tag, in this order:")
    if not plan.points:
        lines.append("  (no lockable device found: see the hazards above)")
    for point in plan.points:
        state = " (normally open: lock it open)" if point.already_open else ""
        where = f", {point.location}" if point.location else ""
        kind = point.device_kind.replace("_", " ") if point.blocks else point.device_kind
        lines.append(f"  {point.order}. {point.device} [{kind}{where}]{state}")
        if point.blocks:
            lines.append(f"     set and lock: {point.how}")
            lines.append(f"     {point.reason}")
        else:
            lines.append(f"     cuts: {point.reason}; {format_volts(point.voltage)} side")
    if plan.also_open:
        lines.append("Also open and tag (not lockable): " + ", ".join(plan.also_open))
    if plan.stored_energy:
        lines.append("")
        lines.append("Stored energy:")
        lines.extend(f"  - {note}" for note in plan.stored_energy)
    lines.append("")
    lines.append("Prove absence of voltage (tester proven on a known live source before "
                 "and after):")
    for check in plan.verify:
        lines.append(f"  - {check.where}: {check.conductors} "
                     f"(system voltage {format_volts(check.voltage)}); expect 0 V")
    lines.append("")
    lines.append("Local codes, the employer's safety rules and licensed practice prevail "
                 "over this plan.")
    return "\n".join(lines) + "\n"


def plant_summary(summary: PlantSummary) -> str:
    lines = [f"{summary.name}: {summary.kind}, {summary.frequency_hz:g} Hz, "
             f"phases {'-'.join(summary.phase_sequence)}",
             f"{summary.element_count} elements; {len(summary.islands)} galvanic systems "
             "in the normal switching state", ""]
    for island in summary.islands:
        detectors = ", ".join(island.detectors) or (
            "none needed (solidly grounded: a ground trips)" if island.earthing == "solid"
            else "NONE")
        earthing = island.earthing or "unknown earthing"
        lines.append(f"{island.id}: {format_volts(island.voltage)} {earthing}"
                     f", {island.item_count} items, detector: {detectors}")
        if island.capacitance_per_phase is not None:
            capacitance = format_quantity(island.capacitance_per_phase, "µF")
            current = format_quantity(island.charging_current or 0.0, "A")
            lines.append(f"    capacitance to earth ≈ {capacitance} "
                         f"per phase (from {island.capacitance_basis}); charging current "
                         f"in a solid ground ≈ {current}")
        if island.joinable_by:
            lines.append(f"    joined to others when closed: {', '.join(island.joinable_by)}")
    for warning in summary.warnings:
        lines.append(f"WARNING: {warning}")
    return "\n".join(lines) + "\n"


def day_diagnosis(day: DayDiagnosis) -> str:
    lines = [f"{day.plant}: findings of {day.date or 'the day'}", ""]
    if day.conclusions:
        lines.append("Taken together:")
        for conclusion in day.conclusions:
            lines.append(f"  [{conclusion.severity.value.upper()}] {conclusion.text} "
                         f"(findings {', '.join(conclusion.findings)})")
        lines.append("")
    for diagnosis in day.diagnoses:
        lines.append(f"{diagnosis.finding} {diagnosis.at:%Y-%m-%d %H:%M} {diagnosis.where} "
                     f"({diagnosis.kind.replace('_', ' ')}, by {diagnosis.by}) "
                     f"[{diagnosis.severity.value.upper()}]")
        lines.append(f"    {diagnosis.summary}")
        if diagnosis.capacitance_per_phase_f is not None:
            lines.append(f"    capacitance to earth used: "
                         f"{format_quantity(diagnosis.capacitance_per_phase_f, 'µF')} per phase "
                         f"({diagnosis.capacitance_basis})")
        lines.extend(f"    - {note}" for note in diagnosis.notes)
        lines.extend(f"    {note.signal_word.value}: {note.text}"
                     for note in diagnosis.cautions)
        lines.extend(f"    next: {step}" for step in diagnosis.next_steps)
    lines.append("")
    lines.append("Local codes, the employer's safety rules and licensed practice prevail.")
    return "\n".join(lines) + "\n"


def fault_search(search: FaultSearch) -> str:
    from workpack.search_wording import BoardNumbering, final_test_line, step_words

    lines = [f"Finding the ground on the {search.island} system "
             f"({search.system_voltage_v:g} V), starting at {search.board}",
             f"Watch: {', '.join(search.detectors) or 'the phase-to-earth voltmeters'}. "
             f"Healthy: each phase about {search.healthy_phase_to_earth_v:.0f} V to earth.",
             f"Expected disruption: {search.expected_minutes:.0f} min "
             f"(no plan can expect less than {search.lower_bound_minutes:.0f} min"
             + (f"; gap {search.gap:.0%})" if search.gap else "; this plan is optimal)"), ""]
    for note in search.notes:
        lines.append(f"NOTE: {note}")
    level = None
    numbering = BoardNumbering()
    for step in search.steps:
        if step.level != level:
            level = step.level
            lines.append(f"\n== Level {level} ==")
        words = step_words(search, step, numbering)
        lines.append(f"{step.number}. {words.open}  [{step.minutes:.0f} min]")
        lines.extend(f"   {text}" for text in (words.transfer, words.permission, words.dead,
                                              words.if_clears, words.if_stays) if text)
    lines.append("\nWhy this order (chance the ground is downstream, cost to open it):")
    for facts in sorted(search.candidates, key=lambda c: (-c.prior, c.id)):
        reasons = "; ".join(facts.reasons[:4]) or "no raised factor"
        lines.append(f"  {facts.id}: {facts.prior:.1%}, {facts.cost_minutes:g} min — {reasons}")
    lines.append("\nFinal tests when a circuit is found (isolate it first):")
    lines.extend(f"  {final_test_line(final, section)}"
                 for final in search.final_tests for section in final.sections)
    lines.append("\nWeights (rules/search-weights.yaml):")
    lines.extend(f"  {line}" for line in search.weights_used)
    lines.append("\nLocal codes, the employer's safety rules and licensed practice prevail.")
    return "\n".join(lines) + "\n"


def day_plan(plan: DayPlan) -> str:
    lines = [f"{plan.plant}: work packages for {plan.date.isoformat()} "
             f"({plan.crew_hours:g} person-hours)", ""]
    used = 0.0
    for package in plan.packages:
        need = package.duration_h * package.crew
        state = "scheduled" if package.id in plan.scheduled else "deferred"
        if state == "scheduled":
            used += need
        lines.append(f"  {package.id}  P{package.priority}  {state:9}  "
                     f"{package.duration_h:g} h × {package.crew}  {package.title}")
        if package.assigned:
            supervisor = (f"; supervisor {package.supervisor_assigned}"
                          if package.supervisor_assigned else "")
            lines.append(f"      crew: {', '.join(package.assigned)}{supervisor}")
    lines.append(f"\n{len(plan.scheduled)} scheduled ({used:g} person-hours), "
                 f"{len(plan.deferred)} deferred")
    for conflict in plan.conflicts:
        lines.append(f"ATTENTION: {conflict.text}")
    lines.append("Local codes, the employer's safety rules and licensed practice prevail.")
    return "\n".join(lines) + "\n"


def evaluation_text(evaluation: Evaluation) -> str:
    lines = [f"{evaluation.package_id} ({evaluation.item}): {evaluation.verdict.upper()}"]
    for reading in evaluation.readings:
        shown = ("not recorded" if reading.measured_si is None
                 else format_quantity(reading.measured_si, reading.unit))
        mark = {"pass": "ok  ", "fail": "FAIL", "not recorded": "--  ",
                "recorded": "rec "}[reading.outcome]
        lines.append(f"  {mark} {reading.id} {reading.what}: {shown}"
                     + (f" — {reading.note}" if reading.note else ""))
    for deviation in evaluation.deviations:
        if deviation.kind != "reading":
            lines.append(f"  {'FAIL' if deviation.fails else 'open'} {deviation.text}")
    return "\n".join(lines) + "\n"


def locks_text(plant: str, store: str, locks: Sequence[LockOn]) -> str:
    """The lock register: every lock on, one line each, as ``lockregister.locks_on`` gives."""
    from workpack.lockregister import LockKind, shown

    lines = [f"Locks on now, {plant} (records store {store}): {len(locks)}"]
    if not locks:
        return "\n".join(lines) + "\n"
    rows = [("lock", "on", "held by", "since", "job")]
    for lock in locks:
        place = f"lock box {lock.place}" if lock.kind is LockKind.personal else lock.place
        if lock.box:
            place += f" (key in lock box {lock.box})"
        holder = lock.holder
        if lock.holder != lock.applied_by:
            holder += f" (from {shown(lock.held_since)}; applied by {lock.applied_by})"
        rows.append((lock.lock, place, holder, shown(lock.applied_at), lock.job))
    widths = [max(len(row[i]) for row in rows) for i in range(4)]
    lines += ["  " + "  ".join(cell.ljust(width) for cell, width in zip(row, widths, strict=False))
              + "  " + row[4] for row in rows]
    return "\n".join(lines) + "\n"
