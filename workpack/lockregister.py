"""The live lock register: which locks are on now, where, whose, since when, for which job.

Pure functions over the locks that recorded results state (``LockUse``); the shell reads
them from the records store and the results file. Two kinds of lock, as OSHA 29 CFR
1910.147 describes them:

- a *point* lock on an isolation point (a device), applied by one person;
- a *personal* lock that a worker puts on a group lock box (1910.147(f)(3), group
  lockout): the point locks' keys go into the box (``LockBox.keys``), each worker of the
  group adds their own lock to the box, and the point locks come off only after every
  personal lock is off the box.

A lock changes hands only by a recorded transfer at a shift or personnel change
(1910.147(f)(4)): from whom, to whom, at what time. The holder now is the last transfer's
receiver, or the one who applied it.

A job's lock is the same lock from record to record of that job (same job, kind, place and
lock number): the latest record that names it says its state. A lock a later record leaves
out stays as last recorded: a lock leaves the register only by a recorded removal, never
by being forgotten (common practice: a lock is on until someone signs it off).

Times are the plant's clock time as written on the tag (``2026-12-02 08:15``), or with a
zone (``2026-12-02T08:15+01:00``). Times with a zone are compared in UTC, times without as
written; ``check_record_locks`` refuses a record mixing both.
"""

from __future__ import annotations

import datetime as dt
import json
import re
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from enum import StrEnum
from typing import Protocol

from workpack.checks import Mismatch, Path
from workpack.model.results import LockBoxRecord, LockRecord, LockTransfer, Results
from workpack.records import StoredRecord, may_leave_locks, read_for_locks, superseded_by


class _FinalLocked(Protocol):
    @property
    def isolation(self) -> Mapping[str, LockRecord]: ...


class _Locked(Protocol):
    """What ``results_locks`` reads: full results, or the records' lock view of them."""

    @property
    def isolation(self) -> Mapping[str, LockRecord]: ...
    @property
    def final_tests(self) -> Mapping[str, _FinalLocked]: ...
    @property
    def lock_boxes(self) -> Mapping[str, LockBoxRecord]: ...


class LockKind(StrEnum):
    """point: a lock on an isolation point (a device); personal: a worker's own lock on a
    group lock box."""

    point = "point"
    personal = "personal"


@dataclass(frozen=True)
class Transfer:
    """Lockout protection handed over at a shift or personnel change."""

    from_holder: str
    to_holder: str
    at: dt.datetime
    where: Path = ()


@dataclass(frozen=True)
class LockUse:
    """One lock as one record of a job states it."""

    plant: str
    job: str
    lock: str  # the lock's number or mark, unique on the plant while it is on
    kind: LockKind
    place: str  # the device id (point lock) or the lock box's number (personal lock)
    holder: str  # who applied it
    applied_at: dt.datetime | None  # None: an older record's time that is not a time
    removed_at: dt.datetime | None = None
    removed_by: str | None = None
    transfers: tuple[Transfer, ...] = ()
    box: str | None = None  # a point lock's key is in this group lock box
    sequence: int = 0  # the record's place in the store: a later state wins
    where: Path = ()  # the lock's field path in the results file, for messages
    # An older record's removal written in words ("15:40"): removed, at a time not known.
    removed_untimed: bool = False

    @property
    def removed(self) -> bool:
        return self.removed_at is not None or self.removed_untimed

    @property
    def identity(self) -> tuple[str, str, LockKind, str, str]:
        return (self.plant, self.job, self.kind, self.place, self.lock)


@dataclass(frozen=True)
class LockBox:
    """A group lock box of one job: how many point-lock keys were put in it."""

    plant: str
    job: str
    box: str
    keys: int
    where: Path = ()


@dataclass(frozen=True)
class LockOn:
    """A lock that is on: where, whose, since when, for which job."""

    plant: str
    job: str
    lock: str
    kind: LockKind
    place: str
    holder: str  # who holds it now (after any transfers)
    applied_by: str
    applied_at: dt.datetime | None  # None: not recorded as a time (an older record)
    held_since: dt.datetime | None  # when the holder took it (applied_at, or the last transfer)
    box: str | None


def instant(when: dt.datetime) -> dt.datetime:
    """A time made comparable: a zoned time in UTC, a plain one as written."""
    if when.tzinfo is not None and when.utcoffset() is not None:
        return when.astimezone(dt.UTC).replace(tzinfo=None)
    return when


def parse_lock_time(value: object) -> dt.datetime | str:
    """A date and time from a sheet (ISO 8601: ``2026-12-02 08:15``, ``2026-12-02T08:15``,
    with or without seconds and zone), or why it is not one."""
    if isinstance(value, dt.datetime):
        return value
    if isinstance(value, dt.date):
        return f"{value} is a date: give the time too, e.g. {value} 08:15"
    text = str(value).strip()
    try:
        when = dt.datetime.fromisoformat(text)
    except ValueError:
        return f"{text!r} is not a date and time: write it as YYYY-MM-DD HH:MM, e.g. " \
               "2026-12-02 08:15"
    if len(text) <= len("YYYY-MM-DD"):
        return f"{text} is a date: give the time too, e.g. {text} 08:15"
    return when


def shown(when: dt.datetime | None) -> str:
    """A lock time as printed: to the minute, with its zone where it has one."""
    if when is None:
        return "a time not recorded"
    return when.isoformat(sep=" ", timespec="minutes")


def holder_at(use: LockUse,
              when: dt.datetime | None = None) -> tuple[str, dt.datetime | None]:
    """Who holds ``use`` at ``when`` (None: after every recorded transfer), and since when."""
    holder, since = use.holder, use.applied_at
    for transfer in use.transfers:
        if when is not None and instant(transfer.at) > instant(when):
            break
        holder, since = transfer.to_holder, transfer.at
    return holder, since


def latest_states(uses: Iterable[LockUse]) -> list[LockUse]:
    """Each lock's latest recorded state (the highest ``sequence``; a tie goes to the later
    in the input), in the order first seen."""
    latest: dict[tuple[str, str, LockKind, str, str], LockUse] = {}
    for use in uses:
        known = latest.get(use.identity)
        if known is None or use.sequence >= known.sequence:
            latest[use.identity] = use
    return list(latest.values())


def _is_on(use: LockUse, at: dt.datetime | None) -> bool:
    if at is not None and use.applied_at is not None and instant(use.applied_at) > instant(at):
        return False
    if use.removed_at is not None and at is not None:
        return instant(use.removed_at) > instant(at)
    return not use.removed


def locks_on(uses: Iterable[LockUse], at: dt.datetime | None = None) -> list[LockOn]:
    """Every lock on at ``at`` (None: now, i.e. not yet recorded removed), from the locks
    the recorded results state, sorted by plant, point locks before personal ones, place
    and lock number."""
    found = []
    for use in latest_states(uses):
        if not _is_on(use, at):
            continue
        holder, since = holder_at(use, at)
        found.append(LockOn(use.plant, use.job, use.lock, use.kind, use.place, holder,
                            use.holder, use.applied_at, since, use.box))
    return sorted(found, key=lambda on: (on.plant, on.kind is LockKind.personal, on.place,
                                         on.lock, on.job))


def _overlap(first: LockUse, second: LockUse) -> bool:
    """True when the two uses are on at some common time (removal is the end, exclusive)."""
    def start(use: LockUse) -> dt.datetime:
        return instant(use.applied_at) if use.applied_at is not None else dt.datetime.min

    def end(use: LockUse) -> dt.datetime:
        if use.removed_at is not None:
            return instant(use.removed_at)
        # Removed at a time not known (an older record): it is taken to clash with nothing.
        return dt.datetime.min if use.removed_untimed else dt.datetime.max
    return start(first) < end(second) and start(second) < end(first)


def _where(use: LockUse) -> str:
    what = "lock box" if use.kind is LockKind.personal else ""
    place = f"{what} {use.place}".strip()
    return f"on {place} for job {use.job}"


def check_times(use: LockUse) -> list[Mismatch]:
    """Applied, each transfer and removed in order; each transfer from the holder then."""
    problems = []
    if use.applied_at is None:
        return []  # an older record's text: nothing to put in order
    last, last_what = use.applied_at, "applied"
    holder = use.holder
    for number, transfer in enumerate(use.transfers):
        if instant(transfer.at) < instant(last):
            problems.append(Mismatch(transfer.where or use.where,
                                     f"transfer at {shown(transfer.at)} is before the lock "
                                     f"was {last_what} ({shown(last)})"))
        if transfer.from_holder != holder:
            problems.append(Mismatch(transfer.where or use.where,
                                     f"transfer {number + 1} is from {transfer.from_holder!r}, "
                                     f"but the lock is held then by {holder!r}"))
        if transfer.to_holder == transfer.from_holder:
            problems.append(Mismatch(transfer.where or use.where,
                                     f"transfer {number + 1} is from {holder!r} to the same "
                                     "person"))
        last, last_what, holder = transfer.at, "transferred", transfer.to_holder
    if use.removed_at is not None and instant(use.removed_at) < instant(last):
        problems.append(Mismatch(use.where + ("removed_at",),
                                 f"removed at {shown(use.removed_at)}, before it was "
                                 f"{last_what} ({shown(last)})"))
    return problems


def check_record_locks(uses: Sequence[LockUse], boxes: Sequence[LockBox],
                       earlier: Iterable[LockUse]) -> list[Mismatch]:
    """Why the locks of a new record cannot go into the register (empty: they can).

    ``uses`` and ``boxes`` are the new record's; ``earlier`` every lock the plant's stored
    records state. A lock number is on one place at a time across the plant's jobs; within
    the record times are in order and all with a zone or all without; a point lock in a
    lock box comes off only after every personal lock on that box; a box holds as many
    keys as point locks name it.
    """
    problems: list[Mismatch] = []
    times = [(use.where, when) for use in uses
             for when in (use.applied_at, use.removed_at, *(t.at for t in use.transfers))
             if when is not None]
    odd = [where for where, when in times
           if (when.tzinfo is not None) != (times[0][1].tzinfo is not None)]
    if odd:
        problems.append(Mismatch(odd[0],
                                 "some lock times of this record carry a time zone and some "
                                 "do not: write them all one way"))
        return problems
    for use in uses:
        problems += check_times(use)
    # One lock number, one place: within the record.
    for index, use in enumerate(uses):
        for other in uses[:index]:
            if other.lock == use.lock and other.identity != use.identity and _overlap(use, other):
                problems.append(Mismatch(use.where + ("lock",),
                                         f"lock {use.lock} is also {_where(other)}: a lock "
                                         "number is on one place at a time",
                                         related=other.where + ("lock",)))
    # ... and across the plant's other jobs, as the store has them now.
    here = {use.identity for use in uses}
    for use in uses:
        for other in latest_states(earlier):
            if (other.plant == use.plant and other.lock == use.lock
                    and other.identity not in here and _overlap(use, other)):
                holder, _ = holder_at(other)
                until = ("" if other.removed_at is None
                         else f" until {shown(other.removed_at)}")
                problems.append(Mismatch(use.where + ("lock",),
                                         f"lock {use.lock} is {_where(other)} since "
                                         f"{shown(other.applied_at)}{until} (held by "
                                         f"{holder}): a lock number is on one place at a "
                                         "time"))
    problems += _check_boxes(uses, boxes)
    return problems


def _check_boxes(uses: Sequence[LockUse], boxes: Sequence[LockBox]) -> list[Mismatch]:
    problems: list[Mismatch] = []
    named = {box.box: box for box in boxes}
    for use in uses:
        place = use.box if use.kind is LockKind.point else use.place
        if place is not None and place not in named:
            field = "box" if use.kind is LockKind.point else "lock"
            problems.append(Mismatch(use.where + (field,),
                                     f"lock box {place!r} is not among this record's lock "
                                     f"boxes{_known(named)}"))
    for box in boxes:
        in_box = [u for u in uses if u.kind is LockKind.point and u.box == box.box]
        personal = [u for u in uses if u.kind is LockKind.personal and u.place == box.box]
        if len(in_box) != box.keys:
            problems.append(Mismatch(box.where + ("keys",),
                                     f"lock box {box.box} holds {box.keys} key(s), but "
                                     f"{len(in_box)} point lock(s) put their key in it"))
        if in_box and not personal:
            problems.append(Mismatch(box.where,
                                     f"lock box {box.box} has no personal lock on it: each "
                                     "worker of the group puts their own lock on the box"))
        for point in in_box:
            if point.removed_at is None:
                continue
            for worker in personal:
                if worker.removed_at is None or instant(worker.removed_at) > instant(
                        point.removed_at):
                    holder, _ = holder_at(worker)
                    problems.append(Mismatch(
                        point.where + ("removed_at",),
                        f"lock {point.lock} on {point.place} is removed while {holder}'s "
                        f"lock {worker.lock} is still on lock box {box.box}: the point "
                        "locks come off after every personal lock",
                        related=worker.where))
    return problems


def _known(named: dict[str, LockBox]) -> str:
    return f" ({', '.join(sorted(named))})" if named else " (it names none)"


# --- from results and records -----------------------------------------------------------------


@dataclass
class _Reader:
    """Turns one results' locks into ``LockUse``s; strict at record time (every time must
    be a time), lenient for stored records (an older record's text becomes None)."""

    plant: str
    job: str
    sequence: int
    strict: bool
    problems: list[Mismatch]

    def time(self, text: str | None, where: Path) -> dt.datetime | None:
        if text is None:
            return None
        when = parse_lock_time(text)
        if isinstance(when, str):
            if self.strict:
                self.problems.append(Mismatch(where, when))
            return None
        return when

    def transfers(self, given: Sequence[LockTransfer], where: Path) -> tuple[Transfer, ...]:
        found = []
        for index, transfer in enumerate(given):
            at = self.time(transfer.at, (*where, "transfers", index, "at"))
            if at is not None:
                found.append(Transfer(transfer.from_holder, transfer.to_holder, at,
                                      (*where, "transfers", index)))
        return tuple(found)

    def use(self, kind: LockKind, lock: str, place: str, applied_by: str | None,
            applied_at: str | None, removed_by: str | None, removed_at: str | None,
            transfers: Sequence[LockTransfer], box: str | None, where: Path) -> LockUse | None:
        if self.strict:
            for needed, given, field in (("applied_by", applied_by, "who applied it"),
                                         ("applied_at", applied_at, "when it was applied")):
                if given is None:
                    self.problems.append(Mismatch((*where, needed), f"lock {lock}: give "
                                                  f"{field} ({needed})"))
            if (removed_by is None) != (removed_at is None):
                missing = "removed_at" if removed_at is None else "removed_by"
                self.problems.append(Mismatch((*where, missing), f"lock {lock}: a removal "
                                              "names who removed it and when (removed_by "
                                              "and removed_at)"))
        applied = self.time(applied_at, (*where, "applied_at"))
        removed = self.time(removed_at, (*where, "removed_at"))
        moved = self.transfers(transfers, where)
        if applied_by is None:
            return None
        untimed = removed is None and (removed_by is not None or removed_at is not None)
        return LockUse(self.plant, self.job, lock, kind, place, applied_by, applied,
                       removed, removed_by, moved, box, self.sequence, where, untimed)


def results_locks(results: Results | _Locked, plant: str, job: str, *, sequence: int = 0,
                  strict: bool = True) -> tuple[list[LockUse], list[LockBox], list[Mismatch]]:
    """The locks and lock boxes one job's results state, and (``strict``) why some cannot
    be read: a time that is not one, a lock without who or when."""
    reader = _Reader(plant, job, sequence, strict, [])
    uses: list[LockUse] = []
    scopes: list[tuple[Path, Mapping[str, LockRecord]]] = [((), results.isolation)]
    scopes += [(("final_tests", final_id), final.isolation)
               for final_id, final in results.final_tests.items()]
    for base, isolation in scopes:
        for device, record in isolation.items():
            if record.lock is None:
                continue
            use = reader.use(LockKind.point, record.lock, device, record.applied_by,
                             record.applied_at, record.removed_by, record.removed_at,
                             record.transfers, record.box, (*base, "isolation", device))
            if use is not None:
                uses.append(use)
    boxes = []
    for number, box in results.lock_boxes.items():
        where: Path = ("lock_boxes", number)
        boxes.append(LockBox(plant, job, number, box.keys, where))
        for lock, personal in box.personal_locks.items():
            use = reader.use(LockKind.personal, lock, number, personal.applied_by,
                             personal.applied_at, personal.removed_by, personal.removed_at,
                             personal.transfers, None, (*where, "personal_locks", lock))
            if use is not None:
                uses.append(use)
    return uses, boxes, reader.problems




def stored_locks(records: Iterable[StoredRecord], *, on_only: bool = False,
                 numbered: Iterable[str] | None = None) -> list[LockUse]:
    """Every lock the effective records state (a superseded record states nothing); a
    record whose payload cannot be read is left out (``workpack verify`` names it).

    Reading every payload of a year is slow, so two filters skip, on the payload's text
    alone, records that cannot matter: ``on_only`` those with no lock left unremoved (for
    ``locks_on`` now), ``numbered`` those that name none of these lock numbers (for
    ``check_record_locks``, which compares only locks of one number). Both keep every
    record that could matter: they only spare the parsing of the others.
    """
    chain = list(records)
    superseded = superseded_by(chain)
    # One pass over each payload for every number (a regular expression alternation).
    wanted = None if numbered is None else re.compile(
        "|".join(sorted({re.escape(json.dumps(n, ensure_ascii=ascii)[1:-1])
                         for n in numbered for ascii in (True, False)})) or "(?!)")
    uses: list[LockUse] = []
    for record in chain:
        if record.sequence in superseded:
            continue
        text = record.results_json
        if on_only and not may_leave_locks(text):
            continue
        if wanted is not None and not wanted.search(text):
            continue
        view = read_for_locks(record)
        if view is None:
            continue
        found, _, _ = results_locks(view.results, view.evaluation.plant, record.package_id,
                                    sequence=record.sequence, strict=False)
        uses += found
    return uses
