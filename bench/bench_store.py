"""Time the records store: 10,000 appends (one transaction each), reads, and verify.

Records are invented: 40 packages, results of a dozen readings each, one correction in
fifty. Each append is its own BEGIN IMMEDIATE … COMMIT with synchronous=FULL, so the
figure includes one WAL fsync per record; it depends on the disk far more than on
Python. The store is a temporary file, removed afterwards.

Run: .venv/bin/python bench/bench_store.py [records]
"""

from __future__ import annotations

import datetime as dt
import random
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from workpack.store import SQLiteStore  # noqa: E402

RECORDS = 10_000
T0 = dt.datetime(2026, 12, 2, 6, 0, tzinfo=dt.UTC)


def results(rnd: random.Random, i: int) -> dict:
    readings = {f"S{s}.R{r}": {"value_ohm": round(rnd.uniform(1e6, 5e8), 1),
                               "temperature_c": round(rnd.uniform(15, 45), 1)}
                for s in (2, 3) for r in (1, 2, 3)}
    readings.update({f"X1.R{r}": {"value_v": round(rnd.uniform(240, 265), 1)} for r in (1, 2, 3)})
    return {"readings": readings, "ticked": ["S1", "S4", "S5"], "complete": True,
            "remarks": f"invented entry {i}: terminal box dry, glands tight"}


def main(count: int) -> None:
    rnd = random.Random(2026)
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "records.sqlite"
        with SQLiteStore(path) as store:
            latest: dict[str, int] = {}
            start = time.perf_counter()
            for i in range(count):
                package = f"WP-2026-12-{i % 40:02d}"
                correct = package in latest and rnd.random() < 0.02
                record = store.append(package_id=package, package_sha256=f"{i % 40:02x}" * 32,
                                      results=results(rnd, i), recorded_by="bench",
                                      recorded_at=T0 + dt.timedelta(seconds=30 * i),
                                      verdict="pass" if rnd.random() < 0.9 else "fail",
                                      supersedes=latest[package] if correct else None)
                latest[package] = record.sequence
            append_s = time.perf_counter() - start

            start = time.perf_counter()
            read = sum(1 for _ in store.records())
            read_s = time.perf_counter() - start

            start = time.perf_counter()
            effective = store.latest_per_package()
            latest_s = time.perf_counter() - start

            start = time.perf_counter()
            result = store.verify()
            verify_s = time.perf_counter() - start
        size_mb = sum(p.stat().st_size for p in Path(folder).iterdir()) / 1e6

    assert result.ok and result.count == count == read, result.message
    assert len(effective) == 40
    print(f"append  {count:6d} records, one transaction each: {append_s:6.2f} s "
          f"({append_s / count * 1e6:5.0f} µs per record, {count / append_s:6.0f} per s)")
    print(f"read    {read:6d} records with parsed results:    {read_s:6.2f} s")
    print(f"latest  effective record of {len(effective)} packages:     {latest_s:6.3f} s")
    print(f"verify  {result.count:6d} records, whole chain:          {verify_s:6.2f} s "
          f"({verify_s / count * 1e6:5.0f} µs per record)")
    print(f"file    {size_mb:.1f} MB with its WAL; {result.message.split(': ', 1)[1][:40]}…")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else RECORDS)
