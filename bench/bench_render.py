"""Benchmark: render 100 work packages to PDF and compare with bare reportlab.

Targets (issue 5): within 1.5× the time of bare reportlab laying out the same number
of pages of comparable tables and text; peak memory under 500 MB.
Run: .venv/bin/python bench/bench_render.py [packages]
"""

from __future__ import annotations

import io
import resource
import sys
import time
import tracemalloc
from pathlib import Path

from pypdf import PdfReader

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent / "tests"))
sys.path.insert(0, str(HERE))

from baseline_reportlab import render_pages  # noqa: E402
from samplepackage import sample_package  # noqa: E402

from workpack.render.pdf import render_package  # noqa: E402


def main(count: int = 100) -> None:
    packages = [sample_package(i) for i in range(1, count + 1)]
    render_package(packages[0])  # warm up: fonts registered, modules imported
    render_pages(1, "warm-up")

    started = time.perf_counter()
    outputs = [render_package(p) for p in packages]
    ours = time.perf_counter() - started
    pages = [len(PdfReader(io.BytesIO(data)).pages) for data in outputs]

    started = time.perf_counter()
    for number, count_pages in enumerate(pages):
        render_pages(count_pages, f"DOC-{number:03d}")
    bare = time.perf_counter() - started

    tracemalloc.start()
    for package in packages[:10]:
        render_package(package)
    _, traced_peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    rss_peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024  # KiB on Linux

    total_pages = sum(pages)
    print(f"packages: {count}, pages: {total_pages}, "
          f"bytes: {sum(map(len, outputs)) / 1e6:.1f} MB")
    print(f"workpack renderer:  {ours:.2f} s  ({ours / count * 1000:.0f} ms per package, "
          f"{ours / total_pages * 1000:.0f} ms per page)")
    print(f"bare reportlab:     {bare:.2f} s  (same page count)")
    print(f"ratio:              {ours / bare:.2f}×  (target ≤ 1.5×)")
    print(f"peak memory:        {rss_peak_mb:.0f} MB resident for the whole run; "
          f"{traced_peak / 1e6:.1f} MB traced Python peak over 10 renders (target < 500 MB)")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 100)
