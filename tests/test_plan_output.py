"""The main job end to end: `workpack plan` on the demo vessel, read back from the PDFs."""

from __future__ import annotations

import functools
import json
import math
import shutil
from pathlib import Path

import pytest
from conftest import ROOT
from pypdf import PdfReader

from workpack.cli import main

VESSEL = str(ROOT / "plants" / "demo-vessel.yaml")
FINDINGS = str(ROOT / "plants" / "demo-vessel-findings.yaml")


def run_plan(out: Path, *extra: str) -> int:
    return main(["plan", VESSEL, FINDINGS, "--out", str(out), "--crew-hours", "40", *extra])


@pytest.fixture(scope="module")
def output(demo_plan: Path) -> Path:
    """`plan` on the demo vessel with 40 crew hours (run once per session; only read)."""
    return demo_plan


@functools.cache  # the demo's PDFs are read by several tests; extracting text is slow
def page_texts(pdf: Path) -> tuple[str, ...]:
    return tuple(page.extract_text() for page in PdfReader(pdf).pages)


def text_of(pdf: Path) -> str:
    return "\n".join(page_texts(pdf))


def package_by_rule(output: Path, rule: str) -> tuple[dict, str]:
    for twin in sorted(output.glob("WP-*.json")):
        data = json.loads(twin.read_text(encoding="utf-8"))
        if data["origin"]["rule"] == rule:
            return data, text_of(twin.with_suffix(".pdf"))
    raise AssertionError(rule)


def test_one_pdf_and_one_json_per_package_and_a_day_sheet(output: Path) -> None:
    pdfs = sorted(p.stem for p in output.glob("WP-*.pdf"))
    twins = sorted(p.stem for p in output.glob("WP-*.json"))
    assert pdfs == twins and len(pdfs) >= 8
    assert (output / "day-2026-12-02.pdf").exists()
    assert not list(output.glob(".workpack-*"))  # no staging left behind


def test_healthy_phase_to_earth_of_the_440_v_system_is_printed(output: Path) -> None:
    """440 V / √3 = 254 V (SOURCES.md: V_LN = V_LL/√3)."""
    _, text = package_by_rule(output, "locate-ground")
    assert f"{440 / math.sqrt(3):.0f} V" in text  # "254 V"
    assert "computed: 440 V / √3 = 254 V" in text


def test_open_delta_limit_of_the_demo_bank_is_printed_in_kva(output: Path) -> None:
    """Three 25 kVA units: √3 × 25 = 43.3 kVA in open delta (SOURCES.md, 57.7 %)."""
    _, text = package_by_rule(output, "failed-unit-open-delta")
    assert "43.3 kVA" in text


def test_windlass_test_voltage_and_minimum_are_printed(output: Path) -> None:
    """IEEE Std 43 (2013): 500 V DC below 1 kV; 5 MΩ minimum at 40 °C (12.3)."""
    _, text = package_by_rule(output, "low-insulation")
    assert "500 V DC" in text and "5 MΩ" in text and "40 °C" in text


def test_grounded_insulated_systems_carry_the_second_ground_caution_on_paper(
    output: Path,
) -> None:
    for twin in sorted(output.glob("WP-*.json")):
        data = json.loads(twin.read_text(encoding="utf-8"))
        if data["system"] in ("MSB", "LP-MAIN"):
            text = " ".join(text_of(twin.with_suffix(".pdf")).split())
            assert "A second ground on another phase of this system" in text, twin.name
            assert "DANGER" in text


def test_every_page_names_the_package_and_defers_to_local_codes(output: Path) -> None:
    for pdf in sorted(output.glob("WP-*.pdf")):
        pages = page_texts(pdf)
        for number, text in enumerate(pages, start=1):
            assert pdf.stem in text and f"Page {number} of {len(pages)}" in text
        assert "licensed practice prevail" in text_of(pdf)


def test_two_runs_give_byte_identical_files(output: Path, tmp_path: Path) -> None:
    again = tmp_path / "again"
    assert run_plan(again) == 0
    names = sorted(p.name for p in output.iterdir())
    assert names == sorted(p.name for p in again.iterdir())
    for name in names:
        assert (output / name).read_bytes() == (again / name).read_bytes(), name


def test_a_broken_rule_writes_nothing(tmp_path: Path, capsys) -> None:
    rules = tmp_path / "rules"
    shutil.copytree(ROOT / "rules", rules)
    ground = rules / "ground.yaml"
    ground.write_text(ground.read_text(encoding="utf-8").replace(
        "diagnosis.ground_present and system.insulated and not",
        "diagnosis.ground_presnt and system.insulated and not", 1), encoding="utf-8")
    out = tmp_path / "out"
    assert run_plan(out, "--rules", str(rules)) == 2
    err = capsys.readouterr().err
    assert "ground.yaml:" in err and "did you mean 'ground_present'" in err
    assert "Traceback" not in err
    assert not out.exists()


def test_letter_paper_on_request(tmp_path: Path) -> None:
    """Every page of every package and of the day sheet (a quiet day: routine tests only,
    which is quicker to plan than the demo's findings and prints the same way)."""
    quiet = tmp_path / "quiet.yaml"
    quiet.write_text("date: 2026-12-01\nfindings: []\n", encoding="utf-8")
    out = tmp_path / "letter"
    assert main(["plan", VESSEL, str(quiet), "--out", str(out), "--page-size", "Letter"]) == 0
    pdfs = sorted(out.glob("*.pdf"))
    assert len(pdfs) >= 2
    for pdf in pdfs:
        for page in PdfReader(pdf).pages:
            assert (round(float(page.mediabox.width)),
                    round(float(page.mediabox.height))) == (612, 792), pdf.name


def test_planning_again_into_the_same_folder_leaves_no_stale_packages(output: Path,
                                                                      tmp_path) -> None:
    out = tmp_path / "out"
    shutil.copytree(output, out)  # as `run_plan(out)` leaves it
    before = sorted(p.name for p in out.glob("WP-*"))
    keep = out / "notes.txt"
    keep.write_text("mine", encoding="utf-8")
    assert run_plan(out, "--crew-hours", "2") == 0  # same findings: same packages
    assert sorted(p.name for p in out.glob("WP-*")) == before
    findings = tmp_path / "quiet.yaml"
    findings.write_text("date: 2026-12-01\nfindings: []\n", encoding="utf-8")
    assert main(["plan", VESSEL, str(findings), "--out", str(out)]) == 0
    after = sorted(p.name for p in out.glob("WP-*"))
    assert len(after) < len(before)  # only the routine tests are left
    assert keep.read_text(encoding="utf-8") == "mine"  # other files are not touched


def test_the_biggest_search_fits_the_switchboard(output: Path) -> None:
    """Issue 14.1: the main board's ground search (28 circuits it can end at) was 88
    pages, one full procedure per circuit. Now: a decision table, the tree, and one
    final-test procedure with a row per circuit, each circuit and each search step still
    named in it: 12 pages, and one more for the one-line sketch of the board's feeders
    (issue 14.2); tables sized to their content and what every row said once above
    them: 11, pinned with every other demo document in
    ``test_no_demo_document_grows`` (the issue's target is 10: see
    ``test_the_biggest_search_reaches_ten_pages``)."""
    packages = [json.loads(t.read_text(encoding="utf-8")) for t in output.glob("WP-*.json")]
    biggest = max((p for p in packages if p["final_tests"]), key=lambda p: len(p["final_tests"]))
    pages = page_texts(output / f"{biggest['id']}.pdf")
    assert len(biggest["final_tests"]) >= 20 and len(pages) <= 11
    flat = " ".join(" ".join(pages).split())
    assert flat.count("DC test voltage, disconnect what it damages") == 1  # cautions once
    for final in biggest["final_tests"]:
        assert f"{final['id']}: {final['feeder']}" in flat
    for step in biggest["steps"]:
        if step["kind"] == "search":
            assert step["decision"]["devices"][0] in flat
    assert "licensed practice prevail" in flat and "Restoration of the circuit" in flat


# Pages of each demo document at most (issue 14): a change that lengthens one fails here
# and says which; one that shortens it lowers its number here.
DEMO_PAGES = {"WP-SKL-20261202-01": 7, "WP-SKL-20261202-02": 8, "WP-SKL-20261202-03": 11,
              "WP-SKL-20261202-04": 6, "WP-SKL-20261202-05": 5, "WP-SKL-20261202-06": 8,
              "WP-SKL-20261202-07": 6, "WP-SKL-20261202-08": 4, "WP-SKL-20261202-09": 5,
              "day-2026-12-02": 2}


def test_no_demo_document_grows(output: Path) -> None:
    pages = {pdf.stem: len(PdfReader(pdf).pages) for pdf in sorted(output.glob("*.pdf"))}
    assert set(pages) == set(DEMO_PAGES)
    grown = {name: (count, DEMO_PAGES[name]) for name, count in pages.items()
             if count > DEMO_PAGES[name]}
    assert not grown, f"pages (now, at most): {grown}"


@pytest.mark.xfail(strict=True, reason="issue 14: the main board's search package is 11 "
                   "pages; 10 is the target. strict: when it reaches 10 this fails, so the "
                   "mark goes and DEMO_PAGES says 10")
def test_the_biggest_search_reaches_ten_pages(output: Path) -> None:
    assert len(PdfReader(output / "WP-SKL-20261202-03.pdf").pages) <= 10


def test_a_search_that_isolates_nothing_says_so_once_and_shows_its_figures_at_the_search(
        output: Path) -> None:
    """Issue 14: the isolation and the proving dead of the main board's search said only
    that there were none, in two sections; the figures stood before them, a page ahead of
    the search that uses them."""
    flat = " ".join(text_of(output / "WP-SKL-20261202-03.pdf").split())
    assert flat.count("No isolation points are listed in this package, and no "
                      "absence-of-voltage test.") == 1
    assert "Prove dead at the point of work" not in flat
    said, phasor, sketch, search = (flat.index(t) for t in (
        "Isolation and proving dead", "Phasor diagram", "One-line sketch", "Search: steps"))
    assert said < phasor < sketch < search
    assert flat.count("X3.R1 phase A, X3.R2 phase B and X3.R3 phase C to earth at MSB: each "
                      "between 229 V and 279 V") == 1


def test_the_board_sketch_sets_a_long_stack_in_columns_the_width_allows(output: Path) -> None:
    """Issue 14: the main board's 12 feeders below MCC-1 stood in one column, a 157 mm
    sketch; as many columns as the width allows make it the shortest that fits."""
    from reportlab.lib.units import mm

    from workpack.model.package import WorkPackage
    from workpack.render.figures import _measure, fit_sketch
    from workpack.render.pdf.fonts import FONT, FONT_BOLD, register_fonts
    from workpack.render.sketch_layout import layout_sketch, width_needed

    register_fonts()
    package = WorkPackage.model_validate_json(
        (output / "WP-SKL-20261202-03.json").read_text(encoding="utf-8"))
    assert package.sketch is not None
    fitted = fit_sketch(package.sketch, (91 * mm, 182 * mm), 186 * mm, FONT, FONT_BOLD)
    assert fitted.layout is not None and not fitted.notes  # nothing left out
    measure = _measure(FONT, FONT_BOLD)
    one_column = layout_sketch(package.sketch, width_needed(package.sketch, measure), measure)
    assert one_column is not None
    assert fitted.layout.height < one_column.height - 30 * mm
    assert fitted.layout.width <= 182 * mm + 0.01
    labels = {t.text for p in fitted.layout.nodes for t in p.texts}
    assert "CB-MCC2 (3)" in labels and "CB-LOP2 (17)" in labels
