"""Time shipping a fleet's records ashore: 40 plants × 2,500 records imported into PostgreSQL.

Each vessel's records are real ones: a windlass insulation-resistance package per job
(the test suite's sample, dated and numbered per plant), its results filled in, evaluated
and written as ``workpack record`` writes them; one record in fifty corrects the one
before it. Each plant's chain is cut into bundles of BATCH records, signed with a bench
key, and every bundle of every plant is given to one ``workpack sync import`` in a
shuffled order (so each vessel's later bundles arrive before its earlier ones and are
put in chain order by the import). Then, as an office would run them, in-process through
the command line: the same import again (which adds nothing), ``verify`` of one plant and
of all, and ``audit`` of one plant against its 2,500 issued packages.

The server is a private one started for the run (tests/pgserver.py) with PostgreSQL's
durable defaults (fsync on), so each bundle's commit costs a WAL flush; ``--url`` points
the run at another, empty store database instead (set up with ``workpack store init``).
People, plants and readings are invented.

Run: .venv/bin/python bench/bench_sync.py [--plants 40] [--records 2500] [--batch 500]
"""

from __future__ import annotations

import argparse
import contextlib
import datetime as dt
import hashlib
import io
import os
import random
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests"))

from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey  # noqa: E402
from test_audit import filled, ir_package  # noqa: E402

from workpack.cli import main as workpack  # noqa: E402
from workpack.electrical import available_code_sets, load_code_set  # noqa: E402
from workpack.evaluate import evaluate  # noqa: E402
from workpack.output import write_all  # noqa: E402
from workpack.records import record_payload  # noqa: E402
from workpack.signing import public_key_text, sign_digest  # noqa: E402
from workpack.store import canonical_json, package_sha256, plant_genesis  # noqa: E402
from workpack.store._chain import StoredRow, format_timestamp, next_row  # noqa: E402
from workpack.sync import SIGNED_AS, bundle_bytes  # noqa: E402

FIRST_DAY = dt.date(2020, 1, 6)
KEY = Ed25519PrivateKey.from_private_bytes(hashlib.sha256(b"bench exporter").digest())
EXPORTED_AT = dt.datetime(2026, 12, 20, 12, 0, tzinfo=dt.UTC)
REGISTER = f"""\
crew:
  name: bench fleet
  scheme: bench scheme
people:
  - id: B-1
    name: Bench Exporter
    role: electrical_officer
    hours_per_day: 8
    keys:
      - id: B-1-K1
        public_key: "{public_key_text(KEY)}"
        valid_from: 2020-01-01T00:00:00Z
"""


def plant_name(n: int) -> str:
    return f"Bench Vessel {n:02d}"


def vessel_chain(plant: str, count: int, standards: dict[str, Any],
                 rnd: random.Random) -> tuple[list[StoredRow], dict[str, bytes]]:
    """The plant's chain as its vessel store would hold it, and its issued packages."""
    rows: list[StoredRow] = []
    packages: dict[str, bytes] = {}
    genesis = plant_genesis(plant)
    package = None
    for i in range(count):
        correcting = package is not None and i % 50 == 49
        if not correcting:
            day = FIRST_DAY + dt.timedelta(days=i // 4)
            package = ir_package(i % 4 + 1, day, plant=plant)
            packages[f"{package.id}.json"] = package.model_dump_json(indent=2).encode()
        assert package is not None
        results = filled(package, (rnd.uniform(8, 400), rnd.uniform(8, 400), 140))
        evaluation = evaluate(package, results, standards)
        at = dt.datetime.combine(package.date, dt.time(16, i % 60), tzinfo=dt.UTC)
        rows.append(next_row(rows[-1] if rows else None, package_id=package.id,
                             package_sha256=package_sha256(package),
                             results_json=canonical_json(record_payload(results, evaluation)),
                             recorded_by="S. Quayle", recorded_at=format_timestamp(at),
                             supersedes=rows[-1].sequence if correcting else None,
                             verdict=evaluation.verdict, genesis=genesis))
    return rows, packages


def bundles_of(plant: str, rows: list[StoredRow], batch: int) -> list[bytes]:
    def sign(digest: str) -> Any:
        return sign_digest(KEY, digest, signed_as=SIGNED_AS, person="B-1", key="B-1-K1",
                           signed_at=EXPORTED_AT)

    out = []
    genesis = plant_genesis(plant)
    for start in range(0, len(rows), batch):
        after = None
        if start:
            from workpack.store import ChainHead

            after = ChainHead(rows[start - 1].sequence, rows[start - 1].chain_sha256)
        out.append(bundle_bytes(plant=plant, genesis=genesis, after=after,
                                rows=rows[start:start + batch], exported_at=EXPORTED_AT,
                                sign=sign))
    return out


class Took(float):
    """Seconds of wall-clock time, with this process's CPU seconds beside them (the
    server's work is in the wall time only): on a shared machine the two tell apart what
    workpack spent from what it waited for."""

    cpu: float

    def __str__(self) -> str:
        return f"{float(self):7.2f} s (workpack's CPU {self.cpu:6.2f} s)"


def quietly(argv: list[str]) -> tuple[Took, str]:
    """Run one workpack command in-process; its time and what it printed."""
    printed = io.StringIO()
    start, cpu = time.perf_counter(), time.process_time()
    with contextlib.redirect_stdout(printed):
        code = workpack(argv)
    took = Took(time.perf_counter() - start)
    took.cpu = time.process_time() - cpu
    if code != 0:
        raise SystemExit(f"workpack {' '.join(argv[:2])} failed ({code}):\n"
                         f"{printed.getvalue()[-2000:]}")
    return took, printed.getvalue()


def run(url: str, plants: int, per_plant: int, batch: int, folder: Path) -> None:
    standards = {name: load_code_set(name) for name in available_code_sets()}
    rnd = random.Random(2026)
    crew = folder / "crew.yaml"
    crew.write_text(REGISTER, encoding="utf-8")
    start = time.perf_counter()
    files: list[Path] = []
    for n in range(plants):
        rows, packages = vessel_chain(plant_name(n), per_plant, standards, rnd)
        if n == 0:
            write_all(folder / "packages-00", packages)
        for part, data in enumerate(bundles_of(plant_name(n), rows, batch)):
            path = folder / f"vessel-{n:02d}-{part:03d}.wpb"
            path.write_bytes(data)
            files.append(path)
    made_s = time.perf_counter() - start
    size = sum(path.stat().st_size for path in files)
    rnd.shuffle(files)
    total = plants * per_plant

    import_s, said = quietly(["sync", "import", *map(str, files), "--db", url,
                              "--crew", str(crew)])
    assert said.count(" added") == len(files), said[-500:]
    again_s, said = quietly(["sync", "import", *map(str, files), "--db", url,
                             "--crew", str(crew)])
    assert said.count(": 0 added, ") == len(files), said[-500:]

    one = plant_name(0)
    verify_one_s, said = quietly(["verify", "--db", url, "--plant", one])
    assert f"OK, {per_plant} records" in said, said
    verify_all_s, said = quietly(["verify", "--db", url])
    assert said.count(f"OK, {per_plant} records") == plants, said[-500:]
    audit_s, said = quietly(["audit", "--db", url, "--plant", one, "--packages",
                             str(folder / "packages-00"), "--as-of", "2026-12-20",
                             "--out", str(folder / "audit")])
    assert (folder / "audit" / "audit.pdf").stat().st_size > 0

    print(f"made    {total} records of {plants} plants in {len(files)} signed bundles "
          f"({size / 1e6:.1f} MB): {made_s:.1f} s (not timed below)")
    print(f"import  {total} records, {len(files)} bundles in a shuffled order, one process: "
          f"{import_s} = {total / import_s:.0f} records/s")
    print(f"import  the same bundles again (adds nothing): {again_s}")
    print(f"verify  one plant, {per_plant} records: {verify_one_s}")
    print(f"verify  all {plants} plants, {total} records: {verify_all_s}")
    print(f"audit   one plant, {per_plant} records and packages (HTML and PDF): {audit_s}")
    print(f"load average over the last 15 minutes: {os.getloadavg()[2]:.1f} "
          f"on {os.cpu_count()} cores")


def main() -> None:
    parser = argparse.ArgumentParser(description=(__doc__ or "").splitlines()[0])
    parser.add_argument("--plants", type=int, default=40)
    parser.add_argument("--records", type=int, default=2500, help="records per plant")
    parser.add_argument("--batch", type=int, default=500, help="records per bundle")
    parser.add_argument("--url", help="an empty records store database to use instead of a "
                                      "private server")
    args = parser.parse_args()
    with tempfile.TemporaryDirectory(prefix="wp-bench-sync-") as folder:
        if args.url:
            run(args.url, args.plants, args.records, args.batch, Path(folder))
            return
        from pgserver import find_bindir, running_server

        from workpack.store import set_up_store

        bindir = find_bindir()
        if bindir is None:
            raise SystemExit("no PostgreSQL server binaries found (install postgresql-15, or "
                             "give --url)")
        with running_server(bindir, durable=True) as server:
            url = server.create_database("bench")
            set_up_store(url)
            run(url, args.plants, args.records, args.batch, Path(folder))


if __name__ == "__main__":
    os.environ.setdefault("WORKPACK_KEY_PASSPHRASE", "unused: nothing is signed here")
    main()
