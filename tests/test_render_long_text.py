"""Text of any length renders (issue 10, point 2): through the command line, each case
that used to stop with a reportlab ``LayoutError`` and write nothing now exits 0, writes
a PDF that pypdf reads, prints every word, and keeps the whole text in the JSON twin or
the records store. Invented data; no check values.

Long texts are numbered words ("dfct0001 dfct0002 …"), so a test can ask for every one of
them: a word cut off the end of a cell, or drawn past the edge of the page, is missed.
"""

from __future__ import annotations

import json
import shutil
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
import yaml
from conftest import ROOT
from pypdf import PdfReader
from reportlab.pdfbase.pdfmetrics import stringWidth

from workpack.cli import main
from workpack.render.pdf import FONT, register_fonts

VESSEL = ROOT / "plants" / "demo-vessel.yaml"
FINDINGS = ROOT / "plants" / "demo-vessel-findings.yaml"


def numbered(prefix: str, count: int) -> str:
    return " ".join(f"{prefix}{n:04d}" for n in range(1, count + 1))


def pdf_words(path: Path) -> set[str]:
    return {word for page in PdfReader(path).pages for word in page.extract_text().split()}


def pdf_text(path: Path) -> str:
    return "\n".join(page.extract_text() for page in PdfReader(path).pages)


def text_past_the_edge(path: Path) -> list[str]:
    """Runs of text that start or end beyond the page's right edge (in DejaVu Sans at
    their size: the bold face is a little wider, so this errs towards passing)."""
    register_fonts()
    beyond: list[str] = []
    for page in PdfReader(path).pages:
        right = float(page.mediabox.width)

        def visit(text: str, cm: list[float], tm: list[float], font: object,
                  size: float, right: float = right) -> None:
            if not text.strip():
                return
            scale = abs(tm[0] * cm[0]) or 1.0
            x = tm[4] * cm[0] + tm[5] * cm[2] + cm[4]
            if x + stringWidth(text.rstrip("\n"), FONT, size) * scale > right + 1:
                beyond.append(text)

        page.extract_text(visitor_text=visit)
    return beyond


def plan(findings: Path, out: Path, *extra: str, plant: Path = VESSEL) -> None:
    assert main(["plan", str(plant), str(findings), "--out", str(out), *extra]) == 0


def twins(out: Path) -> Iterator[dict[str, Any]]:
    for path in sorted(out.glob("WP-*.json")):
        yield json.loads(path.read_text())


def with_findings(tmp_path: Path, extra: list[dict[str, Any]], name: str,
                  defect_text: str | None = None) -> Path:
    """The demo's findings with ``extra`` added, and its defect's text replaced."""
    data = yaml.safe_load(FINDINGS.read_text())
    if defect_text is not None:
        for finding in data["findings"]:
            if finding["kind"] == "defect":
                finding["text"] = defect_text
    data["findings"] += extra
    path = tmp_path / name
    path.write_text(yaml.safe_dump(data, sort_keys=False, allow_unicode=True))
    return path


def defect(text: str, minute: int = 0) -> dict[str, Any]:
    return {"kind": "defect", "at": f"2026-12-01T{minute // 60:02d}:{minute % 60:02d}",
            "by": "T. Marrow", "where": "DK-SO", "text": text, "severity": "high"}


def test_a_defect_text_of_2400_characters(tmp_path: Path, capsys: Any) -> None:
    text = numbered("dfct", 267)
    assert len(text) > 2400
    plan(with_findings(tmp_path, [], "f.yaml", defect_text=text), tmp_path / "out")
    package = next(p for p in twins(tmp_path / "out") if text in json.dumps(p))
    pdf = tmp_path / "out" / f"{package['id']}.pdf"
    assert set(text.split()) <= pdf_words(pdf)
    assert not text_past_the_edge(pdf)


def test_a_long_rule_title(tmp_path: Path, capsys: Any) -> None:
    rules = tmp_path / "rules"
    shutil.copytree(ROOT / "rules", rules)
    long_title = numbered("ttl", 300)
    source = (rules / "insulation.yaml").read_text()
    old = 'title: "Make safe and repair: {{ item.label }}"'
    assert old in source
    (rules / "insulation.yaml").write_text(
        source.replace(old, f'title: "Make safe and repair: {long_title}"'))
    plan(FINDINGS, tmp_path / "out", "--rules", str(rules))
    package = next(p for p in twins(tmp_path / "out") if long_title in p["title"])
    for pdf in (tmp_path / "out" / f"{package['id']}.pdf", tmp_path / "out" / "day-2026-12-02.pdf"):
        assert set(long_title.split()) <= pdf_words(pdf), pdf.name
        assert not text_past_the_edge(pdf)


def test_a_finding_repeated_1000_times(tmp_path: Path, capsys: Any) -> None:
    repeated = [defect("deck socket outlet cover cracked", minute) for minute in range(1000)]
    plan(with_findings(tmp_path, repeated, "f.yaml"), tmp_path / "out")
    package = max(twins(tmp_path / "out"), key=lambda p: len(p["origin"]["findings"]))
    assert len(package["origin"]["findings"]) == 1001  # the JSON twin keeps every one
    text = " ".join(pdf_text(tmp_path / "out" / f"{package['id']}.pdf").split())
    assert (f"and 971 more (all 1,001 are listed in the package's file {package['id']}.json)"
            in text)


def test_a_rounds_log_of_10000_rows(tmp_path: Path, capsys: Any) -> None:
    rows = ["id,at,by,where,kind,reading,test_voltage,temperature"]
    rows += [f"R{n},2026-12-01T{6 + n // 600:02d}:{n // 10 % 60:02d},T. Marrow,WL-1,"
             "insulation_resistance,1.2 MΩ,500 V,25 °C" for n in range(10_000)]
    log = tmp_path / "rounds.csv"
    log.write_text("\n".join(rows) + "\n")
    plan(log, tmp_path / "out", "--date", "2026-12-02")
    package = max(twins(tmp_path / "out"), key=lambda p: len(p["origin"]["findings"]))
    assert len(package["origin"]["findings"]) == 10_000
    pdf = tmp_path / "out" / f"{package['id']}.pdf"
    assert "and 9,970 more" in " ".join(pdf_text(pdf).split())
    assert len(PdfReader(pdf).pages) < 20  # the ids are counted, not printed page after page


# --- close-out and audit: a job recorded for real ----------------------------------------

@pytest.fixture(scope="module")
def issued(demo_plan: Path) -> Path:
    """The demo day's packages as issued (planned once per session; only read here)."""
    return demo_plan


def record(issued: Path, tmp_path: Path, package_id: str, *, remarks: str | None = None,
           by: str = "T. Marrow") -> Path:
    """Fill in the results sheet of a package as a technician would and record it."""
    twin = issued / f"{package_id}.json"
    sheet = tmp_path / f"{package_id}.results.yaml"
    assert main(["results-template", str(twin), "--out", str(sheet)]) == 0
    results = yaml.safe_load(sheet.read_text())
    results["completed_by"] = "T. Marrow"
    if remarks is not None:
        results["remarks"] = remarks
    sheet.write_text(yaml.safe_dump(results, sort_keys=False, allow_unicode=True))
    db = tmp_path / "records.sqlite"
    # Recorded either way; 1 when the job is judged wanting (these sheets leave blanks).
    assert main(["record", str(twin), str(sheet), "--db", str(db), "--by", by,
                 "--at", "2026-12-02T16:00+00:00"]) in (0, 1)
    return db


def test_long_remarks_in_a_closeout(issued: Path, tmp_path: Path, capsys: Any) -> None:
    remarks = numbered("rmk", 700)
    db = record(issued, tmp_path, "WP-SKL-20261202-01", remarks=remarks)
    out = tmp_path / "closeout.pdf"
    assert main(["closeout", str(issued / "WP-SKL-20261202-01.json"), "--db", str(db),
                 "--out", str(out)]) == 0
    assert set(remarks.split()) <= pdf_words(out)
    assert not text_past_the_edge(out)


def test_a_record_with_a_very_long_name(issued: Path, tmp_path: Path, capsys: Any) -> None:
    name = "Quayle" * 300  # one unbroken word of 1,800 characters
    db = record(issued, tmp_path, "WP-SKL-20261202-02", by=name)
    audit = tmp_path / "audit"
    assert main(["audit", "--packages", str(issued), "--db", str(db), "--out", str(audit),
                 "--as-of", "2026-12-03"]) == 0
    assert name in (audit / "audit.html").read_text()
    pdf = audit / "audit.pdf"
    # wrapped over lines and pages, never cut: a page break (its header and the repeated
    # table header) can split at most one "Quayle" on each side
    pages = len(PdfReader(pdf).pages)
    assert "".join(pdf_text(pdf).split()).count("Quayle") >= 300 - 2 * pages
    assert not text_past_the_edge(pdf)
    closeout = tmp_path / "closeout.pdf"
    assert main(["closeout", str(issued / "WP-SKL-20261202-02.json"), "--db", str(db),
                 "--out", str(closeout)]) == 0
    first_page = "".join(PdfReader(closeout).pages[0].extract_text().split())
    assert name in first_page  # in full among the record's facts
    assert "recordedbyQuayleQuayle" in first_page and "…at2026-12-0216:00UTC" in first_page
    assert not text_past_the_edge(closeout)  # the footer shortens it, with "…"
