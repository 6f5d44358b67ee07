"""The closed-out record PDF, from a package filled in, evaluated and stored for real, read
back with pypdf. Invented data; the corrected values follow IEEE Std 43-2013's halving per
10 °C (see ``test_audit.ir40``)."""

from __future__ import annotations

import datetime as dt
import io
import math
from pathlib import Path

import pytest
from pypdf import PdfReader
from test_audit import filled, ir40, ir_package, noon, store_job

from workpack.evaluate import Evaluation, evaluate
from workpack.model.package import WorkPackage
from workpack.model.results import MeasuredValue, Results
from workpack.numbers import format_quantity
from workpack.render.closeout import render_closeout
from workpack.render.pdf import MIN_TEXT_PT
from workpack.store import Record, open_store

PACKAGE = ir_package(3, dt.date(2026, 12, 2))


@pytest.fixture(scope="module")
def job(tmp_path_factory: pytest.TempPathFactory,
        standards: dict) -> tuple[WorkPackage, Results, Evaluation, Record]:
    """R1 below the minimum after correction; the heater breaker never unlocked."""
    results = filled(PACKAGE, (12, "40 MΩ", 30.5), left_on=("CB-DK-H-WL1",))
    with open_store(tmp_path_factory.mktemp("closeout") / "r.sqlite") as store:
        store_job(store, ir_package(1, dt.date(2026, 9, 1)),
                  filled(ir_package(1, dt.date(2026, 9, 1)), (120, 150, 140)), standards,
                  noon(dt.date(2026, 9, 1)))
        evaluation, record = store_job(store, PACKAGE, results, standards,
                                       noon(PACKAGE.date))
    return PACKAGE, results, evaluation, record


@pytest.fixture(scope="module")
def pdf(job: tuple[WorkPackage, Results, Evaluation, Record]) -> bytes:
    package, _, evaluation, record = job
    return render_closeout(package, evaluation, record)


def pages(data: bytes) -> list[str]:
    return [" ".join(page.extract_text().split())
            for page in PdfReader(io.BytesIO(data)).pages]


def test_the_verdict_is_in_a_box_at_the_top(pdf: bytes) -> None:
    first = pages(pdf)[0]
    assert "VERDICT: FAILED" in first
    assert first.index("VERDICT: FAILED") < first.index("The package as filled in")
    assert "Readings: 5 PASS, 1 FAIL." in first
    assert "Locks never recorded as removed: CB-DK-H-WL1" in first


def test_measured_values_are_filled_in_as_entered(pdf: bytes) -> None:
    text = " ".join(pages(pdf))
    # bare numbers beside their unit, text with its own unit, temperatures, restoration
    for shown in ("12 MΩ", "40 MΩ", "30.5 MΩ", "25 °C", "253 V", "254 V", "252.5 V"):
        assert shown in text


def test_each_reading_carries_its_outcome_in_words(
        pdf: bytes, job: tuple[WorkPackage, Results, Evaluation, Record]) -> None:
    text = " ".join(pages(pdf))
    outcomes = [v.outcome for v in job[2].readings]
    assert outcomes.count("pass") == 5 and outcomes.count("fail") == 1
    # once per reading, plus once each in the verdict box's tally
    assert text.count("PASS") == 5 + 1
    assert text.count("FAIL") >= 1 + 1
    assert "FAILED" in text


def test_corrected_values_and_the_correction_note_are_shown(pdf: bytes) -> None:
    text = " ".join(pages(pdf))
    assert f"corrected {format_quantity(ir40(12, 25), 'MΩ')} at 40 °C" in text
    assert "corrected 4.24 MΩ at 40 °C" in text
    assert "12 MΩ at 25 °C is 4.24 MΩ at 40 °C" in text
    assert "below the minimum 5 MΩ (IEEE Std 43 (2013), 12.3: 5 MΩ)" in text


def test_deviations_locks_and_signatures_are_listed(pdf: bytes) -> None:
    text = " ".join(pages(pdf))
    assert "Deviations" in text
    assert "CB-DK-H-WL1: lock L-02 applied by S. Quayle was never recorded as removed" in text
    assert "NOT REMOVED" in text
    for written in ("L-01", "T-01", "L-02", "T-02", "08:10", "15:40"):
        assert written in text
    assert "S. Quayle" in text and "R. Tamsin" in text and "2026-12-02" in text
    assert "Heater found off; switched on after the test." in text


def test_every_page_names_the_record_and_its_chain_hash(
        pdf: bytes, job: tuple[WorkPackage, Results, Evaluation, Record]) -> None:
    record = job[3]
    texts = pages(pdf)
    assert len(texts) > 1
    for number, text in enumerate(texts, start=1):
        assert f"Record {record.sequence} · recorded by office at 2026-12-02 16:00 UTC" in text
        assert f"chain {record.chain_sha256[:16]}" in text
        assert f"Page {number} of {len(texts)}" in text
    assert record.chain_sha256 in texts[0]  # in full in the record's facts
    assert "the package shown (its SHA-256 matches)" in texts[0]


def test_the_closeout_is_a_record_not_a_form(pdf: bytes) -> None:
    assert not PdfReader(io.BytesIO(pdf)).get_fields()


def test_the_same_record_gives_the_same_bytes(
        pdf: bytes, job: tuple[WorkPackage, Results, Evaluation, Record]) -> None:
    package, _, evaluation, record = job
    assert render_closeout(package, evaluation, record) == pdf
    assert PdfReader(io.BytesIO(pdf)).metadata["/CreationDate"].startswith("D:20261202")


def test_no_text_is_under_nine_points(pdf: bytes) -> None:
    sizes: list[float] = []

    def visit(text: str, cm: list[float], tm: list[float], font: object,
              size: float) -> None:
        if text.strip():
            a = tm[0] * cm[0] + tm[1] * cm[2]
            b = tm[0] * cm[1] + tm[1] * cm[3]
            c = tm[2] * cm[0] + tm[3] * cm[2]
            d = tm[2] * cm[1] + tm[3] * cm[3]
            sizes.append(size * math.sqrt(abs(a * d - b * c)))

    for page in PdfReader(io.BytesIO(pdf)).pages:
        page.extract_text(visitor_text=visit)
    assert len(sizes) > 100 and min(sizes) >= MIN_TEXT_PT - 1e-6


def test_special_characters_come_through(pdf: bytes) -> None:
    text = " ".join(pages(pdf))
    for character in ("Ω", "°", "√"):
        assert character in text


def test_a_blank_reading_is_marked_not_recorded(standards: dict) -> None:
    results = filled(PACKAGE, (12, 40, 30))
    readings = dict(results.readings)
    readings["S2.R2"] = MeasuredValue()
    results = results.model_copy(update={"readings": readings})
    evaluation = evaluate(PACKAGE, results, standards)
    text = " ".join(pages(render_closeout(PACKAGE, evaluation, None, results=results)))
    assert "NOT RECORDED" in text
    assert "S2.R2 phase B to earth: not recorded" in text


def test_without_a_record_it_says_it_is_not_recorded_yet(
        job: tuple[WorkPackage, Results, Evaluation, Record]) -> None:
    package, results, evaluation, _ = job
    texts = pages(render_closeout(package, evaluation, None, results=results))
    assert all("Not yet in a records store" in text for text in texts)
    assert "12 MΩ" in " ".join(texts)


def test_the_evaluation_alone_still_shows_the_readings(
        job: tuple[WorkPackage, Results, Evaluation, Record]) -> None:
    """No results at hand: the measured values come from the evaluation (three figures)."""
    package, _, evaluation, _ = job
    text = " ".join(pages(render_closeout(package, evaluation, None)))
    assert "12 MΩ" in text and "30.5 MΩ" in text and "VERDICT: FAILED" in text


def test_a_passed_job_says_passed(tmp_path: Path, standards: dict) -> None:
    package = ir_package(2, dt.date(2026, 11, 2))
    with open_store(tmp_path / "r.sqlite") as store:
        evaluation, record = store_job(store, package, filled(package, (60, 55, 70.5)),
                                       standards, noon(package.date))
    text = " ".join(pages(render_closeout(package, evaluation, record, page_size="Letter")))
    assert "VERDICT: PASSED" in text and "FAIL" not in text.replace("FAILED", "")
    assert "Deviations None" in text


def test_a_record_of_another_package_is_refused(
        job: tuple[WorkPackage, Results, Evaluation, Record]) -> None:
    package, _, evaluation, record = job
    other = ir_package(4, dt.date(2026, 12, 20))
    with pytest.raises(ValueError, match="the evaluation is of 'WP-2026-12-02-03'"):
        render_closeout(other, evaluation, record)
    with pytest.raises(ValueError, match="record 2 answers 'WP-2026-12-02-03'"):
        render_closeout(other, evaluate(other, Results(package=other.id), {}), record)
