"""The quick diagnose as terminal text: apart from ``text.py``, which loads the planner."""

from __future__ import annotations

from typing import TYPE_CHECKING

from workpack.numbers import format_ohms, format_quantity

if TYPE_CHECKING:
    from workpack.quick_diagnose import ReadingSummary


def quick_diagnosis(summary: ReadingSummary) -> str:
    result = summary.best_fit
    readings = ", ".join(f"{phase} {value:g} V" for phase, value in result.readings_v.items())
    lines = [f"Readings: {readings} on a {result.line_voltage_v:g} V system "
             f"(sequence {''.join(result.sequence.order)})",
             f"Result: {result.status.value}",
             f"Grounded phase: {result.grounded_phase or 'none identified'}"]
    if result.candidate_phases and not result.grounded_phase:
        lines.append("Phases that fit: " + ", ".join(result.candidate_phases))
    if summary.fault_resistance_ohm is not None:
        interval = summary.fault_resistance_interval_ohm
        span = f" ({format_ohms(interval[0])} to {format_ohms(interval[1])})" if interval else ""
        lines.append(f"Fault resistance: {format_ohms(summary.fault_resistance_ohm)}{span}")
    lines.append(f"Neutral shift: {summary.neutral_shift_v:.0f} V")
    if summary.fault_current_a is not None:
        lines.append(f"Ground current: {format_quantity(summary.fault_current_a, 'A')}")
    lines.append(f"Consistent with a single ground: {'yes' if result.consistent else 'NO'}")
    lines.extend(f"{note.signal_word.value}: {note.text}" for note in summary.cautions)
    lines.extend(f"  - {note}" for note in result.notes)
    if result.next_steps:
        lines.append("Next:")
        lines.extend(f"  - {step}" for step in result.next_steps)
    lines.append("Local codes, the employer's safety rules and licensed practice prevail.")
    return "\n".join(lines) + "\n"
