"""Start and transfer blocks and four-wire proving dead, from plan to record.

A block is a lock step like any other: it has a row in the package (PDF fields), a place
in the results sheet, and the record judges whether it was applied and removed. The
neutral pairs of a four-wire system are filled in and judged like the phase pairs.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest
from conftest import ROOT
from lockfill import fill_locks, not_removed
from pypdf import PdfReader

from workpack.cli import main
from workpack.evaluate import check_results, evaluate
from workpack.forms import results_template
from workpack.model.results import Results
from workpack.render.pdf import field_name, render_package
from workpack.yamlsource import parse_yaml

SITE = str(ROOT / "plants" / "demo-site.yaml")
AT = "2026-12-02T16:00+00:00"
FINDINGS = """\
date: 2026-12-01
findings:
  - {kind: defect, at: 2026-12-01T08:00, by: A. Tester, where: VSB, severity: high,
     text: water on the floor of the board}
  - {kind: defect, at: 2026-12-01T08:10, by: A. Tester, where: LP-1, severity: high,
     text: cover plate cracked}
  - {kind: defect, at: 2026-12-01T08:20, by: A. Tester, where: UPS-DB, severity: high,
     text: scorch marks at the incomer}
"""


@pytest.fixture(scope="module")
def issued(tmp_path_factory) -> dict[str, Path]:
    out = tmp_path_factory.mktemp("issued")
    findings = out / "findings.yaml"
    findings.write_text(FINDINGS, encoding="utf-8")
    assert main(["plan", SITE, str(findings), "--out", str(out / "packages")]) == 0
    by_item = {}
    for twin in sorted((out / "packages").glob("WP-*.json")):
        package = json.loads(twin.read_text(encoding="utf-8"))
        if package["origin"]["rule"] == "water-ingress-defect":
            by_item[package["item"]] = twin
    assert set(by_item) == {"VSB", "LP-1", "UPS-DB"}
    return by_item


def fill(package: Path, tmp_path: Path, *, leave_blank: str | None = None) -> Path:
    sheet = tmp_path / "results.yaml"
    assert main(["results-template", str(package), "--out", str(sheet)]) == 0
    text = sheet.read_text(encoding="utf-8")
    text = text.replace("completed_by:            # technician", "completed_by: A. Tester")
    text = text.replace("supervisor:\n", "supervisor: B. Checker\n")
    text = text.replace("completed_on:            # YYYY-MM-DD", "completed_on: 2026-12-02")
    text = text.replace("tester_proven_before: false", "tester_proven_before: true")
    text = text.replace("tester_proven_after: false", "tester_proven_after: true")
    text = fill_locks(text, "A. Tester")
    text = re.sub(r'(    "[^"]+":)\n', r"\1 0\n", text)  # every proving-dead pair: 0 V
    if leave_blank:
        text = text.replace(f'    "{leave_blank}": 0\n', f'    "{leave_blank}":\n')
    text = text.replace("{done: false}", "{done: true}")
    # each reading as the sheet expects it ("expect 133 V ± 13.3 V")
    text = re.sub(r"(  [SX]\d+\.R\d+:.*expect ([\d.]+ \S+).*\n)    value:\n",
                  r'\1    value: "\2"\n', text)
    text = text.replace("    temperature:   # °C\n", "    temperature: 20\n")
    sheet.write_text(text, encoding="utf-8")
    return sheet


def test_transfer_block_is_a_lock_row_with_fields_and_comes_first(issued) -> None:
    """The vital services board: the changeover is put to manual and locked (step 1),
    the generator side is locked before the utility feed."""
    package = json.loads(issued["VSB"].read_text(encoding="utf-8"))
    rows = [(p["device"], p["device_kind"], p["blocks"]) for p in package["isolation"]]
    assert rows == [("ATS-VSB-MODE", "transfer_block", "ATS-VSB"),
                    ("CB-GSB-VSB", "circuit_breaker", None),
                    ("CB-VSB", "circuit_breaker", None)]
    assert package["isolation"][0]["how"].startswith("turn the controller to MANUAL")
    pdf = issued["VSB"].with_suffix(".pdf")
    fields = PdfReader(pdf).get_fields() or {}
    for part in ("number", "applied_by", "applied_at", "removed_by", "removed_at"):
        assert field_name("lock", "ATS-VSB-MODE", part) in fields
    assert field_name("tag", "ATS-VSB-MODE", "number") in fields


def test_block_lock_is_recorded_and_judged_like_a_breaker_lock(issued, tmp_path,
                                                              capsys) -> None:
    """Filled in completely the job passes; a block lock never removed fails it."""
    package = issued["UPS-DB"]
    data = json.loads(package.read_text(encoding="utf-8"))
    assert [p["device"] for p in data["isolation"]] == ["CB-UPS1", "UPS1-OUT"]
    db = tmp_path / "records.sqlite"
    assert main(["record", str(package), str(fill(package, tmp_path)), "--db", str(db),
                 "--at", AT]) == 0
    assert "PASSED" in capsys.readouterr().out
    sheet = fill(package, tmp_path)
    text = sheet.read_text(encoding="utf-8")
    text = not_removed(text, "UPS1-OUT")
    sheet.write_text(text, encoding="utf-8")
    assert main(["record", str(package), str(sheet), "--db", str(tmp_path / "b.sqlite"),
                 "--at", AT]) == 1  # recorded, and found wanting
    out = capsys.readouterr().out
    assert "FAILED" in out
    assert "UPS1-OUT: lock L-02 applied by A. Tester was never recorded as removed" in out


def test_four_wire_pairs_are_in_the_sheet_the_pdf_and_the_judgement(issued, tmp_path,
                                                                     capsys) -> None:
    """LP-1 is on the 400 V grounded-wye system with a neutral: ten pairs, each judged."""
    package = issued["LP-1"]
    data = json.loads(package.read_text(encoding="utf-8"))
    [point] = data["proving_dead"]
    assert point["pairs"] == ["L1-L2", "L2-L3", "L3-L1", "L1-N", "L2-N", "L3-N",
                              "L1-E", "L2-E", "L3-E", "N-E"]
    fields = PdfReader(package.with_suffix(".pdf")).get_fields() or {}
    assert field_name("dead", 1, "N-E") in fields and field_name("dead", 1, "L3-N") in fields
    assert main(["record", str(package), str(fill(package, tmp_path)),
                 "--db", str(tmp_path / "r.sqlite"), "--at", AT]) == 0
    assert "PASSED" in capsys.readouterr().out
    assert main(["record", str(package), str(fill(package, tmp_path, leave_blank="N-E")),
                 "--db", str(tmp_path / "s.sqlite"), "--at", AT]) == 1  # incomplete
    out = capsys.readouterr().out
    assert "INCOMPLETE" in out and "N-E: absence of voltage not recorded" in out


def test_undeclared_start_block_id_survives_the_results_sheet(standards) -> None:
    """A start step the inventory did not name ('EG:start') is a quoted key in the sheet
    and comes back as the same lock record."""
    from samplepackage import sample_package

    from workpack.model.package import IsolationPoint

    package = sample_package()
    block = IsolationPoint(order=1, device="EG:start", device_kind="start_block",
                           location="EG room", cuts="stops EG starting by itself",
                           voltage_v=440.0, already_open=False, blocks="EG",
                           how="block the start at its own controls")
    package = package.model_copy(update={"isolation": (block, *package.isolation)})
    digest = "a" * 64
    sheet = results_template(package, digest)
    assert '  "EG:start":   # 1. start_block, EG room (set and lock: block the start' in sheet
    head, block_part = sheet.split('  "EG:start":', 1)
    for field, value in (("lock", "L-9"), ("applied_by", "X"), ("removed_by", "X")):
        block_part = block_part.replace(f"    {field}:\n", f"    {field}: {value}\n", 1)
    data, _ = parse_yaml(head + '  "EG:start":' + block_part, "sheet.yaml")
    results = Results.model_validate(data)
    assert not list(check_results(package, results, digest))
    assert results.isolation["EG:start"].lock == "L-9"
    evaluation = evaluate(package, results, standards)
    assert not [d for d in evaluation.deviations if d.ref == "EG:start"]
    assert [d.ref for d in evaluation.deviations if d.kind == "lock"] == [
        p.device for p in package.isolation[1:]]  # the others were left blank


def test_block_row_renders_with_what_to_set(issued) -> None:
    """The PDF row of a block says what to set and lock (text extracted from the page)."""
    from workpack.model.package import WorkPackage

    package = WorkPackage.model_validate_json(issued["VSB"].read_text(encoding="utf-8"))
    pdf = render_package(package)
    text = "".join(page.extract_text() for page in PdfReader(__import__("io").BytesIO(pdf))
                   .pages)
    assert "Set and lock:" in text and "ATS-VSB-MODE" in text
