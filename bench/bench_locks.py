"""Time the lock register over a year of records: `workpack locks` (every lock on now) and
the check `record` makes (the new record's lock numbers against the plant's records).

20,000 records are made in memory from a real payload (tests/fixtures/records-v1,
record-6: two locks each), with their own lock numbers and ISO times; one in fifty keeps
its locks on. Only the register's reading of the payloads is timed, not the store's SQL
(bench_store.py times that). Both filters must give what reading every payload gives.

Run: .venv/bin/python bench/bench_locks.py [records]
"""

from __future__ import annotations

import datetime as dt
import json
import sys
import time
from dataclasses import dataclass
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from workpack.lockregister import check_record_locks, locks_on, stored_locks  # noqa: E402

RECORDS = 20_000
TARGET_S = 1.0  # status and locks answer within a second (issue 12)


@dataclass(frozen=True)
class Record:
    sequence: int
    package_id: str
    supersedes: int | None
    results_json: str
    recorded_at: dt.datetime


def year_of_records(count: int) -> list[Record]:
    fixture = ROOT / "tests" / "fixtures" / "records-v1" / "record-6.json"
    payload = json.loads(fixture.read_text(encoding="utf-8"))
    start = dt.datetime(2026, 1, 1, 8, 0)
    records = []
    for i in range(count):
        day = start + dt.timedelta(hours=i * 24 * 365 // count)
        off = f"{day + dt.timedelta(hours=6):%Y-%m-%d %H:%M}"
        for n, lock in enumerate(payload["results"]["isolation"].values()):
            kept_on = i % 50 == 0
            lock.update(lock=f"L-{i}-{n}", applied_at=f"{day:%Y-%m-%d %H:%M}",
                        removed_by=None if kept_on else lock["applied_by"],
                        removed_at=None if kept_on else off)
        text = json.dumps({**payload, "payload_version": 3}, sort_keys=True,
                          separators=(",", ":"), ensure_ascii=False)
        records.append(Record(i + 1, f"WP-{i:05d}", None, text, day))
    return records


def timed(action):  # type: ignore[no-untyped-def]
    start = time.perf_counter()
    value = action()
    return time.perf_counter() - start, value


def main(count: int) -> int:
    records = year_of_records(count)
    every_s, every = timed(lambda: locks_on(stored_locks(records)))
    on_s, on = timed(lambda: locks_on(stored_locks(records, on_only=True)))
    new = stored_locks(records[-2:])  # a record's locks, as if new
    check_s, problems = timed(lambda: check_record_locks(
        new, [], stored_locks(records[:-2], numbered={u.lock for u in new})))
    assert on == every, "the on-only filter changed the answer"
    assert problems == [], problems
    print(f"{count} records, {len(every)} locks on")
    print(f"  every payload read:        {every_s:6.2f} s")
    print(f"  workpack locks (on only):  {on_s:6.2f} s   target < {TARGET_S:g} s")
    print(f"  record's lock check:       {check_s:6.2f} s   target < {TARGET_S:g} s")
    return 0 if max(on_s, check_s) < TARGET_S else 1


if __name__ == "__main__":
    sys.exit(main(int(sys.argv[1]) if len(sys.argv) > 1 else RECORDS))
