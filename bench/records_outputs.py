"""Everything the records commands print and write, for a byte-for-byte before/after check.

Not a benchmark and not a test: a change that should not alter behaviour (a refactoring of
how records are written and read) is run through this twice, once on the old code and
once on the new, and the two folders compared with ``cmp``::

    python bench/records_outputs.py OUT_DIR [--workpack .venv/bin/workpack]
                                            [--store OLD_STORE.sqlite]

It plans the demo vessel's day, fills in most of its packages (invented values: passes,
a failing insulation reading corrected by a second record, a search that ends at a final
test, a job left incomplete, a lock left on), records them, and keeps every command's
output: record, verify, closeout of every record, audit (HTML and PDF), the records,
readings and due tables, and the next day's plan made with those records. With
``--store``, the records are not made: the given store (written by the other version of
the code) is read instead, so the new code is shown to read old records into the same
outputs. The store the run wrote is kept as OUT_DIR/records.sqlite for that purpose.
"""

from __future__ import annotations

import argparse
import copy
import json
import shutil
import subprocess
import sys
from pathlib import Path
from typing import Any

import yaml

ROOT = Path(__file__).resolve().parent.parent
PLANT = ROOT / "plants" / "demo-vessel.yaml"
FINDINGS = ROOT / "plants" / "demo-vessel-findings.yaml"
DAY = "2026-12-02"


def run(workpack: str, out: Path, name: str, *args: str) -> None:
    """Run one command; keep its status, stdout and stderr as OUT/NAME.txt."""
    done = subprocess.run([workpack, *args], capture_output=True, text=True, check=False,
                          cwd=out)
    (out / f"{name}.txt").write_text(f"exit {done.returncode}\n--- stdout\n{done.stdout}"
                                     f"--- stderr\n{done.stderr}", encoding="utf-8")


def readings_of(package: dict[str, Any]) -> dict[str, dict[str, Any]]:
    found: dict[str, dict[str, Any]] = {}

    def walk(value: Any) -> None:
        if isinstance(value, dict):
            if "unit" in value and "id" in value and "what" in value:
                found[value["id"]] = value
            for item in value.values():
                walk(item)
        elif isinstance(value, list):
            for item in value:
                walk(item)

    walk(package)
    return found


def value_for(unit: str, low: bool) -> tuple[Any, Any]:
    """An invented reading in ``unit`` (and a temperature where one is asked)."""
    if unit == "MΩ":
        return ("6 MΩ" if low else "40 MΩ"), 30
    if unit == "V":
        return 253, None
    if unit == "":
        return 2.4, None
    return "1", None


def fill_scope(scope: dict[str, Any], *, remove_locks: bool = True) -> None:
    """Ticks every step, applies (and removes) every lock, proves everything dead."""
    for key in ("tester_proven_before", "tester_proven_after"):
        if key in scope:
            scope[key] = True
    for n, (device, lock) in enumerate((scope.get("isolation") or {}).items(), start=1):
        lock.update({"lock": f"L-{n:02d}", "tag": f"T-{n:02d}", "applied_by": "S. Quayle",
                     "applied_at": "08:10"})
        if remove_locks or n > 1:
            lock.update({"removed_by": "S. Quayle", "removed_at": "15:40"})
        del device
    for pairs in (scope.get("proving_dead") or {}).values():
        for pair in pairs:
            pairs[pair] = 0
    for section in ("steps", "restoration"):
        for step in (scope.get(section) or {}).values():
            step["done"] = True


def fill(template: dict[str, Any], package: dict[str, Any], *, signed: bool = True,
         low: bool = False, remove_locks: bool = True,
         final: str | None = None) -> dict[str, Any]:
    sheet = copy.deepcopy(template)
    if signed:
        sheet.update({"completed_by": "S. Quayle", "supervisor": "R. Tamsin",
                      "completed_on": DAY})
    fill_scope(sheet, remove_locks=remove_locks)
    finals = sheet.get("final_tests") or {}
    for final_id in list(finals):
        if final_id == final:
            fill_scope(finals[final_id])
        else:
            del finals[final_id]
    readings = readings_of(package)
    wanted = set(readings) if final is None else {
        r for r in readings if not r.startswith("F") or r.startswith(f"{final}.")}
    for reading_id, entry in (sheet.get("readings") or {}).items():
        if reading_id not in wanted:
            continue
        value, temperature = value_for(readings[reading_id]["unit"],
                                       low and reading_id.endswith("R2"))
        entry["value"] = value
        if "temperature" in entry:
            entry["temperature"] = temperature
    return sheet


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("out", type=Path)
    parser.add_argument("--workpack", default=str(ROOT / ".venv" / "bin" / "workpack"))
    parser.add_argument("--store", type=Path, help="read this store instead of recording")
    args = parser.parse_args(argv)
    out: Path = args.out.resolve()
    if out.exists():
        shutil.rmtree(out)
    out.mkdir(parents=True)
    w = str(Path(args.workpack).resolve())
    run(w, out, "plan", "plan", str(PLANT), str(FINDINGS), "--crew-hours", "40",
        "--out", "issued")
    issued = out / "issued"
    db = out / "records.sqlite"
    twins = {p.stem: p for p in sorted(issued.glob("WP-*.json"))}
    if args.store is not None:
        shutil.copyfile(args.store, db)
    else:
        plans: list[tuple[str, dict[str, Any], list[str]]] = []
        for stem, twin in twins.items():
            package = json.loads(twin.read_text(encoding="utf-8"))
            number = stem.rsplit("-", 1)[1]
            run(w, out, f"template-{number}", "results-template", str(twin),
                "--out", f"template-{number}.yaml")
            template = yaml.safe_load((out / f"template-{number}.yaml").read_text("utf-8"))
            rule = package["origin"]["rule"]
            if rule == "low-insulation":  # failed, then corrected
                plans.append((stem, fill(template, package, low=True),
                              ["--followups", "tomorrow.yaml"]))
                plans.append((stem, fill(template, package), ["--supersedes", "LAST"]))
            elif package.get("final_tests"):  # a search that ends at its first final test
                first = package["final_tests"][0]["id"]
                sheet = fill(template, package, final=first)
                sheet["ground_found_at"] = package["final_tests"][0]["isolation"][0]["device"]
                plans.append((stem, sheet, []))
            elif rule == "tripped-breaker":  # not signed: incomplete
                plans.append((stem, fill(template, package, signed=False), []))
            elif rule == "periodic-insulation-survey":  # a lock left on
                plans.append((stem, fill(template, package, remove_locks=False), []))
            else:
                plans.append((stem, fill(template, package), []))
        for n, (stem, sheet, extra) in enumerate(plans, start=1):
            path = out / f"results-{n:02d}.yaml"
            path.write_text(yaml.safe_dump(sheet, sort_keys=False, allow_unicode=True),
                            encoding="utf-8")
            extra = [str(n - 1) if x == "LAST" else x for x in extra]
            run(w, out, f"record-{n:02d}", "record", str(twins[stem]), path.name,
                "--db", db.name, "--at", f"{DAY}T{8 + n:02d}:30+00:00", *extra)
    run(w, out, "verify", "verify", "--db", db.name)
    for stem, twin in twins.items():
        run(w, out, f"closeout-{stem}", "closeout", str(twin), "--db", db.name,
            "--out", f"closeout-{stem}.pdf")
    run(w, out, "closeout-record-1", "closeout", str(twins[_stem_of_record(db, 1)]),
        "--db", db.name, "--record", "1", "--out", "closeout-record-1.pdf")
    run(w, out, "audit", "audit", "--db", db.name, "--packages", "issued",
        "--as-of", "2026-12-10", "--out", "audit")
    run(w, out, "export", "export", "--plant", str(PLANT), "--db", db.name,
        "--as-of", "2026-12-03", "--out", "tables")
    run(w, out, "export-xlsx", "export", "--plant", str(PLANT), "--db", db.name,
        "--as-of", "2026-12-03", "--out", "office.xlsx")
    run(w, out, "replan", "plan", str(PLANT), str(FINDINGS), "--crew-hours", "40",
        "--date", "2026-12-03", "--db", db.name, "--out", "next-day")
    return 0


def _stem_of_record(db: Path, sequence: int) -> str:
    import sqlite3

    with sqlite3.connect(db) as conn:
        found = conn.execute("SELECT package_id FROM records WHERE sequence = ?",
                             (sequence,)).fetchone()
    return str(found[0])


if __name__ == "__main__":
    sys.exit(main())
