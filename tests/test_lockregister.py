"""The live lock register: locks on now, and the checks a new record's locks must pass."""

from __future__ import annotations

import datetime as dt

from workpack.lockregister import (
    LockBox,
    LockKind,
    LockUse,
    Transfer,
    check_record_locks,
    holder_at,
    locks_on,
    parse_lock_time,
)


def at(text: str) -> dt.datetime:
    when = parse_lock_time(text)
    assert isinstance(when, dt.datetime), when
    return when


def point(lock: str, device: str, job: str = "WP-A", applied: str = "2026-12-02 08:15",
          removed: str | None = None, holder: str = "LCS-0107", sequence: int = 0,
          box: str | None = None, transfers: tuple[Transfer, ...] = ()) -> LockUse:
    return LockUse("SKL", job, lock, LockKind.point, device, holder, at(applied),
                   at(removed) if removed else None, None, transfers, box, sequence,
                   ("isolation", device))


def personal(lock: str, box: str, holder: str, removed: str | None = None,
             job: str = "WP-A") -> LockUse:
    return LockUse("SKL", job, lock, LockKind.personal, box, holder, at("2026-12-02 08:30"),
                   at(removed) if removed else None, None, (), None, 0,
                   ("lock_boxes", box, "personal_locks", lock))


def test_sheet_times_are_read_and_words_are_refused() -> None:
    """ISO date-times as written on a tag read; "after lunch" and a bare date do not."""
    assert parse_lock_time("2026-12-02 08:15") == dt.datetime(2026, 12, 2, 8, 15)
    assert parse_lock_time("2026-12-02T08:15+01:00") == dt.datetime(
        2026, 12, 2, 8, 15, tzinfo=dt.timezone(dt.timedelta(hours=1)))
    assert "is not a date and time" in str(parse_lock_time("after lunch"))
    assert "is a date: give the time too" in str(parse_lock_time("2026-12-02"))
    assert "is a date" in str(parse_lock_time(dt.date(2026, 12, 2)))


def test_a_later_record_of_the_job_removes_the_lock_and_an_omission_does_not() -> None:
    """The latest record naming a lock says its state; leaving it out keeps it on."""
    first = [point("L-07", "CB-AC1", sequence=1), point("L-08", "CB-AC2", sequence=1)]
    later = [point("L-07", "CB-AC1", removed="2026-12-03 10:00", sequence=2)]
    on = locks_on(first + later)
    assert [(lock.lock, lock.place, lock.job) for lock in on] == [("L-08", "CB-AC2", "WP-A")]
    # Order of the input does not matter, the sequence does.
    assert locks_on(later + first) == on


def test_locks_on_at_a_past_time_includes_those_removed_since() -> None:
    uses = [point("L-07", "CB-AC1", removed="2026-12-02 11:40")]
    assert [o.lock for o in locks_on(uses, at("2026-12-02 10:00"))] == ["L-07"]
    assert locks_on(uses, at("2026-12-02 11:40")) == []
    assert locks_on(uses, at("2026-12-02 08:00")) == []


def test_a_transfer_at_shift_change_moves_the_holder() -> None:
    """29 CFR 1910.147(f)(4): the oncoming worker holds the lock from the transfer."""
    handed = Transfer("LCS-0107", "LCS-0212", at("2026-12-02 20:00"))
    use = point("L-07", "CB-AC1", transfers=(handed,))
    assert holder_at(use, at("2026-12-02 19:59")) == ("LCS-0107", at("2026-12-02 08:15"))
    [on] = locks_on([use])
    assert (on.holder, on.applied_by, on.held_since) == ("LCS-0212", "LCS-0107",
                                                         at("2026-12-02 20:00"))
    assert check_record_locks([use], [], []) == []


def test_one_lock_number_on_two_breakers_in_one_record_is_refused() -> None:
    problems = check_record_locks([point("L-07", "CB-AC1"), point("L-07", "CB-AC2")], [], [])
    assert [p.message for p in problems] == [
        "lock L-07 is also on CB-AC1 for job WP-A: a lock number is on one place at a time"]
    assert problems[0].path == ("isolation", "CB-AC2", "lock")


def test_a_lock_still_on_for_another_job_is_refused_and_a_removed_one_is_not() -> None:
    earlier = [point("L-07", "CB-AC1", job="WP-A", sequence=1)]
    new = [point("L-07", "CB-FW2", job="WP-B", applied="2026-12-03 09:00")]
    [problem] = check_record_locks(new, [], earlier)
    assert problem.message.startswith("lock L-07 is on CB-AC1 for job WP-A since "
                                      "2026-12-02 08:15 (held by LCS-0107)")
    removed = earlier + [point("L-07", "CB-AC1", job="WP-A", removed="2026-12-02 17:00",
                               sequence=2)]
    assert check_record_locks(new, [], removed) == []


def test_the_same_job_recorded_again_is_not_a_second_use_of_its_lock() -> None:
    earlier = [point("L-07", "CB-AC1", sequence=1)]
    again = [point("L-07", "CB-AC1", removed="2026-12-03 10:00")]
    assert check_record_locks(again, [], earlier) == []


def test_removal_before_application_is_refused() -> None:
    [problem] = check_record_locks(
        [point("L-07", "CB-AC1", applied="2026-12-02 11:40", removed="2026-12-02 08:15")],
        [], [])
    assert problem.message == ("removed at 2026-12-02 08:15, before it was applied "
                               "(2026-12-02 11:40)")
    assert problem.path == ("isolation", "CB-AC1", "removed_at")


def test_a_transfer_from_someone_not_holding_the_lock_is_refused() -> None:
    wrong = Transfer("LCS-0999", "LCS-0212", at("2026-12-02 20:00"))
    [problem] = check_record_locks([point("L-07", "CB-AC1", transfers=(wrong,))], [], [])
    assert "but the lock is held then by 'LCS-0107'" in problem.message


def test_mixed_zoned_and_plain_times_are_refused() -> None:
    use = point("L-07", "CB-AC1", removed="2026-12-02T11:40Z")
    [problem] = check_record_locks([use], [], [])
    assert "some lock times of this record carry a time zone" in problem.message


def test_group_lockout_box_keys_and_personal_locks() -> None:
    """29 CFR 1910.147(f)(3): point locks' keys in the box, each worker's lock on the box,
    the point locks off only after the last personal lock."""
    points = [point("L-07", "CB-AC1", box="B1", removed="2026-12-02 16:00"),
              point("L-08", "CB-AC2", box="B1", removed="2026-12-02 16:00")]
    workers = [personal("P-1", "B1", "LCS-0107", removed="2026-12-02 15:30"),
               personal("P-2", "B1", "LCS-0212", removed="2026-12-02 15:45")]
    box = LockBox("SKL", "WP-A", "B1", 2, ("lock_boxes", "B1"))
    assert check_record_locks(points + workers, [box], []) == []

    short = LockBox("SKL", "WP-A", "B1", 3, ("lock_boxes", "B1"))
    assert [p.message for p in check_record_locks(points + workers, [short], [])] == [
        "lock box B1 holds 3 key(s), but 2 point lock(s) put their key in it"]

    late = [workers[0], personal("P-2", "B1", "LCS-0212", removed="2026-12-02 16:30")]
    messages = [p.message for p in check_record_locks(points + late, [box], [])]
    assert messages == [f"lock {lock} on {device} is removed while LCS-0212's lock P-2 is "
                        "still on lock box B1: the point locks come off after every "
                        "personal lock" for lock, device in (("L-07", "CB-AC1"),
                                                             ("L-08", "CB-AC2"))]

    unboxed = check_record_locks(points, [], [])
    assert [p.message for p in unboxed] == [
        "lock box 'B1' is not among this record's lock boxes (it names none)"] * 2


def test_a_personal_lock_on_a_box_shows_in_the_register() -> None:
    uses = [point("L-07", "CB-AC1", box="B1"), personal("P-1", "B1", "LCS-0212")]
    assert [(o.kind, o.place, o.holder) for o in locks_on(uses)] == [
        (LockKind.point, "CB-AC1", "LCS-0107"), (LockKind.personal, "B1", "LCS-0212")]


def test_an_older_records_lock_times_in_words_still_say_on_or_off() -> None:
    """Records made before lock times were checked hold "08:10" and "15:40": a lock with a
    removal written down is off, one without is on, and neither clashes by a time."""
    from workpack.lockregister import results_locks
    from workpack.model.results import LockRecord, Results

    results = Results(package="WP-OLD", isolation={
        "CB-1": LockRecord(lock="L-1", applied_by="S. Quayle", applied_at="08:10",
                           removed_by="S. Quayle", removed_at="15:40"),
        "CB-2": LockRecord(lock="L-2", applied_by="S. Quayle", applied_at="08:10")})
    uses, _, problems = results_locks(results, "SKL", "WP-OLD", strict=False)
    assert problems == []
    assert [(o.lock, o.applied_at) for o in locks_on(uses)] == [("L-2", None)]
    strict = results_locks(results, "SKL", "WP-OLD")[2]
    assert [p.message for p in strict] == [
        "'08:10' is not a date and time: write it as YYYY-MM-DD HH:MM, e.g. 2026-12-02 08:15",
        "'15:40' is not a date and time: write it as YYYY-MM-DD HH:MM, e.g. 2026-12-02 08:15",
        "'08:10' is not a date and time: write it as YYYY-MM-DD HH:MM, e.g. 2026-12-02 08:15"]
    new = [point("L-1", "CB-9", job="WP-NEW")]
    assert check_record_locks(new, [], uses) == []
    [clash] = check_record_locks([point("L-2", "CB-9", job="WP-NEW")], [], uses)
    assert clash.message.startswith("lock L-2 is on CB-2 for job WP-OLD since a time not "
                                    "recorded (held by S. Quayle)")
