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


def _time_as_written(value: Any) -> Any:
    """A lock time is kept as the sheet gives it; YAML reads some as dates or date-times,
    which are turned back into their ISO text (checked at record time, by
    ``workpack.lockregister.parse_lock_time``)."""
    value = _blank_is_none(value)
    if isinstance(value, dt.datetime):
        return value.isoformat(sep=" ", timespec="minutes" if not value.second else "seconds")
    if isinstance(value, dt.date):
        return value.isoformat()
    return value


LOCK_TIME = ("date and time, YYYY-MM-DD HH:MM, the plant's clock time as written on the tag "
             "(or with its zone: 2026-12-02T08:15+01:00)")


class LockTransfer(Strict):
    """A lock handed over at a shift or personnel change (OSHA 29 CFR 1910.147(f)(4)): the
    off-going holder to the oncoming one, at a time."""

    from_holder: str = Field(min_length=1, description="who held the lock until the transfer",
                             examples=["LCS-0107"])
    to_holder: str = Field(min_length=1, description="who holds it from the transfer",
                           examples=["LCS-0131"])
    at: str = Field(description=f"when: {LOCK_TIME}", examples=["2026-12-02 20:00"])

    _time = field_validator("at", mode="before")(_time_as_written)


class LockRecord(Strict):
    """One isolation point's lock and tag: who put them on and took them off, and when."""

    lock: str | None = Field(default=None, description="the lock's number or mark; on one "
                             "isolation point at a time across the plant", examples=["L-07"])
    tag: str | None = Field(default=None, description="the tag's number", examples=["T-112"])
    applied_by: str | None = Field(default=None, description="who applied lock and tag",
                                   examples=["S. Quayle"])
    applied_at: str | None = Field(default=None, description=f"when: {LOCK_TIME}",
                                   examples=["2026-12-02 08:15"])
    removed_by: str | None = Field(default=None, description="who removed them (the one who "
                                   "holds them)", examples=["S. Quayle"])
    removed_at: str | None = Field(default=None, description=f"when: {LOCK_TIME}",
                                   examples=["2026-12-02 11:40"])
    box: str | None = Field(default=None, description="group lockout: the lock box (its "
                            "number in lock_boxes) the lock's key was put in",
                            examples=["B-1"])
    transfers: tuple[LockTransfer, ...] = Field(
        default=(), description="handovers of the lock at shift or personnel changes, in order",
        examples=[[{"from_holder": "S. Quayle", "to_holder": "M. Rosevear",
                    "at": "2026-12-02 20:00"}]])

    _blanks = field_validator("lock", "tag", "applied_by", "removed_by", "box",
                              mode="before")(_blank_is_none)
    _times = field_validator("applied_at", "removed_at", mode="before")(_time_as_written)

    def filled(self) -> bool:
        return any(v is not None and v != () for v in self.__dict__.values())


class PersonalLock(Strict):
    """A worker's own lock on a group lock box (OSHA 29 CFR 1910.147(f)(3)(ii)(D)): their
    protection while the group's locks are on."""

    applied_by: str = Field(min_length=1, description="whose lock it is",
                            examples=["M. Rosevear"])
    applied_at: str = Field(description=f"when put on the box: {LOCK_TIME}",
                            examples=["2026-12-02 08:30"])
    removed_by: str | None = Field(default=None, description="who took it off (its holder)",
                                   examples=["M. Rosevear"])
    removed_at: str | None = Field(default=None, description=f"when: {LOCK_TIME}",
                                   examples=["2026-12-02 11:30"])
    transfers: tuple[LockTransfer, ...] = Field(
        default=(), description="handovers at shift or personnel changes, in order",
        examples=[[{"from_holder": "M. Rosevear", "to_holder": "T. Marrow",
                    "at": "2026-12-02 20:00"}]])

    _blanks = field_validator("removed_by", mode="before")(_blank_is_none)
    _times = field_validator("applied_at", "removed_at", mode="before")(_time_as_written)


class LockBoxRecord(Strict):
    """A group lock box (OSHA 29 CFR 1910.147(f)(3)): the keys of the isolation points' locks
    go in; each worker of the group puts their own lock on it."""

    keys: int = Field(ge=1, description="how many lock keys were put in the box (one per "
                      "isolation lock that names the box)", examples=[2])
    personal_locks: dict[str, PersonalLock] = Field(
        default_factory=dict, description="personal lock number → whose, and when on and off",
        examples=[{"P-31": {"applied_by": "M. Rosevear", "applied_at": "2026-12-02 08:30"}}])


class MeasuredValue(Strict):
    """One reading as written: its value and, where the limit asks for it, the temperature."""

    value: float | str | None = Field(
        default=None, description="the reading: a bare number in the unit printed beside its "
                                  "box (MΩ, V, kVA…), or a number with its unit; blank: not "
                                  "recorded", examples=[850, "12 MΩ", "0.5 V"])
    temperature: float | str | None = Field(
        default=None, description="temperature of the equipment when read, in °C (a bare "
                                  "number) or with its unit, for readings corrected to a "
                                  "reference temperature", examples=[28, "28 °C"])
    instrument: str | None = Field(
        default=None, description="the test instrument it was read with: its id in the "
                                  "instrument register", examples=["IT-03"])

    _blanks = field_validator("*", mode="before")(_blank_is_none)


class StepDone(Strict):
    """A step's tick box."""

    done: bool = Field(default=False, description="true when the step was done",
                       examples=[True])


TESTER_BEFORE = ("the voltage tester was proven on a known live source before proving dead "
                 "(true or false)")
TESTER_AFTER = "and proven again after proving dead (true or false)"
ISOLATION = ("isolation point (the device id printed in the package) → its lock and tag "
             "record")
ISOLATION_EXAMPLE = {"CB-AC1": {"lock": "L-07", "tag": "T-112", "applied_by": "S. Quayle",
                                "applied_at": "2026-12-02 08:15"}}
PROVING_DEAD = ("proving-dead check number (from 1, as printed) → conductor pair (e.g. 'A-B', "
                "'A-E') → volts measured (expected 0 V)")
PROVING_DEAD_EXAMPLE = {"1": {"A-B": 0, "B-C": 0, "C-A": 0, "A-E": 0, "B-E": 0, "C-E": 0}}


class FinalTestResults(Strict):
    """What was done in one final test of a search: the isolation, proving dead and tests
    of the circuit the search ended at."""

    tester_proven_before: bool = Field(default=False, description=TESTER_BEFORE,
                                       examples=[True])
    tester_proven_after: bool = Field(default=False, description=TESTER_AFTER,
                                      examples=[True])
    isolation: dict[str, LockRecord] = Field(default_factory=dict, description=ISOLATION,
                                             examples=[ISOLATION_EXAMPLE])
    proving_dead: dict[int, dict[str, float | str | None]] = Field(
        default_factory=dict, description=PROVING_DEAD, examples=[PROVING_DEAD_EXAMPLE])
    steps: dict[int, StepDone] = Field(default_factory=dict, description="step number (as "
                                       "printed) → done", examples=[{"1": {"done": True}}])
    restoration: dict[int, StepDone] = Field(default_factory=dict, description="restoration "
                                             "step number (as printed) → done",
                                             examples=[{"1": {"done": True}}])
    locks_left_on: str | None = Field(
        default=None, description="why this test's locks stay on (the ground is in this "
                                  "circuit: it stays isolated for its repair)",
        examples=["ground found on the windlass motor: stays isolated for repair"])

    _blanks = field_validator("locks_left_on", mode="before")(_blank_is_none)

    def anything_filled_in(self) -> bool:
        return bool(
            self.tester_proven_before or self.tester_proven_after or self.locks_left_on
            or any(lock.filled() for lock in self.isolation.values())
            or any(v is not None and str(v).strip() for pairs in self.proving_dead.values()
                   for v in pairs.values())
            or any(s.done for s in (*self.steps.values(), *self.restoration.values())))


class Results(Strict):
    """The filled-in results of one work package, from the sheet `workpack results-template`
    writes or from the package PDF's form fields. A blank is an answer: not recorded."""

    package: str = Field(min_length=1, description="the work package id these results answer",
                         examples=["WP-20261202-01"])
    package_sha256: str | None = Field(
        default=None, pattern=r"^[0-9a-f]{64}$",
        description="hash of the package JSON as issued (64 hex digits, filled in by the "
                    "template); refuses results for a changed package",
        examples=["1ed3f1a32c8c7be05b1eaaeb5db31c914352e5153848d6d314e804437122e418"])
    completed_by: str | None = Field(default=None, description="the technician who did the "
                                     "work", examples=["S. Quayle (ETO)"])
    supervisor: str | None = Field(default=None, description="the supervisor who checked it",
                                   examples=["R. Penhallow (C/E)"])
    completed_on: dt.date | None = Field(default=None, description="the day the work was "
                                         "completed, YYYY-MM-DD", examples=["2026-12-02"])
    tester_proven_before: bool = Field(default=False, description=TESTER_BEFORE,
                                       examples=[True])
    tester_proven_after: bool = Field(default=False, description=TESTER_AFTER,
                                      examples=[True])
    isolation: dict[str, LockRecord] = Field(default_factory=dict, description=ISOLATION,
                                             examples=[ISOLATION_EXAMPLE])
    proving_dead: dict[int, dict[str, float | str | None]] = Field(
        default_factory=dict, description=PROVING_DEAD, examples=[PROVING_DEAD_EXAMPLE])
    steps: dict[int, StepDone] = Field(default_factory=dict, description="step number (as "
                                       "printed) → done", examples=[{"1": {"done": True}}])
    readings: dict[str, MeasuredValue] = Field(
        default_factory=dict, description="reading id as printed (e.g. S6.R1) → the value "
                                          "measured", examples=[{"S6.R1": {"value": "850 MΩ",
                                                                           "temperature": 28}}])
    restoration: dict[int, StepDone] = Field(default_factory=dict, description="restoration "
                                             "step number (as printed) → done",
                                             examples=[{"1": {"done": True}}])
    ground_found_at: str | None = Field(
        default=None, description="element where a searched ground was found, if any",
        examples=["AC-1"])
    locks_left_on: str | None = Field(
        default=None, description="why the locks stay on (the acceptance was not met: the "
                                  "item stays out of service)",
        examples=["still below its minimum after the dry-out: to be rewound"])
    lock_boxes: dict[str, LockBoxRecord] = Field(
        default_factory=dict, description="group lockout: lock box number → its keys and the "
                                          "workers' personal locks on it",
        examples=[{"B-1": {"keys": 2, "personal_locks": {
            "P-31": {"applied_by": "M. Rosevear", "applied_at": "2026-12-02 08:30"}}}}])
    final_tests: dict[str, FinalTestResults] = Field(
        default_factory=dict, description="final test id (F1, …) → what was done in it; only "
                                          "those the search ended at",
        examples=[{"F1": {"tester_proven_before": True, "tester_proven_after": True,
                          "steps": {"1": {"done": True}}}}])
    remarks: str | None = Field(default=None, description="anything else, in words",
                                examples=["terminal box gasket renewed"])

    _blanks = field_validator("completed_by", "supervisor", "remarks", "ground_found_at",
                              "locks_left_on", mode="before")(_blank_is_none)

    def anything_filled_in(self) -> bool:
        """False for a sheet or PDF handed back as it was issued."""
        return bool(
            self.completed_by or self.supervisor or self.remarks
            or any(m.value is not None for m in self.readings.values())
            or any(lock.filled() for lock in self.isolation.values())
            or any(v is not None and str(v).strip() for pairs in self.proving_dead.values()
                   for v in pairs.values())
            or any(s.done for s in (*self.steps.values(), *self.restoration.values()))
            or bool(self.locks_left_on) or bool(self.lock_boxes)
            or any(f.anything_filled_in() for f in self.final_tests.values()))
