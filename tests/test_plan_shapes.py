"""A valid plant never makes ``plan`` fail (issue 9, point 11): generated plants of
extreme shapes and sizes are planned through the command line and every package is
rendered and read back. Where a one-line sketch had to be summarised to fit its page,
the page says so, and the isolation table still lists every lock. Invented plants
(``tests/plantgen.py``); no check values.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest
import yaml
from plantgen import findings_data, random_findings_data, random_plant_data, shaped_plant_data
from pypdf import PdfReader

from workpack.cli import main

CASES = [("deep", 6), ("deep", 40), ("parallel", 4), ("parallel", 30), ("wide", 12),
         ("wide", 200), ("random", 1000)]


def planned(tmp_path: Path, shape: str, size: int) -> Path:
    if shape == "random":
        plant = random_plant_data(seed=size, size=size)
        findings = random_findings_data(plant, 40)
    else:
        plant = shaped_plant_data(shape, size)
        findings = findings_data(plant)
    return plan_files(tmp_path, plant, findings)


def plan_files(tmp_path: Path, plant: dict[str, Any], findings: dict[str, Any]) -> Path:
    """Writes the plant and findings as YAML into ``tmp_path``, plans them through the
    command line, and returns the output folder."""
    (tmp_path / "plant.yaml").write_text(yaml.safe_dump(plant, sort_keys=False))
    (tmp_path / "findings.yaml").write_text(yaml.safe_dump(findings, sort_keys=False,
                                                           allow_unicode=True))
    out = tmp_path / "out"
    assert main(["plan", str(tmp_path / "plant.yaml"), str(tmp_path / "findings.yaml"),
                 "--out", str(out), "--crew-hours", "40"]) == 0
    return out


def sketch_notes(text: str) -> list[str]:
    return [line for line in text.splitlines()
            if line.startswith(("A dashed box", "Drawn: ", "Names too long"))]


@pytest.mark.parametrize(("shape", "size"), CASES)
def test_every_package_of_a_generated_plant_renders(tmp_path: Path, capsys: Any,
                                                    shape: str, size: int) -> None:
    out = planned(tmp_path, shape, size)
    twins = sorted(out.glob("WP-*.json"))
    assert twins
    notes: list[str] = []
    for twin in twins:
        package = json.loads(twin.read_text())
        pages = PdfReader(twin.with_suffix(".pdf")).pages
        assert len(pages) >= 1
        text = "\n".join(page.extract_text() for page in pages)
        words = set(text.split())
        missing = [p["device"] for p in package["isolation"] if p["device"] not in words]
        assert not missing, f"{twin.name}: isolation points not printed: {missing}"
        if package["sketch"] is not None:
            assert "One-line sketch" in text
        notes += sketch_notes(text)
    assert PdfReader(out / "day-2026-12-02.pdf").pages
    if (shape, size) == ("deep", 40):  # the chains of boards are drawn as dashed boxes
        assert any("boards in a row that only pass the supply on" in n for n in notes)
    if (shape, size) == ("parallel", 30):  # thirty generators: as one box, or some drawn
        assert any("30 supplies side by side" in n for n in notes)
        assert any(n.startswith("Drawn: ") and "of the 30 ways in through" in n
                   for n in notes)
