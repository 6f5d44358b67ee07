"""An evaluation: what the results of one job showed, judged against its own package.

``workpack.evaluate`` makes it; the records store keeps it in each record's payload
(``workpack.records``); the close-out, the audit, the planner's history and the office
tables read it back from there. Quantities are SI; ``unit`` says how to show them.
"""

from __future__ import annotations

import datetime as dt
from typing import Literal

from workpack.model.package import Plain

Verdict = Literal["passed", "failed", "incomplete"]
Outcome = Literal["pass", "fail", "not recorded", "recorded"]
# Readings taken in these units are insulation resistance: they make follow-up findings,
# the planner's insulation history and the audit's trends.
RESISTANCE_UNITS = frozenset({"Ω", "kΩ", "MΩ"})


class ReadingVerdict(Plain):
    """One reading of the package: the value written down, and what it was held against."""

    id: str
    what: str
    unit: str
    measured_si: float | None
    temperature_c: float | None
    compared_si: float | None  # after temperature correction, where the limit asks for it
    corrected_to_c: float | None
    low: float | None
    high: float | None
    basis: str
    outcome: Outcome
    note: str = ""
    element: str | None = None  # the element measured (insulation readings)
    judged: bool = True  # False: recorded against its limit but not deciding the verdict
    code_set: str | None = None  # the tables that corrected it for temperature

    @property
    def corrected(self) -> bool:
        """``compared_si`` is the measured value corrected to ``corrected_to_c``: the limit
        named the tables to correct with, and the reading could be corrected."""
        return (self.corrected_to_c is not None and self.code_set is not None
                and self.compared_si is not None)

    @property
    def broke(self) -> Literal["minimum", "maximum"] | None:
        """Which bound a failing reading broke."""
        if self.outcome != "fail" or self.compared_si is None:
            return None
        if self.low is not None and self.compared_si < self.low:
            return "minimum"
        if self.high is not None and self.compared_si > self.high:
            return "maximum"
        return None

    @property
    def broken_limit_si(self) -> float | None:
        return {"minimum": self.low, "maximum": self.high, None: None}[self.broke]


class Deviation(Plain):
    """Something the package asked for that the results do not show."""

    kind: str  # reading, step, restoration step, lock, dead, tester, signature
    ref: str
    text: str
    fails: bool  # True: the job failed; False: the job is incomplete


class FollowUp(Plain):
    """A finding for tomorrow's plan, worded as a findings file holds it."""

    kind: Literal["insulation_resistance"]
    at: str  # ISO date and time
    by: str
    where: str  # the element measured
    test_voltage: str | None  # "500 V"; None: the package gave none
    reading: str  # "3000000 ohm"
    temperature: str | None  # "30 degC"; None: none was entered, and none is made up
    # (the findings file then asks for it: a finding needs its temperature)
    note: str


class Evaluation(Plain):
    """The verdict on one job's results, with everything it was decided on."""

    package_id: str
    plant: str
    item: str
    date: dt.date  # the package's date
    verdict: Verdict
    readings: tuple[ReadingVerdict, ...]
    deviations: tuple[Deviation, ...]
    locks_not_removed: tuple[str, ...]  # "DEVICE", or "F2:DEVICE" in a search's final test
    completed_by: str | None
    supervisor: str | None
    ground_found_at: str | None
    followups: tuple[FollowUp, ...]
    locks_left_on: tuple[str, ...] = ()  # "DEVICE: why", kept on by the restoration's gate
