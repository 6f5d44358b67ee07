"""Concurrent writers and killed writers: nothing committed is lost, nothing is corrupted.

Real processes, not threads: each writer is a fresh Python with its own connection, the
way two technicians' laptops or two shell commands would share a store file, or several
vessels and supervisors an office database. Each writer prints a record's number only
after ``append`` has returned (after COMMIT), so a printed number is an acknowledgement.
The tests through the interface run on both backends (a temporary SQLite file, a
database of their own on the suite's PostgreSQL server). Data is invented.
"""

from __future__ import annotations

import datetime as dt
import os
import random
import signal
import subprocess
import sys
from pathlib import Path

import pytest

from workpack.store import SQLiteStore, open_store

WRITER = r"""
import datetime as dt
import sys

from workpack.store import open_store

location, plant, name, count = sys.argv[1], sys.argv[2], sys.argv[3], int(sys.argv[4])
t0 = dt.datetime(2026, 12, 2, 8, 0, tzinfo=dt.UTC)
with open_store(location, plant=plant) as store:
    print("ready", flush=True)
    if sys.stdin.readline() != "go\n":
        sys.exit(3)
    for i in range(count):
        record = store.append(
            package_id=f"WP-{name}-{i % 7:02d}", package_sha256="5e" * 32,
            results={"writer": name, "i": i, "S2.R1": {"value_ohm": 1.0e8 + i}},
            recorded_by=f"writer {name}", recorded_at=t0 + dt.timedelta(seconds=i),
            verdict="pass")
        print(record.sequence, flush=True)
"""

# Waits for "go", then opens (creating) the store and appends a few records.
CREATOR = r"""
import datetime as dt
import sys

from workpack.store import SQLiteStore

sys.stdin.readline()
with SQLiteStore(sys.argv[1]) as store:
    for i in range(20):
        store.append(package_id="WP-new", package_sha256="5e" * 32, results={"i": i},
                     recorded_by=sys.argv[2], verdict="pass",
                     recorded_at=dt.datetime(2026, 12, 2, 8, i, tzinfo=dt.UTC))
"""

# Opens a write transaction, inserts the next record without committing, says so, waits.
HALF_WRITE = r"""
import sqlite3
import sys
import time
from dataclasses import astuple

from workpack.store._chain import StoredRow, next_row

conn = sqlite3.connect(sys.argv[1], isolation_level=None)
conn.execute("BEGIN IMMEDIATE")
last = conn.execute("SELECT * FROM records ORDER BY sequence DESC LIMIT 1").fetchone()
row = next_row(StoredRow(*last), package_id="WP-half", package_sha256="5e" * 32,
               results_json="{}", recorded_by="half", recorded_at="2026-12-02T09:00:00.000000Z",
               supersedes=None, verdict="pass")
conn.execute("INSERT INTO records VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)", astuple(row))
print("inserted", flush=True)
time.sleep(60)
"""


PLANT = "MV Skerry Lantern"


@pytest.fixture(params=["sqlite", "postgresql"])
def location(request: pytest.FixtureRequest, tmp_path: Path) -> str:
    """An empty records store (for PLANT) on each backend."""
    if request.param == "sqlite":
        path = tmp_path / "records.sqlite"
        SQLiteStore(path, plant=PLANT).close()
        return str(path)
    url: str = request.getfixturevalue("pg_fresh_url")
    return url


def start_writer(location: str | Path, name: str, count: int,
                 plant: str = PLANT) -> subprocess.Popen[str]:
    proc = subprocess.Popen([sys.executable, "-c", WRITER, str(location), plant, name,
                             str(count)],
                            stdin=subprocess.PIPE, stdout=subprocess.PIPE, text=True)
    assert proc.stdout is not None and proc.stdout.readline() == "ready\n"
    return proc


def run_together(writers: dict[str, subprocess.Popen[str]]) -> dict[str, list[int]]:
    """Start every writer at once; the record numbers each acknowledged, in its order."""
    for proc in writers.values():
        assert proc.stdin is not None
        proc.stdin.write("go\n")
        proc.stdin.flush()
    acknowledged: dict[str, list[int]] = {}
    for name, proc in writers.items():
        out, _ = proc.communicate(timeout=300)
        assert proc.returncode == 0
        acknowledged[name] = [int(line) for line in out.split()]
    return acknowledged


def test_two_processes_writing_500_each_give_1000_chained_records(location: str) -> None:
    """Writers serialize on the write lock: every record lands once, the chain holds."""
    acknowledged = run_together({name: start_writer(location, name, 500)
                                 for name in ("port", "starboard")})
    with open_store(location, plant=PLANT, create=False) as store:
        result = store.verify()
        assert result.ok and result.count == 1000, result.message
        records = list(store.records())
    assert [r.sequence for r in records] == list(range(1, 1001))
    assert sorted(acknowledged["port"] + acknowledged["starboard"]) == list(range(1, 1001))
    for name, numbers in acknowledged.items():
        mine = [r for r in records if r.recorded_by == f"writer {name}"]
        assert [r.sequence for r in mine] == numbers  # each writer's own order is kept
        assert [r.results["i"] for r in mine] == list(range(500))


def test_three_processes_creating_one_new_store_agree(tmp_path: Path) -> None:
    """Racing to create the same file gives one store, not a refusal or a second schema."""
    path = tmp_path / "new.sqlite"
    procs = [subprocess.Popen([sys.executable, "-c", CREATOR, str(path), name],
                              stdin=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
             for name in ("a", "b", "c")]
    for proc in procs:
        assert proc.stdin is not None
        proc.stdin.write("go\n")
        proc.stdin.flush()
    for proc in procs:
        _, err = proc.communicate(timeout=60)
        assert proc.returncode == 0, err
    with SQLiteStore(path, create=False) as store:
        result = store.verify()
    assert result.ok and result.count == 60, result.message


def test_eight_writers_on_four_plants_into_one_postgresql_store(pg_fresh_url: str) -> None:
    """Two writers per plant, all at once: every plant's chain whole, nothing lost, and each
    plant's numbers exactly the ones its writers were given."""
    plants = ["MV Aster", "MV Birch", "Quarry Cedar", "Plant Dune"]
    writers = {f"{plant}/{side}": start_writer(pg_fresh_url, f"{plant}/{side}", 150, plant)
               for plant in plants for side in ("day", "night")}
    acknowledged = run_together(writers)
    for plant in plants:
        with open_store(pg_fresh_url, plant=plant, create=False) as store:
            result = store.verify()
            assert result.ok and result.count == 300 and result.guards_intact, result.message
            records = list(store.records())
        mine = acknowledged[f"{plant}/day"] + acknowledged[f"{plant}/night"]
        assert sorted(mine) == [r.sequence for r in records] == list(range(1, 301))
        for side in ("day", "night"):
            own = [r for r in records if r.recorded_by == f"writer {plant}/{side}"]
            assert [r.sequence for r in own] == acknowledged[f"{plant}/{side}"]
            assert [r.results["i"] for r in own] == list(range(150))


def kill_mid_burst(location: str | Path, after: int) -> tuple[list[int], int]:
    """Start a long burst, kill -9 it after ``after`` acknowledgements; the acked numbers."""
    proc = start_writer(location, "burst", 1_000_000)
    assert proc.stdin is not None and proc.stdout is not None
    proc.stdin.write("go\n")
    proc.stdin.flush()
    acknowledged: list[int] = []
    while len(acknowledged) < after:
        line = proc.stdout.readline()
        assert line.endswith("\n"), "writer stopped early"
        acknowledged.append(int(line))
    os.kill(proc.pid, signal.SIGKILL)
    rest = proc.stdout.read()  # lines printed before the kill landed are acknowledged too
    acknowledged.extend(int(line) for line in rest.split("\n")[:-1] if line)
    proc.stdout.close()
    proc.stdin.close()
    return acknowledged, proc.wait(timeout=30)


def test_a_writer_killed_mid_burst_loses_no_acknowledged_record(location: str) -> None:
    """kill -9 three times during bursts: all acknowledged records stay, the chain verifies."""
    rnd = random.Random(20261202)
    all_acknowledged: list[int] = []
    for _ in range(3):
        acknowledged, status = kill_mid_burst(location, rnd.randint(150, 400))
        assert status == -signal.SIGKILL
        all_acknowledged += acknowledged
        with open_store(location, plant=PLANT, create=False) as store:
            result = store.verify()
            assert result.ok, result.message
            stored = {r.sequence: r for r in store.records()}
        assert set(all_acknowledged) <= set(stored)
        # Each of the three kills may leave one commit it never printed.
        assert len(stored) <= len(all_acknowledged) + 3
        for sequence in acknowledged:
            assert stored[sequence].recorded_by == "writer burst"


def test_a_write_killed_before_commit_leaves_the_store_as_it_was(tmp_path: Path) -> None:
    """An uncommitted insert dies with its process; the lock is freed for the next writer."""
    path = tmp_path / "records.sqlite"
    with SQLiteStore(path) as store:
        for i in range(3):
            store.append(package_id="WP-1", package_sha256="5e" * 32, results={"i": i},
                         recorded_by="x",
                         recorded_at=dt.datetime(2026, 12, 2, 8, i, tzinfo=dt.UTC),
                         verdict="pass")
        head = store.head()
    proc = subprocess.Popen([sys.executable, "-c", HALF_WRITE, str(path)],
                            stdout=subprocess.PIPE, text=True)
    assert proc.stdout is not None and proc.stdout.readline() == "inserted\n"
    proc.kill()
    proc.wait(timeout=30)
    proc.stdout.close()
    with SQLiteStore(path, create=False, busy_timeout_s=5) as store:
        assert store.verify(anchor=head).ok and store.head() == head
        assert [r.sequence for r in store.records()] == [1, 2, 3]
        assert "WP-half" not in store.latest_per_package()
