"""What the records say that planning should know: where grounds were found, how
insulation is trending.

Read from the latest effective record of each package (a correction replaces
what it supersedes). Grounds found raise a circuit's likelihood in the fault
search; an item whose corrected insulation resistance falls fast, or is
projected to reach its minimum, gets its routine test now instead of at the
end of its interval. Pure: records arrive as data.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from typing import Any

from workpack.electrical import DatedReading, TrendJudgement, insulation_trend
from workpack.electrical.standards import CodeSet

RESISTANCE_UNITS = ("Ω", "kΩ", "MΩ")


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


def history_from_records(records: Iterable[Any], default_code_set: str) -> History:
    """Grounds found and insulation series from store records (latest effective ones).

    A series whose readings named no correction tables is judged with
    ``default_code_set`` (the plant's tables for rotating machines)."""
    latest: dict[str, Any] = {}
    superseded: set[int] = set()
    ordered = sorted(records, key=lambda r: r.sequence)
    for record in ordered:
        if record.supersedes is not None:
            superseded.add(record.supersedes)
    for record in ordered:
        if record.sequence not in superseded:
            latest[record.package_id] = record
    grounds: dict[str, int] = {}
    points: dict[str, dict[str, Any]] = {}
    for record in sorted(latest.values(), key=lambda r: r.sequence):
        payload = record.results
        results, evaluation = payload.get("results", {}), payload.get("evaluation", {})
        found = results.get("ground_found_at")
        if found:
            grounds[found] = grounds.get(found, 0) + 1
        taken = results.get("completed_on") or record.recorded_at.date().isoformat()
        for reading in evaluation.get("readings", []):
            element = reading.get("element")
            if (not element or reading.get("unit") not in RESISTANCE_UNITS
                    or reading.get("measured_si") is None or reading.get("low") is None):
                continue
            series = points.setdefault(element, {"readings": {}, "low": reading["low"],
                                                 "code_set": None})
            series["code_set"] = series["code_set"] or reading.get("code_set")
            day = dt.date.fromisoformat(taken)
            # One value a day per element: the lowest phase is what matters.
            previous = series["readings"].get(day)
            if previous is None or reading["measured_si"] < previous.resistance_ohm:
                series["readings"][day] = DatedReading(day, reading["measured_si"],
                                                       reading.get("temperature_c"))
    insulation = {
        element: IrSeries(element, data["code_set"] or default_code_set, data["low"],
                          tuple(data["readings"][day] for day in sorted(data["readings"])))
        for element, data in sorted(points.items())
    }
    return History(past_grounds=grounds, insulation=insulation)
