"""What the records say that planning should know: where grounds were found, how
insulation is trending.

Read from the latest effective record of each package (``workpack.records``: a
correction replaces what it supersedes). Grounds found raise a circuit's likelihood in
the fault search; an item whose corrected insulation resistance falls fast, or is
projected to reach its minimum, gets its routine test now instead of at the end of its
interval. A record whose payload cannot be read back adds nothing here (the audit and
the records table name it). Pure: records arrive as data.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from typing import Protocol

from workpack.electrical import DatedReading, TrendJudgement, insulation_trend
from workpack.electrical.standards import CodeSet
from workpack.records import (
    Chained,
    PlanningFacts,
    StoredRecord,
    latest_effective,
    planning_facts,
)


@dataclass(frozen=True)
class IrSeries:
    element: str
    code_set: str
    minimum_ohm: float
    readings: tuple[DatedReading, ...]


@dataclass(frozen=True)
class History:
    past_grounds: Mapping[str, int] = field(default_factory=dict)
    insulation: Mapping[str, IrSeries] = field(default_factory=dict)

    def trend(self, element: str, standards: Mapping[str, CodeSet]) -> TrendJudgement | None:
        series = self.insulation.get(element)
        if series is None or series.code_set not in standards:
            return None
        return insulation_trend(standards[series.code_set], series.readings,
                                series.minimum_ohm)


@dataclass
class _Gathered:
    """One element's readings while the records are read: the lowest of each day."""

    minimum_ohm: float  # the limit of its first reading
    code_set: str | None = None  # the first correction tables a reading names
    by_day: dict[dt.date, DatedReading] = field(default_factory=dict)


class PlanningRecord(Chained, Protocol):
    """A record as planning reads it (``store.PlanningRow``): its place in the chain, its
    time, and its ``PlanningFacts``."""

    @property
    def recorded_at(self) -> dt.datetime: ...

    @property
    def facts(self) -> PlanningFacts: ...


@dataclass(frozen=True)
class _Read:
    """A full record with its payload read for planning (what ``history_from_records``
    gives ``history_from_planning``)."""

    record: StoredRecord

    @property
    def sequence(self) -> int:
        return self.record.sequence

    @property
    def package_id(self) -> str:
        return self.record.package_id

    @property
    def supersedes(self) -> int | None:
        return self.record.supersedes

    @property
    def recorded_at(self) -> dt.datetime:
        return self.record.recorded_at

    @property
    def facts(self) -> PlanningFacts:
        return planning_facts(self.record.results_json)


def history_from_records(records: Iterable[StoredRecord], default_code_set: str) -> History:
    """Grounds found and insulation series from store records (latest effective ones),
    each payload read here. ``history_from_planning`` is the same from the summaries a
    store keeps (``RecordStore.planning_records``)."""
    return history_from_planning((_Read(record) for record in records), default_code_set)


def history_from_planning(records: Iterable[PlanningRecord], default_code_set: str) -> History:
    """Grounds found and insulation series from the planning facts of the latest
    effective records.

    A series whose readings named no correction tables is judged with
    ``default_code_set`` (the plant's tables for rotating machines)."""
    grounds: dict[str, int] = {}
    gathered: dict[str, _Gathered] = {}
    for record in sorted(latest_effective(records).values(), key=lambda r: r.sequence):
        facts = record.facts
        if not facts.readable:
            continue
        found = facts.ground_found_at
        if found:
            grounds[found] = grounds.get(found, 0) + 1
        day = facts.completed_on or record.recorded_at.date()
        for reading in facts.readings:
            series = gathered.setdefault(reading.element, _Gathered(reading.low))
            series.code_set = series.code_set or reading.code_set
            # One value a day per element: the lowest phase is what matters.
            previous = series.by_day.get(day)
            if previous is None or reading.measured_si < previous.resistance_ohm:
                series.by_day[day] = DatedReading(day, reading.measured_si,
                                                  reading.temperature_c)
    insulation = {
        element: IrSeries(element, series.code_set or default_code_set, series.minimum_ohm,
                          tuple(series.by_day[day] for day in sorted(series.by_day)))
        for element, series in sorted(gathered.items())
    }
    return History(past_grounds=grounds, insulation=insulation)
