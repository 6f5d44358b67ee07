"""Tables for the office: records, their readings, the due list, the asset list. Pure.

Each kind of table is a ``TableKind`` in ``TABLE_KINDS``: its name, what it needs
(the plant, the records store) and a function from ``ExportInputs`` to tables.
A new kind (open jobs, once the store keeps job events) is one more entry; the
command line offers whatever is registered here.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

from workpack.grid import CellValue, Table

# The builders import what they use when called: the command line lists the kinds on
# every start, and the planner and audit modules take most of a second to import.
if TYPE_CHECKING:
    from workpack.electrical.standards import CodeSet
    from workpack.history import History
    from workpack.model.plant import Plant
    from workpack.store import Record


@dataclass(frozen=True)
class ExportInputs:
    """Everything a table may be built from; what a kind needs is there (``needs``)."""

    as_of: dt.date
    plant: Plant | None = None
    records: Sequence[Record] | None = None
    history: History | None = None
    standards: Mapping[str, CodeSet] = field(default_factory=dict)
    days: int = 30  # the due list's horizon after ``as_of``


@dataclass(frozen=True)
class TableKind:
    name: str
    help: str
    needs: frozenset[str]  # "plant", "records"
    build: Callable[[ExportInputs], list[Table]]
    dated: bool = False  # depends on the as-of day (the workbook then carries that date)


def _number(value_si: float | None, unit: str) -> float | None:
    """An SI value in the unit its reading is shown in, without float noise."""
    from workpack.numbers import unit_scale

    if value_si is None:
        return None
    return float(f"{value_si / unit_scale(unit):.12g}")


RECORD_COLUMNS = ("record", "package", "plant", "item", "package_date", "verdict",
                  "recorded_by", "recorded_at", "completed_by", "supervisor", "supersedes",
                  "superseded_by", "ground_found_at", "deviations", "unreadable")


def records_table(inputs: ExportInputs) -> list[Table]:
    """One row per record, in record order; a correction names what it supersedes."""
    from workpack.records import read_back, superseded_by

    assert inputs.records is not None
    later = superseded_by(inputs.records)
    rows: list[tuple[CellValue, ...]] = []
    for record in sorted(inputs.records, key=lambda r: r.sequence):
        read = read_back(record)
        e = read.evaluation
        evaluated: tuple[CellValue, ...] = (
            (e.plant, e.item, e.date, e.completed_by, e.supervisor, e.ground_found_at,
             "; ".join(d.text for d in e.deviations) or None) if e is not None
            else (None,) * 7)
        plant, item, date, completed_by, supervisor, found, deviations = evaluated
        rows.append((record.sequence, record.package_id, plant, item, date, record.verdict,
                     record.recorded_by, record.recorded_at.isoformat(), completed_by,
                     supervisor, record.supersedes, later.get(record.sequence), found,
                     deviations, read.problem))
    return [Table("records", RECORD_COLUMNS, tuple(rows))]


READING_COLUMNS = ("record", "package", "item", "reading", "what", "element", "entered",
                   "measured", "unit", "temperature_c", "low", "high", "limit_basis",
                   "outcome", "judged", "note")


def readings_table(inputs: ExportInputs) -> list[Table]:
    """Every reading of every record as evaluated: entered, in its unit, its limits."""
    from workpack.records import entered_text, read_back

    assert inputs.records is not None
    rows: list[tuple[CellValue, ...]] = []
    for record in sorted(inputs.records, key=lambda r: r.sequence):
        payload = read_back(record).payload
        if payload is None:
            continue  # the records table says the record cannot be read
        evaluation, entered = payload.evaluation, payload.results.readings
        for verdict in evaluation.readings:
            given = entered.get(verdict.id)
            rows.append((record.sequence, record.package_id, evaluation.item, verdict.id,
                         verdict.what, verdict.element,
                         entered_text(given.value) if given else None,
                         _number(verdict.measured_si, verdict.unit), verdict.unit or None,
                         verdict.temperature_c, _number(verdict.low, verdict.unit),
                         _number(verdict.high, verdict.unit), verdict.basis or None,
                         verdict.outcome, verdict.judged, verdict.note or None))
    return [Table("readings", READING_COLUMNS, tuple(rows))]


DUE_COLUMNS = ("element", "name", "location", "test", "every", "last_done", "due_on",
               "days_left", "reason")


def due_table(inputs: ExportInputs) -> list[Table]:
    """Routine tests due by ``as_of`` + ``days``, soonest first, as the planner sees them:
    the interval from the plant's last_done, or now when never done or when a falling
    insulation trend in the records brings the test forward."""
    from workpack.plan import due_routines

    assert inputs.plant is not None
    horizon = inputs.as_of + dt.timedelta(days=inputs.days)
    rows = []
    planned_now = set()
    for element, routine, due_on in due_routines(inputs.plant, inputs.as_of, inputs.history,
                                                 inputs.standards):
        planned_now.add((element.id, routine.test))
        if routine.last_done is None:
            reason = "never done"
        elif routine.last_done + dt.timedelta(days=routine.interval_days) > inputs.as_of:
            trend = (inputs.history.trend(element.id, inputs.standards)
                     if inputs.history is not None else None)
            status = trend.status.value if trend is not None else "trend"
            reason = f"brought forward: insulation {status} in the records"
        else:
            reason = "interval since last done"
        rows.append(_due_row(inputs.as_of, element, routine, due_on, reason))
    for element, routine, due_on in due_routines(inputs.plant, horizon):
        if (element.id, routine.test) not in planned_now:
            rows.append(_due_row(inputs.as_of, element, routine, due_on,
                                 "interval since last done"))
    rows.sort(key=lambda row: (row[6], row[0], row[3]))
    return [Table("due", DUE_COLUMNS, tuple(rows))]


def _due_row(as_of: dt.date, element: Any, routine: Any, due_on: dt.date,
             reason: str) -> tuple[CellValue, ...]:
    return (element.id, element.name, element.location, routine.test.value, routine.every,
            routine.last_done, due_on, (due_on - as_of).days, reason)


def assets_tables(inputs: ExportInputs) -> list[Table]:
    from workpack.assetlist import plant_tables

    assert inputs.plant is not None
    return plant_tables(inputs.plant)


TABLE_KINDS: dict[str, TableKind] = {kind.name: kind for kind in (
    TableKind("records", "one row per record: package, verdict, who, when, corrections",
              frozenset({"records"}), records_table),
    TableKind("readings", "every reading of every record, with its unit and limits",
              frozenset({"records"}), readings_table),
    TableKind("due", "routine tests falling due within --days", frozenset({"plant"}),
              due_table, dated=True),
    TableKind("assets", "the plant inventory as an asset list (import-assets reads it back)",
              frozenset({"plant"}), assets_tables),
)}


def build_tables(kinds: Sequence[str], inputs: ExportInputs) -> list[Table]:
    """The tables of ``kinds``, in the order asked."""
    tables: list[Table] = []
    for name in kinds:
        tables.extend(TABLE_KINDS[name].build(inputs))
    return tables


def describe(kinds: Mapping[str, TableKind] = TABLE_KINDS) -> str:
    return "; ".join(f"{k.name}: {k.help}" for k in kinds.values())
