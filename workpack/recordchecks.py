"""What a job's results must pass before they are recorded, beyond fitting their package.

- Locks: every time a real date and time, in order; a lock number on one place at a time
  across the plant's jobs (``lockregister``); no lock applied before the package's day
  but those the package lists as still on from an earlier day of its job.
- Signers (with a crew register): technician and supervisor are people of the register,
  the technician holds what the job needs, the supervisor may supervise and is somebody
  else where the job needs both (``crew.signer_problems``); everyone a lock names is in
  the register.
- Instruments (with an instrument register): each reading names an instrument of the
  register, in calibration on the reading's day. A reading outside the instrument's range
  is not refused but *not accepted*: the evaluation records it with the reason.

Each problem is a ``Mismatch`` (a field path of the results file and a message), so the
shell can name file:line and refuse the whole record. Pure.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Iterable
from dataclasses import dataclass, field

from workpack.checks import Mismatch
from workpack.competence import JobNeeds
from workpack.crew import signer_problems
from workpack.errors import did_you_mean
from workpack.evaluate import UNIT_KIND, measured_value
from workpack.lockregister import LockUse, check_record_locks, results_locks, shown
from workpack.model.crew import CrewRegister, Person
from workpack.model.instruments import InstrumentRegister
from workpack.model.package import WorkPackage
from workpack.model.results import FinalTestResults, LockTransfer, Results
from workpack.numbers import format_ohms, format_quantity
from workpack.units import KINDS, UnitProblem


def work_day(package: WorkPackage, results: Results) -> dt.date:
    """The day the work was done: as the results give it, else the package's day."""
    return results.completed_on or package.date


# --- locks -------------------------------------------------------------------------------------


def lock_mismatches(package: WorkPackage, results: Results,
                    earlier: Iterable[LockUse]) -> list[Mismatch]:
    """Why the results' locks cannot go into the plant's lock register (empty: they can).
    ``earlier``: the locks the plant's stored records state, without the record these
    results replace."""
    uses, boxes, problems = results_locks(results, package.plant, package.id)
    for use in uses:
        # A job carried over with its locks on (a dry-out over days) put them on before.
        if use.applied_at is not None and use.applied_at.date() < package.date and (
                use.place not in {held.device for held in package.locks_on}):
            problems.append(Mismatch((*use.where, "applied_at"),
                                     f"applied at {shown(use.applied_at)}, before the "
                                     f"package's day {package.date}"))
    if problems:
        return problems  # order and overlaps mean little while a time is unreadable
    return check_record_locks(uses, boxes, earlier)


# --- signers ---------------------------------------------------------------------------------


def _folded(text: str) -> str:
    return " ".join(text.split()).casefold()


def find_person(register: CrewRegister, written: str) -> Person | None:
    """The person a sheet names: by register id, else by the name as in the register (when
    exactly one person has it)."""
    by_id = register.person(written.strip())
    if by_id is not None:
        return by_id
    named = [p for p in register.people if _folded(p.name) == _folded(written)]
    return named[0] if len(named) == 1 else None


def signer_mismatches(register: CrewRegister, package: WorkPackage, results: Results,
                      needs: JobNeeds) -> list[Mismatch]:
    """Why the named technician and supervisor may not sign these results (empty: they
    may). A name is the person's register id or their name as the register writes it."""
    def person_id(written: str | None) -> str | None:
        if written is None:
            return None
        person = find_person(register, written)
        return person.id if person is not None else written  # unknown: said so below

    technician, supervisor = person_id(results.completed_by), person_id(results.supervisor)
    day = work_day(package, results)
    # signer_problems lists the technician's problems first, then the supervisor's.
    own = signer_problems(register, technician, None, needs.needs, needs.volts, day,
                          supervisor_needed=False)
    every = signer_problems(register, technician, supervisor, needs.needs, needs.volts, day,
                            supervisor_needed=needs.supervisor_needed)
    return ([Mismatch(("completed_by",), text) for text in every[:len(own)]]
            + [Mismatch(("supervisor",), text) for text in every[len(own):]])


# --- instruments -------------------------------------------------------------------------------


@dataclass
class InstrumentCheck:
    """Readings refused (``problems``: the record is not written) and readings not
    accepted (``not_accepted``: reading id → why; recorded, and the evaluation says so)."""

    problems: list[Mismatch] = field(default_factory=list)
    not_accepted: dict[str, str] = field(default_factory=dict)


def instrument_check(register: InstrumentRegister, package: WorkPackage,
                     results: Results) -> InstrumentCheck:
    """Each reading with a value names an instrument of the register, in calibration on the
    day of the work; a value outside the instrument's range for its quantity is not
    accepted."""
    day = work_day(package, results)
    readings = {r.id: r for r in package.readings()}
    known = [i.id for i in register.instruments]
    out = InstrumentCheck()
    for reading_id, measured in results.readings.items():
        if measured.value is None or reading_id not in readings:
            continue
        where = ("readings", reading_id, "instrument")
        if measured.instrument is None:
            out.problems.append(Mismatch(where, f"{reading_id}: name the instrument it was "
                                         f"read with (its id in the instrument register: "
                                         f"{', '.join(known)})"))
            continue
        instrument = register.instrument(measured.instrument)
        if instrument is None:
            out.problems.append(Mismatch(where, f"instrument {measured.instrument!r} is not in "
                                         f"the instrument register"
                                         f"{did_you_mean(measured.instrument, known)}"))
            continue
        if day > instrument.calibration_due:
            out.problems.append(Mismatch(where, f"{instrument.id} ({instrument.kind.value}, "
                                         f"serial {instrument.serial}) was out of calibration "
                                         f"on {day}: its calibration held until "
                                         f"{instrument.calibration_due}; a reading taken with "
                                         "it is not accepted (retake it with a calibrated "
                                         "instrument)"))
            continue
        reading = readings[reading_id]
        kind = UNIT_KIND.get(reading.unit)
        if kind is None:
            continue  # a ratio or count: no range to hold it to
        span = instrument.range_for(kind)
        if span is None:
            out.not_accepted[reading_id] = (f"{instrument.id} ({instrument.kind.value}) does "
                                            f"not measure {KINDS[kind].name}")
            continue
        try:
            value = measured_value(reading, measured.value)
        except UnitProblem:
            continue  # check_results has said so already
        if not span.low <= value <= span.high:
            def end(si: float, kind: str = kind) -> str:
                return format_ohms(si) if kind == "resistance" else format_quantity(
                    si, KINDS[kind].si)
            out.not_accepted[reading_id] = (
                f"{format_quantity(value, reading.unit)} is outside the range of "
                f"{instrument.id} ({end(span.low)} to {end(span.high)})")
    return out


def check_instrument_register(register: InstrumentRegister) -> list[Mismatch]:
    """An id belongs to one instrument: readings name it."""
    seen: dict[str, int] = {}
    problems = []
    for index, instrument in enumerate(register.instruments):
        if instrument.id in seen:
            problems.append(Mismatch(("instruments", index, "id"),
                                     f"instrument id {instrument.id!r} is given twice: "
                                     "readings name an instrument by its id",
                                     related=("instruments", seen[instrument.id], "id")))
        else:
            seen[instrument.id] = index
    return problems


def lock_holder_mismatches(register: CrewRegister, results: Results) -> list[Mismatch]:
    """Each person a lock names (who applied, removed, handed over or took over a lock, on a
    point or a lock box) is a person of the crew register: a personal lock is one worker's."""
    named: list[tuple[tuple[str | int, ...], str]] = []

    def collect(where: tuple[str | int, ...], applied_by: str | None, removed_by: str | None,
                transfers: Iterable[LockTransfer]) -> None:
        for field_name, who in (("applied_by", applied_by), ("removed_by", removed_by)):
            if who is not None:
                named.append(((*where, field_name), who))
        for index, transfer in enumerate(transfers):
            named.append(((*where, "transfers", index, "from_holder"), transfer.from_holder))
            named.append(((*where, "transfers", index, "to_holder"), transfer.to_holder))

    scopes: list[tuple[tuple[str | int, ...], Results | FinalTestResults]] = [((), results)]
    scopes += [(("final_tests", key), final) for key, final in results.final_tests.items()]
    for base, scope in scopes:
        for device, lock in scope.isolation.items():
            if lock.lock is not None:
                collect((*base, "isolation", device), lock.applied_by, lock.removed_by,
                        lock.transfers)
    for box_id, box in results.lock_boxes.items():
        for number, personal in box.personal_locks.items():
            collect(("lock_boxes", box_id, "personal_locks", number), personal.applied_by,
                    personal.removed_by, personal.transfers)
    known = [p.name for p in register.people]
    return [Mismatch(where, f"{who!r} is not in the crew register (give their id or their "
                            f"name as the register has it){did_you_mean(who, known)}")
            for where, who in named if find_person(register, who) is None]
