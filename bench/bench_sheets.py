"""Benchmark: a generated 10,000-item plant out as an asset list (XLSX and CSV) and back.

Invented data. Run: .venv/bin/python bench/bench_sheets.py
"""

from __future__ import annotations

import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))

from plantgen import random_plant  # noqa: E402

from workpack.assetlist import plant_tables  # noqa: E402
from workpack.sheets import import_assets, tables_to_files  # noqa: E402

MAP = Path(__file__).resolve().parent.parent / "plants" / "asset-map.yaml"


def main(size: int = 10_000) -> None:
    plant = random_plant(seed=2026, size=size)
    elements = len(plant.elements())
    with tempfile.TemporaryDirectory() as folder:
        for form, out in (("xlsx", Path(folder) / "assets.xlsx"), ("csv", Path(folder) / "csv")):
            started = time.perf_counter()
            files = tables_to_files(plant_tables(plant), out)
            out.parent.mkdir(exist_ok=True)
            target = out.parent if out.suffix else out
            target.mkdir(exist_ok=True)
            for name, data in files.items():
                (target / name).write_bytes(data)
            written = time.perf_counter()
            back, text = import_assets([out], MAP, "plant.yaml")
            read = time.perf_counter()
            assert back == plant, "the asset list did not come back as the same plant"
            print(f"{form}: {elements} elements; export {written - started:.2f} s, "
                  f"import (read, map, validate, check, YAML, re-read) {read - written:.2f} s, "
                  f"{text.count(chr(10))} YAML lines")


if __name__ == "__main__":
    main()
