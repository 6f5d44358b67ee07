"""Benchmark: workpack's package PDFs against bare reportlab laying out the same content.

Issue 15's target: rendering within 1.5× the floor on the same page content; peak memory
under 500 MB. The packages are the planner's own output: the demo vessel's day (as
``make demo`` plans it) and the first packages of a generated plant's day. The floor is
``floor_reportlab.render``: the same content from the same package, bare reportlab.

Both sides render every package once per round, in CPU seconds of this process; rounds
alternate which side goes first, and the ratio is taken per round (the median is judged,
so a busy moment on the shared machine falls on both sides or on one round only). Both
outputs are checked: every PDF opens, workpack's carries its package id, every isolation
device and reading id, and its form fields; the floor's page count is near workpack's (a
floor that lays out much less is no floor). A package that does not render is reported.
Exits 1 on a missed target or a wrong output.

Run: .venv/bin/python bench/bench_render.py [--rounds 4] [--generated 15]
"""

from __future__ import annotations

import argparse
import io
import statistics
import sys
import tracemalloc
from pathlib import Path
from typing import Any

from pypdf import PdfReader

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(HERE))

from benchdata import DAY, cpu_timed, findings_yaml, plant_yaml, scale_plant_data  # noqa: E402
from floor_reportlab import render as floor_render  # noqa: E402

from workpack.electrical import available_code_sets, load_code_set  # noqa: E402
from workpack.loading import (  # noqa: E402
    load_findings,
    load_findings_text,
    load_plant,
    load_plant_text,
    load_ruleset,
    load_weights,
)
from workpack.plan import plan_day  # noqa: E402
from workpack.render.pdf import render_package  # noqa: E402

TARGET = 1.5
MEMORY_LIMIT_MB = 500.0


def planned_packages(generated: int) -> tuple[list[Any], list[str]]:
    """The demo vessel's packages and the first ``generated`` of a generated plant's day
    that render; the packages that do not render, named."""
    rules = load_ruleset(ROOT / "rules")
    weights = load_weights(ROOT / "rules" / "search-weights.yaml")
    standards = {name: load_code_set(name) for name in available_code_sets()}
    plant, topology = load_plant(ROOT / "plants" / "demo-vessel.yaml")
    findings = load_findings(ROOT / "plants" / "demo-vessel-findings.yaml", topology)
    assert findings.date is not None
    import datetime as dt

    demo = plan_day(topology, findings, findings.date + dt.timedelta(days=1), rules,
                    standards, weights, 40.0).packages
    data = scale_plant_data(1000)
    plant, topology = load_plant_text(plant_yaml(data), "generated.yaml")
    findings = load_findings_text(findings_yaml(data, 60), "findings.yaml", topology)
    day = plan_day(topology, findings, DAY, rules, standards, weights, 40.0).packages
    chosen: list[Any] = []
    failed: list[str] = []
    for package in day:
        if len(chosen) == generated:
            break
        if package.job_kind == "locate_ground":
            continue  # the demo's two ground searches stand for these
        try:
            render_package(package)
            chosen.append(package)
        except Exception as error:  # noqa: BLE001 - a crash is a finding here
            failed.append(f"{package.id} of the generated plant ({package.job_kind} on "
                          f"{package.item}) does not render: {type(error).__name__}")
    return [*demo, *chosen], failed


def check_outputs(packages: list[Any], ours: list[bytes], floor: list[bytes]) -> tuple[
        int, int, list[str]]:
    """Page totals of both sides, and what is wrong with workpack's PDFs."""
    problems = []
    our_pages = floor_pages = 0
    for package, pdf, bare in zip(packages, ours, floor, strict=True):
        reader = PdfReader(io.BytesIO(pdf))
        our_pages += len(reader.pages)
        floor_pages += len(PdfReader(io.BytesIO(bare)).pages)
        text = " ".join(page.extract_text() or "" for page in reader.pages)
        words = [package.id, *(p.device for p in package.isolation),
                 *(r.id for s in package.steps for r in s.readings)]
        missing = [w for w in words if w not in text]
        if missing:
            problems.append(f"{package.id}: the PDF does not show {missing[:5]}")
        if not reader.get_fields():
            problems.append(f"{package.id}: the PDF has no form fields")
    return our_pages, floor_pages, problems


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rounds", type=int, default=4)
    parser.add_argument("--generated", type=int, default=15)
    args = parser.parse_args()
    packages, problems = planned_packages(args.generated)
    render_package(packages[0])  # warm up both: fonts registered, modules imported
    floor_render(packages[0])
    ratios = []
    ours_s: list[float] = []
    floor_s: list[float] = []
    ours: list[bytes] = []
    floor: list[bytes] = []
    for round_number in range(args.rounds):
        sides = [("ours", render_package), ("floor", floor_render)]
        if round_number % 2:
            sides.reverse()
        seconds = {}
        for name, render in sides:
            seconds[name], outputs = cpu_timed(lambda r=render: [r(p) for p in packages])
            if name == "ours":
                ours = outputs
            else:
                floor = outputs
        ours_s.append(seconds["ours"])
        floor_s.append(seconds["floor"])
        ratios.append(seconds["ours"] / seconds["floor"])
    our_pages, floor_pages, wrong = check_outputs(packages, ours, floor)
    problems += wrong
    if not 0.75 <= floor_pages / our_pages <= 1.33:
        problems.append(f"the floor laid out {floor_pages} pages for workpack's {our_pages}: "
                        "not the same content")
    tracemalloc.start()
    for package in packages[:10]:
        render_package(package)
    _, traced_peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    ratio = statistics.median(ratios)
    print(f"packages: {len(packages)} planned (the demo vessel's day and a generated "
          f"plant's); pages: workpack {our_pages}, floor {floor_pages}")
    ours_median, floor_median = statistics.median(ours_s), statistics.median(floor_s)
    print(f"workpack: {ours_median:.2f} s CPU per round ({ours_median / our_pages * 1000:.1f} "
          f"ms per page); floor: {floor_median:.2f} s ({floor_median / floor_pages * 1000:.1f} "
          f"ms per page)")
    print(f"ratio per round: {', '.join(f'{r:.2f}' for r in ratios)}; median {ratio:.2f}× "
          f"(target ≤ {TARGET:g}×)")
    print(f"peak traced memory over 10 renders: {traced_peak / 1e6:.1f} MB "
          f"(target < {MEMORY_LIMIT_MB:g} MB)")
    if ratio > TARGET:
        problems.append(f"rendering takes {ratio:.2f}× the floor (target ≤ {TARGET:g}×)")
    if traced_peak / 1e6 >= MEMORY_LIMIT_MB:
        problems.append(f"rendering peaks at {traced_peak / 1e6:.0f} MB")
    for problem in problems:
        print(f"MISSED: {problem}")
    return 1 if problems else 0


if __name__ == "__main__":
    raise SystemExit(main())
