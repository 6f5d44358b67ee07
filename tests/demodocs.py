"""Every document the demo vessel's day gives, as PDF bytes: the packages and the day
sheet as planned, then each package filled in, recorded in a temporary SQLite store and
closed out, and the audit of that store.

The results are invented (layout data, not check values): every step done, every lock
applied and removed, each reading at a value that passes its limit, and one insulation
test of the day made twice (as found below its minimum, then after drying out); the
ground search ends at its first final test, which finds the ground.
"""

from __future__ import annotations

import datetime as dt
import json
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from workpack.audit import build_audit
from workpack.evaluate import evaluate
from workpack.model.package import Reading, WorkPackage
from workpack.model.results import FinalTestResults, LockRecord, MeasuredValue, Results
from workpack.numbers import format_quantity
from workpack.records import record_payload
from workpack.render.audit_pdf import render_audit_pdf
from workpack.render.closeout import render_closeout
from workpack.store import open_store, package_sha256


def _passing(reading: Reading) -> str:
    """A value that meets the reading's limit, in its unit (as a technician writes it)."""
    limit = reading.limit
    if reading.expected is not None:
        value = reading.expected
    elif limit is not None and limit.low is not None and limit.high is not None:
        value = (limit.low + limit.high) / 2
    elif limit is not None and limit.low is not None:
        value = limit.low * 40
    elif limit is not None and limit.high is not None:
        value = limit.high / 2
    else:
        value = 254.0 if reading.unit == "V" else 1.0
    return format_quantity(value, reading.unit) if reading.unit else f"{value:g}"


def _locks(points: Any) -> dict[str, LockRecord]:
    return {p.device: LockRecord(lock=f"L-{p.order:02d}", tag=f"T-{p.order:02d}",
                                 applied_by="S. Quayle", applied_at="08:10",
                                 removed_by="S. Quayle", removed_at="15:40")
            for p in points}


def filled(package: WorkPackage, *, low_first: bool = False) -> Results:
    """Everything done and passing; a ground search ends at its first final test, whose
    first test finds the ground (below its minimum, its locks left on). ``low_first``:
    the package's first insulation reading is written below its minimum."""
    readings: dict[str, MeasuredValue] = {}
    final_tests: dict[str, FinalTestResults] = {}
    found = None
    for step in (*package.steps, *package.restoration):
        if step.optional:
            continue
        if package.final_tests and step.search_outcome == "not_found":
            continue
        for r in step.readings:
            readings[r.id] = MeasuredValue(value=_passing(r),
                                           temperature=25.0 if r.needs_temperature else None)
    if low_first:
        first = next(r for r in package.readings()
                     if r.limit is not None and r.limit.low is not None and r.unit == "MΩ")
        readings[first.id] = MeasuredValue(
            value=format_quantity(first.limit.low / 4, "MΩ"),  # type: ignore[union-attr]
            temperature=25.0 if first.needs_temperature else None)
    if package.final_tests:
        final = package.final_tests[0]
        tests = [r for s in final.steps for r in s.readings]
        for n, r in enumerate(tests):
            low = r.limit.low if r.limit is not None and r.limit.low is not None else 1e6
            value = low / 50 if n == 0 else low * 40
            readings[r.id] = MeasuredValue(value=format_quantity(value, r.unit),
                                           temperature=20.0 if r.needs_temperature else None)
        found = tests[0].element or final.feeder
        locks = {device: lock.model_copy(update={"removed_by": None, "removed_at": None})
                 for device, lock in _locks(final.isolation).items()}
        final_tests[final.id] = FinalTestResults(
            tester_proven_before=True, tester_proven_after=True, isolation=locks,
            proving_dead={i: dict.fromkeys(d.pairs, "0")
                          for i, d in enumerate(final.proving_dead, start=1)},
            steps={s.number: {"done": True} for s in final.steps},  # type: ignore[misc]
            locks_left_on="ground found: stays isolated for its repair")
    return Results(
        package=package.id, completed_by="S. Quayle", supervisor="R. Tamsin",
        completed_on=package.date, tester_proven_before=True, tester_proven_after=True,
        isolation=_locks(package.isolation),
        proving_dead={i: dict.fromkeys(d.pairs, "0")
                      for i, d in enumerate(package.proving_dead, start=1)},
        steps={s.number: {"done": True} for s in package.steps  # type: ignore[misc]
               if not s.optional},
        restoration={s.number: {"done": True} for s in package.restoration  # type: ignore[misc]
                     if not (package.final_tests and s.search_outcome == "not_found")},
        readings=readings, ground_found_at=found, final_tests=final_tests,
        remarks="Invented results for the layout test.")


def demo_documents(plan: Path, store_path: Path,
                   standards: Mapping[str, Any]) -> dict[str, bytes]:
    """File name → PDF bytes of every document of the planned demo day in ``plan``."""
    docs = {p.name: p.read_bytes() for p in sorted(plan.glob("*.pdf"))}
    packages = {p.stem: WorkPackage.model_validate(json.loads(p.read_text(encoding="utf-8")))
                for p in sorted(plan.glob("WP-*.json"))}
    day = next(iter(packages.values())).date
    with open_store(store_path, plant=next(iter(packages.values())).plant) as store:
        hour = 8
        for package in packages.values():
            insulation = any(r.unit == "MΩ" and r.limit is not None and r.limit.low
                             for r in package.readings())
            runs = [True, False] if insulation and not package.final_tests else [False]
            for low_first in runs:  # as found, then after the work, the same day
                results = filled(package, low_first=low_first)
                evaluation = evaluate(package, results, standards)
                at = dt.datetime.combine(day, dt.time(hour, 0), tzinfo=dt.UTC)
                hour += 1
                record = store.append(
                    package_id=package.id, package_sha256=package_sha256(package),
                    results=record_payload(results, evaluation), recorded_by="office",
                    recorded_at=at, verdict=evaluation.verdict)
            docs[f"closeout-{package.id}.pdf"] = render_closeout(package, evaluation, record)
        report = build_audit(store.records(), packages, store.verify(), since=None,
                             until=None, plant=None, as_of=day, standards=standards)
    docs["audit.pdf"] = render_audit_pdf(report)
    return docs
