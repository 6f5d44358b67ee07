"""Time the PostgreSQL records store: 40 plants × 2,500 records, then verify.

An office store filled as a fleet would fill it: WRITERS processes append at once, each
looking after a share of the plants and appending to them in turn, one transaction per
record (plant lock, chain read, insert, and the insert guard recomputing the chain hash
in SQL). Then ``verify`` of one plant's chain, of every plant's, and a read of one plant's
records with their latest effective record per package (what ``audit`` reads).

The server is a private one started for the run (tests/pgserver.py) with PostgreSQL's
durable defaults (fsync on, synchronous_commit on), so each record costs a WAL flush and
the insert figure depends on the disk; ``--url`` points the run at another, empty store
database instead (set up with ``workpack store init`` first). Records are invented.

Run: .venv/bin/python bench/bench_store_pg.py [--plants 40] [--records 2500] [--writers 4]
"""

from __future__ import annotations

import argparse
import datetime as dt
import multiprocessing
import random
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests"))

from workpack.store import open_store, set_up_store  # noqa: E402

T0 = dt.datetime(2026, 1, 5, 6, 0, tzinfo=dt.UTC)


def results(rnd: random.Random, i: int) -> dict:
    readings = {f"S{s}.R{r}": {"value_ohm": round(rnd.uniform(1e6, 5e8), 1),
                               "temperature_c": round(rnd.uniform(15, 45), 1)}
                for s in (2, 3) for r in (1, 2, 3)}
    readings.update({f"X1.R{r}": {"value_v": round(rnd.uniform(240, 265), 1)} for r in (1, 2, 3)})
    return {"readings": readings, "ticked": ["S1", "S4", "S5"], "complete": True,
            "remarks": f"invented entry {i}: terminal box dry, glands tight"}


def plant_name(n: int) -> str:
    return f"Bench Vessel {n:02d}"


def writer(url: str, plants: list[int], per_plant: int) -> None:
    """Append ``per_plant`` records to each of ``plants``, taking the plants in turn."""
    rnd = random.Random(plants[0])
    stores = {n: open_store(url, plant=plant_name(n)) for n in plants}
    latest: dict[tuple[int, str], int] = {}
    try:
        for i in range(per_plant):
            for n, store in stores.items():
                package = f"WP-{n:02d}-{i // 20:04d}-{i % 7:02d}"
                correct = (n, package) in latest and rnd.random() < 0.02
                record = store.append(package_id=package, package_sha256=f"{n:02x}" * 32,
                                      results=results(rnd, i), recorded_by=f"crew {n:02d}",
                                      recorded_at=T0 + dt.timedelta(hours=3 * i, minutes=n),
                                      verdict="passed" if rnd.random() < 0.9 else "failed",
                                      supersedes=latest[(n, package)] if correct else None)
                latest[(n, package)] = record.sequence
    finally:
        for store in stores.values():
            store.close()


def run(url: str, plants: int, per_plant: int, writers: int) -> None:
    shares = [list(range(w, plants, writers)) for w in range(writers)]
    start = time.perf_counter()
    procs = [multiprocessing.Process(target=writer, args=(url, share, per_plant))
             for share in shares if share]
    for proc in procs:
        proc.start()
    for proc in procs:
        proc.join()
        if proc.exitcode != 0:
            raise SystemExit(f"a writer failed with exit code {proc.exitcode}")
    insert_s = time.perf_counter() - start
    total = plants * per_plant

    with open_store(url, plant=plant_name(0), create=False) as store:
        start = time.perf_counter()
        one = store.verify()
        verify_one_s = time.perf_counter() - start
        start = time.perf_counter()
        read = list(store.records())
        effective = store.latest_per_package()
        read_one_s = time.perf_counter() - start
        listed = store.plants()
    assert one.ok and one.count == per_plant, one.message

    start = time.perf_counter()
    counted = 0
    for name in listed:
        with open_store(url, plant=name, create=False) as store:
            result = store.verify()
            assert result.ok and result.guards_intact, result.message
            counted += result.count
    verify_all_s = time.perf_counter() - start
    assert counted == total and len(listed) == plants

    print(f"insert  {total:7d} records, {plants} plants, {writers} writer processes, one "
          f"transaction each: {insert_s:7.1f} s ({total / insert_s:6.0f} records/s)")
    print(f"verify  one plant, {one.count} records:              {verify_one_s:7.2f} s "
          f"({verify_one_s / one.count * 1e6:5.0f} µs per record)")
    print(f"verify  all {plants} plants, {counted} records:          {verify_all_s:7.2f} s "
          f"({verify_all_s / counted * 1e6:5.0f} µs per record)")
    print(f"read    one plant's {len(read)} records and the latest of its "
          f"{len(effective)} packages: {read_one_s:5.2f} s")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--plants", type=int, default=40)
    parser.add_argument("--records", type=int, default=2500, help="records per plant")
    parser.add_argument("--writers", type=int, default=4, help="writer processes")
    parser.add_argument("--url", help="an empty records store database to use instead of a "
                                      "private server")
    args = parser.parse_args()
    if args.url:
        run(args.url, args.plants, args.records, args.writers)
        return
    from pgserver import find_bindir, running_server

    bindir = find_bindir()
    if bindir is None:
        raise SystemExit("no PostgreSQL server binaries found (install postgresql-15, or "
                         "give --url)")
    with running_server(bindir, durable=True) as server:
        url = server.create_database("bench")
        set_up_store(url)
        run(url, args.plants, args.records, args.writers)


if __name__ == "__main__":
    main()
