"""What comes back from a job: the filled-in results of one work package.

Written by hand from the skeleton (`workpack results-template`) or read from
the package PDF's form fields; both end as this model. Readings may be a bare
number, taken in the unit printed beside the box (MΩ, V, kVA…), or a string
with its unit ("12 MΩ", "0.5 V"). A blank is an answer too: "not recorded".
"""

from __future__ import annotations

import datetime as dt
from typing import Any

from pydantic import Field, field_validator

from workpack.model.plant import Strict


def _blank_is_none(value: Any) -> Any:
    return None if isinstance(value, str) and not value.strip() else value


class LockRecord(Strict):
    lock: str | None = None
    tag: str | None = None
    applied_by: str | None = None
    applied_at: str | None = None
    removed_by: str | None = None
    removed_at: str | None = None

    _blanks = field_validator("*", mode="before")(_blank_is_none)


class MeasuredValue(Strict):
    value: float | str | None = None
    temperature: float | str | None = None

    _blanks = field_validator("*", mode="before")(_blank_is_none)


class StepDone(Strict):
    done: bool = False


class FinalTestResults(Strict):
    """What was done in one final test of a search (see ``WorkPackage.final_tests``)."""

    tester_proven_before: bool = False
    tester_proven_after: bool = False
    isolation: dict[str, LockRecord] = Field(default_factory=dict)
    proving_dead: dict[int, dict[str, float | str | None]] = Field(default_factory=dict)
    steps: dict[int, StepDone] = Field(default_factory=dict)
    restoration: dict[int, StepDone] = Field(default_factory=dict)
    locks_left_on: str | None = Field(
        default=None, description="why this test's locks stay on (the ground is in this "
                                  "circuit: it stays isolated for its repair)")

    _blanks = field_validator("locks_left_on", mode="before")(_blank_is_none)

    def anything_filled_in(self) -> bool:
        return bool(
            self.tester_proven_before or self.tester_proven_after or self.locks_left_on
            or any(any(v is not None for v in lock.model_dump().values())
                   for lock in self.isolation.values())
            or any(v is not None and str(v).strip() for pairs in self.proving_dead.values()
                   for v in pairs.values())
            or any(s.done for s in (*self.steps.values(), *self.restoration.values())))


class Results(Strict):
    package: str = Field(min_length=1, description="the work package id these results answer")
    package_sha256: str | None = Field(
        default=None, pattern=r"^[0-9a-f]{64}$",
        description="hash of the package JSON as issued; refuses results for a changed package")
    completed_by: str | None = None
    supervisor: str | None = None
    completed_on: dt.date | None = None
    tester_proven_before: bool = False
    tester_proven_after: bool = False
    isolation: dict[str, LockRecord] = Field(default_factory=dict)
    proving_dead: dict[int, dict[str, float | str | None]] = Field(
        default_factory=dict, description="index (from 1) → pair → volts measured")
    steps: dict[int, StepDone] = Field(default_factory=dict)
    readings: dict[str, MeasuredValue] = Field(default_factory=dict)
    restoration: dict[int, StepDone] = Field(default_factory=dict)
    ground_found_at: str | None = Field(
        default=None, description="element where a searched ground was found, if any")
    locks_left_on: str | None = Field(
        default=None, description="why the locks stay on (the acceptance was not met: the "
                                  "item stays out of service)")
    final_tests: dict[str, FinalTestResults] = Field(
        default_factory=dict, description="final test id (F1, …) → what was done in it")
    remarks: str | None = None

    _blanks = field_validator("completed_by", "supervisor", "remarks", "ground_found_at",
                              "locks_left_on", mode="before")(_blank_is_none)

    def anything_filled_in(self) -> bool:
        """False for a sheet or PDF handed back as it was issued."""
        return bool(
            self.completed_by or self.supervisor or self.remarks
            or any(m.value is not None for m in self.readings.values())
            or any(any(v is not None for v in lock.model_dump().values())
                   for lock in self.isolation.values())
            or any(v is not None and str(v).strip() for pairs in self.proving_dead.values()
                   for v in pairs.values())
            or any(s.done for s in (*self.steps.values(), *self.restoration.values()))
            or bool(self.locks_left_on)
            or any(f.anything_filled_in() for f in self.final_tests.values()))
