"""Hostile or absurd results are refused by `record` with one located line, and nothing
is stored: no record, and no store file created."""

from __future__ import annotations

import datetime as dt
import json
import os
from pathlib import Path

import hostile_pdfs
import pytest
from conftest import ROOT

from workpack.cli import main
from workpack.store import open_store

VESSEL = str(ROOT / "plants" / "demo-vessel.yaml")
FINDINGS = str(ROOT / "plants" / "demo-vessel-findings.yaml")


@pytest.fixture(scope="module")
def packages(demo_plan: Path) -> Path:
    """The demo vessel's packages as issued (planned once per session; only read here)."""
    return demo_plan


def windlass(packages: Path) -> Path:
    for twin in sorted(packages.glob("WP-*.json")):
        if json.loads(twin.read_text(encoding="utf-8"))["origin"]["rule"] == "low-insulation":
            return twin
    raise AssertionError("no windlass package")


def refused(package: Path, results: Path, tmp_path: Path, capsys) -> str:
    db = tmp_path / "store.sqlite"
    status = main(["record", str(package), str(results), "--db", str(db)])
    captured = capsys.readouterr()
    assert status == 2, captured
    assert captured.out == "" and "Traceback" not in captured.err
    assert not db.exists(), "a refused record must not create the store"
    lines = captured.err.splitlines()
    assert lines and all(line.startswith(f"{results}:") for line in lines), lines
    return captured.err


# --- 10.6: hostile PDFs ----------------------------------------------------------------------


@pytest.mark.parametrize(("build", "fragment"), [
    (hostile_pdfs.public_key_encrypted, "the PDF is encrypted in a way workpack cannot open"),
    (hostile_pdfs.password_protected, "the PDF is password-protected"),
])
def test_an_encrypted_pdf_is_refused_clearly(packages, tmp_path, capsys, build,
                                              fragment) -> None:
    package = windlass(packages)
    pdf = build(package.with_suffix(".pdf"), tmp_path / "filled.pdf")
    assert fragment in refused(package, pdf, tmp_path, capsys)


def test_a_decompression_bomb_is_refused(packages, tmp_path, capsys) -> None:
    """200 MiB of zeros behind 200 kB: pypdf stops at its limit; we say so, in one line."""
    package = windlass(packages)
    bomb = hostile_pdfs.decompression_bomb(tmp_path / "bomb.pdf")
    assert "cannot read the PDF: a compressed part of it expands past the reader's limit" in (
        refused(package, bomb, tmp_path, capsys))


@pytest.mark.parametrize(("name", "fragment"), [
    ("step", "form field 'step': a step field has 3 parts separated by ':', this has 1"),
    ("step:abc", "form field 'step:abc': a step field has 3 parts"),
    ("step:abc:done", "form field 'step:abc:done': part 2 must be a number (got 'abc')"),
    ("sign:boss", "form field 'sign:boss': the last part must be one of technician, "
                  "supervisor, date (got 'boss')"),
    ("lock:CB-WL1", "form field 'lock:CB-WL1': a lock field has 3 parts"),
    ("dead:x:A-B", "form field 'dead:x:A-B': part 2 must be a number (got 'x')"),
    ("payload", "form field 'payload': 'payload' is not a kind of field a workpack package "
                "has"),
])
def test_a_form_field_a_package_never_has_is_named(packages, tmp_path, capsys, name,
                                                   fragment) -> None:
    package = windlass(packages)
    pdf = hostile_pdfs.renamed_field(package.with_suffix(".pdf"), tmp_path / "filled.pdf",
                                     "remarks", name)
    assert fragment in refused(package, pdf, tmp_path, capsys)


@pytest.mark.parametrize("content", [b"", b"%PDF-1.7\n", os.urandom(4096)])
def test_a_file_that_is_no_pdf_is_refused(packages, tmp_path, capsys, content) -> None:
    package = windlass(packages)
    pdf = tmp_path / "filled.pdf"
    pdf.write_bytes(content)
    assert "cannot read the PDF:" in refused(package, pdf, tmp_path, capsys)


def test_a_truncated_pdf_is_refused(packages, tmp_path, capsys) -> None:
    package = windlass(packages)
    pdf = tmp_path / "filled.pdf"
    pdf.write_bytes(package.with_suffix(".pdf").read_bytes()[:6000])
    assert "cannot read the PDF:" in refused(package, pdf, tmp_path, capsys)


def test_pypdf_warnings_do_not_reach_the_terminal(packages, tmp_path, capsys) -> None:
    """A wrong startxref makes pypdf log a warning and repair; only our line is printed."""
    package = windlass(packages)
    pdf = hostile_pdfs.broken_startxref(package.with_suffix(".pdf"), tmp_path / "filled.pdf")
    assert refused(package, pdf, tmp_path, capsys) == (
        f"{pdf}: nothing is filled in; record a job once it has been done\n")


# --- 10.8: readings out of any range --------------------------------------------------------


def sheet_with(package: Path, tmp_path: Path, value: str, temperature: str = "30") -> Path:
    sheet = tmp_path / "results.yaml"
    assert main(["results-template", str(package), "--out", str(sheet)]) == 0
    lines = sheet.read_text(encoding="utf-8").splitlines()
    first = lines.index("readings:") + 1  # the package's first reading with a temperature
    reading = next(i for i, line in enumerate(lines[first:], first)
                   if line.startswith("  S") and lines[i + 2].startswith("    temperature:"))
    assert lines[reading + 1] == "    value:" and lines[reading + 2].startswith("    temperature:")
    lines[reading + 1] = f"    value: {value}"
    lines[reading + 2] = f"    temperature: {temperature}"
    lines[lines.index("completed_by:            # technician")] = "completed_by: S. Quayle"
    sheet.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return sheet


def drained(capsys) -> None:
    capsys.readouterr()


@pytest.mark.parametrize(("value", "temperature", "fragment"), [
    ("40 MΩ", "20000", "20000 °C is not a reading an instrument gives"),
    ("40 MΩ", "20000 °C", "20000 °C is not a reading an instrument gives"),
    (".nan", "30", "nan Ω is not a reading an instrument gives"),
    (".inf", "30", "inf Ω is not a reading an instrument gives"),
    ("nan", "30", "nan Ω is not a reading an instrument gives"),
    ("1e999", "30", "inf Ω is not a reading an instrument gives"),
    ("-5", "30", "-5e+06 Ω is not a reading an instrument gives"),
    ("40 MΩ", ".nan", "temperature: nan is not a number a measurement can have"),
])
def test_a_reading_no_instrument_gives_is_refused_at_its_line(packages, tmp_path, capsys,
                                                              value, temperature,
                                                              fragment) -> None:
    package = windlass(packages)
    sheet = sheet_with(package, tmp_path, value, temperature)
    drained(capsys)
    err = refused(package, sheet, tmp_path, capsys)
    assert fragment in err, err
    lines = sheet.read_text(encoding="utf-8").splitlines()
    line = next(i for i, text in enumerate(lines, start=1) if text.startswith("    value: ")
                and text != "    value:") - 1  # the reading's own line, above its value
    assert err.startswith((f"{sheet}:{line + 1}:", f"{sheet}:{line + 2}:")), err


# --- 10.10: a record without its evaluation ---------------------------------------------------


def test_closeout_of_a_record_without_an_evaluation_is_a_clear_error(packages, tmp_path,
                                                                     capsys) -> None:
    package = windlass(packages)
    data = json.loads(package.read_text(encoding="utf-8"))
    from workpack.loading import load_package

    _, digest = load_package(package)
    db = tmp_path / "store.sqlite"
    with open_store(db) as store:
        store.append(package_id=data["id"], package_sha256=digest,
                     results={"results": {"package": data["id"]}}, recorded_by="x",
                     recorded_at=dt.datetime(2026, 12, 2, 16, tzinfo=dt.UTC), verdict="passed")
    out = tmp_path / "closeout.pdf"
    status = main(["closeout", str(package), "--db", str(db), "--out", str(out)])
    err = capsys.readouterr().err
    assert status == 2 and "Traceback" not in err and not out.exists()
    assert err == (f"record 1 of {data['id']} in {db}: the record holds no evaluation; it "
                   f"cannot be closed out (record the results again with --supersedes 1)\n")
