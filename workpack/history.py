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

from workpack.electrical import DatedReading, TrendJudgement, insulation_trend
from workpack.electrical.standards import CodeSet
from workpack.model.evaluation import RESISTANCE_UNITS
from workpack.records import StoredRecord, latest_effective, read_for_planning


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


def history_from_records(records: Iterable[StoredRecord], default_code_set: str) -> History:
    """Grounds found and insulation series from store records (latest effective ones).

    A series whose readings named no correction tables is judged with
    ``default_code_set`` (the plant's tables for rotating machines)."""
    grounds: dict[str, int] = {}
    gathered: dict[str, _Gathered] = {}
    for record in sorted(latest_effective(records).values(), key=lambda r: r.sequence):
        payload = read_for_planning(record)
        if payload is None:
            continue
        found = payload.results.ground_found_at
        if found:
            grounds[found] = grounds.get(found, 0) + 1
        day = payload.results.completed_on or record.recorded_at.date()
        for reading in payload.evaluation.readings:
            if (not reading.element or reading.unit not in RESISTANCE_UNITS
                    or reading.measured_si is None or reading.low is None):
                continue
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
