"""Plain-text views for the terminal. Numbers arrive computed; this only lays them out."""

from __future__ import annotations

from workpack.isolation import IsolationPlan
from workpack.summary import PlantSummary


def volts(value: float | None) -> str:
    return "unknown voltage" if value is None else f"{value:g} V"


def isolation_plan(plan: IsolationPlan, item_label: str) -> str:
    lines = [f"Isolation of {item_label}", ""]
    for hazard in plan.hazards:
        lines.append(f"{hazard.severity}: {hazard.text}")
    if plan.hazards:
        lines.append("")
    lines.append("Open, lock and tag, in this order:")
    if not plan.points:
        lines.append("  (no lockable device found: see the hazards above)")
    for point in plan.points:
        state = " (normally open: lock it open)" if point.already_open else ""
        where = f", {point.location}" if point.location else ""
        lines.append(f"  {point.order}. {point.device} [{point.device_kind}{where}]{state}")
        lines.append(f"     cuts: {point.reason}; {volts(point.voltage)} side")
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
                     f"(system voltage {volts(check.voltage)}); expect 0 V")
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
        detectors = ", ".join(island.detectors) or "NONE"
        lines.append(f"{island.id}: {volts(island.voltage)} {island.earthing or 'unknown earthing'}"
                     f", {island.item_count} items, detector: {detectors}")
        if island.capacitance_per_phase is not None:
            lines.append(f"    capacitance to earth ≈ {island.capacitance_per_phase * 1e6:.3g} µF "
                         f"per phase (from {island.capacitance_basis}); charging current "
                         f"in a solid ground ≈ {island.charging_current:.3g} A")
        if island.joinable_by:
            lines.append(f"    joined to others when closed: {', '.join(island.joinable_by)}")
    for warning in summary.warnings:
        lines.append(f"WARNING: {warning}")
    return "\n".join(lines) + "\n"
