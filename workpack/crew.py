"""What the crew register says about a person at a time: qualified, may supervise, may sign.

Pure functions over a loaded ``CrewRegister``, and the register's named checks (what the
schema alone cannot see: ids and keys given twice, times out of order). The employer's
competence scheme decides who holds which qualification; these functions only read the
register.

Qualifications are held by the day: from ``granted_on`` (inclusive) to ``expires_on``
(exclusive), and not after a person's ``left_on``; the day of a time is its date as given
(pass local time for a local day). Keys are held to the second: from ``valid_from``
(inclusive) to ``revoked_at`` (exclusive).
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Iterable, Iterator
from dataclasses import dataclass
from enum import StrEnum

from workpack.checks import Mismatch
from workpack.model.crew import IMPLIES, Competence, CrewRegister, Person, Requirement
from workpack.numbers import format_quantity


def _day(at: dt.datetime | dt.date) -> dt.date:
    return at.date() if isinstance(at, dt.datetime) else at


def _volts(volts: float) -> str:
    return format_quantity(volts, "V")


def _holds(person: Person, kind: Competence, volts: float, day: dt.date) -> str | None:
    """None when ``person`` holds ``kind`` for ``volts`` on ``day``; else the nearest miss."""
    if person.left_on is not None and day > person.left_on:
        return f"{person.name} ({person.id}) left on {person.left_on}"
    misses: list[str] = []
    for held in person.qualifications:
        if held.kind != kind and kind not in IMPLIES.get(held.kind, frozenset()):
            continue
        given = "" if held.kind == kind else f" (as {held.kind.value})"
        if held.granted_on is not None and day < held.granted_on:
            misses.append(f"holds {kind.value}{given} only from {held.granted_on}")
        elif held.expires_on is not None and day >= held.expires_on:
            misses.append(f"held {kind.value}{given} until {held.expires_on}")
        elif held.up_to_volts + 1e-9 < volts:
            misses.append(f"holds {kind.value}{given} only up to {_volts(held.up_to_volts)}")
        else:
            return None
    if not misses:
        return f"{person.name} ({person.id}) does not hold {kind.value}"
    return f"{person.name} ({person.id}) " + "; ".join(sorted(set(misses)))


def competence_gap(person: Person, requirement: Requirement,
                   at: dt.datetime | dt.date) -> str | None:
    """None when ``person`` meets ``requirement`` on the day of ``at``; otherwise why not,
    in words naming the person, e.g. "S. Quayle (LCS-0107) held authorised_person until
    2026-03-01" (the job's voltage is added where the voltage is what falls short)."""
    gap = _holds(person, requirement.kind, requirement.volts, _day(at))
    if gap is not None and " up to " in gap:
        gap += f" (the work is on {_volts(requirement.volts)})"
    return gap


def qualified(person: Person, requirement: Requirement, at: dt.datetime | dt.date) -> bool:
    """True when ``person`` holds what ``requirement`` asks on the day of ``at``."""
    return competence_gap(person, requirement, at) is None


def may_supervise(person: Person, volts: float, at: dt.datetime | dt.date) -> bool:
    """True when ``person`` may supervise work on a system of ``volts`` (nominal, line to
    line) on the day of ``at``."""
    return qualified(person, Requirement(kind=Competence.supervisor, volts=volts), at)


def serves(register: CrewRegister, plant: str) -> bool:
    """True when the register is for ``plant`` (by its inventory's name), or for any plant."""
    return not register.crew.plants or plant in register.crew.plants


def signer_problems(register: CrewRegister, technician: str | None, supervisor: str | None,
                    needs: Iterable[Requirement], volts: float,
                    at: dt.datetime | dt.date, supervisor_needed: bool = True) -> list[str]:
    """Why a job's record may not be signed by these people (empty: it may).

    ``technician`` must meet every one of ``needs``; where ``supervisor_needed``, the
    supervisor must be a different person who may supervise at ``volts``. Unknown ids are
    named with the nearest known ones.
    """
    from workpack.errors import did_you_mean

    known = [p.id for p in register.people]
    problems: list[str] = []
    worker = register.person(technician) if technician else None
    if not technician:
        problems.append("no technician named")
    elif worker is None:
        problems.append(f"technician {technician!r} is not in the crew register"
                        f"{did_you_mean(technician, known)}")
    else:
        problems += [gap for need in needs if (gap := competence_gap(worker, need, at))]
    if not supervisor_needed:
        return problems
    checker = register.person(supervisor) if supervisor else None
    if not supervisor:
        problems.append("no supervisor named, and the job needs one")
    elif checker is None:
        problems.append(f"supervisor {supervisor!r} is not in the crew register"
                        f"{did_you_mean(supervisor, known)}")
    elif supervisor == technician:
        problems.append(f"{checker.name} ({checker.id}) is named as technician and as "
                        "supervisor: the job needs two people")
    else:
        need = Requirement(kind=Competence.supervisor, volts=volts)
        if (gap := competence_gap(checker, need, at)) is not None:
            problems.append(gap)
    return problems


# --- keys ---------------------------------------------------------------------------------


class KeyOutcome(StrEnum):
    """Why a key may not sign at a time (or that it may)."""

    valid = "valid"
    unknown_key = "unknown_key"
    not_yet_valid = "not_yet_valid"
    revoked = "revoked"


@dataclass(frozen=True)
class KeyRefusal:
    """A key that may not sign at the time asked, and why in words."""

    outcome: KeyOutcome
    message: str


def utc_text(when: dt.datetime) -> str:
    """An aware time as UTC text to the second, e.g. 2026-12-02T16:30:00Z."""
    if when.tzinfo is None or when.utcoffset() is None:
        raise ValueError(f"a time without a time zone: {when.isoformat()}")
    return when.astimezone(dt.UTC).replace(tzinfo=None).isoformat(timespec="seconds") + "Z"


def key_valid_at(register: CrewRegister, key_id: str, at: dt.datetime) -> Person | KeyRefusal:
    """The person whose key ``key_id`` may sign at ``at`` (aware), or why it may not."""
    from workpack.errors import did_you_mean

    found = register.key(key_id)
    if found is None:
        known = [key.id for person in register.people for key in person.keys]
        return KeyRefusal(KeyOutcome.unknown_key, f"no key {key_id!r} in the crew register"
                                                  f"{did_you_mean(key_id, known)}")
    person, key = found
    if at < key.valid_from:
        return KeyRefusal(KeyOutcome.not_yet_valid,
                          f"key {key_id} of {person.name} ({person.id}) is valid only from "
                          f"{utc_text(key.valid_from)}, not at {utc_text(at)}")
    if key.revoked_at is not None and at >= key.revoked_at:
        return KeyRefusal(KeyOutcome.revoked,
                          f"key {key_id} of {person.name} ({person.id}) was revoked at "
                          f"{utc_text(key.revoked_at)} ({key.revoked_reason}), before "
                          f"{utc_text(at)}")
    return person


# --- named checks of a register --------------------------------------------------------------


def check_unique_person_ids(register: CrewRegister) -> Iterator[Mismatch]:
    seen: dict[str, int] = {}
    for index, person in enumerate(register.people):
        if person.id in seen:
            yield Mismatch(("people", index, "id"),
                           f"person id {person.id!r} is given twice: an id belongs to one "
                           "person for good (give this person a new one)",
                           related=("people", seen[person.id], "id"))
        else:
            seen[person.id] = index


def check_unique_key_ids(register: CrewRegister) -> Iterator[Mismatch]:
    seen: dict[str, tuple[int, int]] = {}
    for index, person in enumerate(register.people):
        for number, key in enumerate(person.keys):
            if key.id in seen:
                first = seen[key.id]
                yield Mismatch(("people", index, "keys", number, "id"),
                               f"key id {key.id!r} is given twice: a key id is never reused",
                               related=("people", first[0], "keys", first[1], "id"))
            else:
                seen[key.id] = (index, number)


def check_public_key_once(register: CrewRegister) -> Iterator[Mismatch]:
    """One public key is one private key: on two entries, one person could sign as another."""
    seen: dict[bytes, tuple[int, int]] = {}
    for index, person in enumerate(register.people):
        for number, key in enumerate(person.keys):
            raw = key.public_bytes()
            if raw not in seen:
                seen[raw] = (index, number)
                continue
            first_person = register.people[seen[raw][0]]
            first_key = first_person.keys[seen[raw][1]]
            whose = ("another key of the same person" if first_person is person
                     else f"{first_person.name} ({first_person.id})'s key")
            yield Mismatch(("people", index, "keys", number, "public_key"),
                           f"this public key is also {whose} {first_key.id}: each key "
                           "belongs to one entry (create a new key pair)",
                           related=("people", seen[raw][0], "keys", seen[raw][1],
                                    "public_key"))


def check_revocation_order(register: CrewRegister) -> Iterator[Mismatch]:
    for index, person in enumerate(register.people):
        for number, key in enumerate(person.keys):
            if key.revoked_at is not None and key.revoked_at < key.valid_from:
                yield Mismatch(("people", index, "keys", number, "revoked_at"),
                               f"revoked at {utc_text(key.revoked_at)}, before it became "
                               f"valid ({utc_text(key.valid_from)})")


def check_leavers_keys_revoked(register: CrewRegister) -> Iterator[Mismatch]:
    """Someone who has left signs nothing more: each of their keys is revoked by the end of
    their last day (in UTC: the register knows no local zone)."""
    for index, person in enumerate(register.people):
        if person.left_on is None:
            continue
        end = dt.datetime.combine(person.left_on + dt.timedelta(days=1), dt.time(),
                                  tzinfo=dt.UTC)
        for number, key in enumerate(person.keys):
            if key.revoked_at is None or key.revoked_at > end:
                yield Mismatch(("people", index, "keys", number),
                               f"{person.name} left on {person.left_on}, but key {key.id} "
                               f"is not revoked by then: revoke it (`workpack key revoke`)")


CREW_CHECKS = (check_unique_person_ids, check_unique_key_ids, check_public_key_once,
               check_revocation_order, check_leavers_keys_revoked)


def check_register(register: CrewRegister) -> list[Mismatch]:
    """Every named check's findings, in file order."""
    return [found for check in CREW_CHECKS for found in check(register)]


# --- a summary for `workpack crew check` --------------------------------------------------------


@dataclass(frozen=True)
class PersonSummary:
    id: str
    name: str
    role: str
    hours_per_day: float
    qualifications: tuple[str, ...]  # "authorised_person up to 1 kV", current ones
    keys_valid: tuple[str, ...]  # key ids that may sign at the time asked
    keys_revoked: int
    left_on: dt.date | None


def summarize_register(register: CrewRegister, at: dt.datetime) -> list[PersonSummary]:
    """Each person as of ``at``: current qualifications and keys that may sign now."""
    day = _day(at)
    summaries = []
    for person in register.people:
        present = person.left_on is None or day <= person.left_on
        current = tuple(
            f"{q.kind.value} up to {_volts(q.up_to_volts)}"
            + (f" until {q.expires_on}" if q.expires_on is not None else "")
            for q in person.qualifications
            if present and (q.granted_on is None or q.granted_on <= day)
            and (q.expires_on is None or day < q.expires_on))
        valid = tuple(k.id for k in person.keys
                      if isinstance(key_valid_at(register, k.id, at), Person))
        revoked = sum(1 for k in person.keys if k.revoked_at is not None and k.revoked_at <= at)
        summaries.append(PersonSummary(person.id, person.name, person.role.value,
                                       person.hours_per_day, current, valid, revoked,
                                       person.left_on))
    return summaries
