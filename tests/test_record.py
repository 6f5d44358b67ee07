"""Completed packages: results in (YAML sheet or filled PDF), judged, stored, verified."""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest
from conftest import ROOT
from lockfill import fill_locks
from pypdf import PdfReader, PdfWriter

from workpack.cli import main
from workpack.records import read_payload
from workpack.render.pdf import field_name
from workpack.store import open_store

VESSEL = str(ROOT / "plants" / "demo-vessel.yaml")
FINDINGS = str(ROOT / "plants" / "demo-vessel-findings.yaml")
AT = "2026-12-02T16:00+00:00"


@pytest.fixture(scope="module")
def packages(demo_plan: Path) -> Path:
    """The demo vessel's packages as issued (planned once per session; only read here)."""
    return demo_plan


def windlass(packages: Path) -> Path:
    for twin in sorted(packages.glob("WP-*.json")):
        if json.loads(twin.read_text(encoding="utf-8"))["origin"]["rule"] == "low-insulation":
            return twin
    raise AssertionError("no windlass package")


def numbers(package: Path) -> dict[str, str]:
    """Where the windlass package keeps its readings: the insulation test as found, the
    polarization index, the test after the dry-out and the restoration's readings (step
    numbers follow the rule and the planner's own steps, so they are looked up)."""
    data = json.loads(package.read_text(encoding="utf-8"))
    tests = [s for s in data["steps"] if s["readings"] and s["readings"][0]["unit"] == "MΩ"]
    index = next(s for s in data["steps"] if s["readings"] and "polarization" in
                 s["readings"][0]["what"])
    after = next(s for s in data["restoration"] if s["readings"])
    return {"found": f"S{tests[0]['number']}", "pi": f"S{index['number']}",
            "dry": f"S{tests[-1]['number']}", "back": f"X{after['number']}"}


def filled_sheet(package: Path, tmp_path: Path, *, dry_out_mohm: str = "40 MΩ",
                 removed: bool = True) -> Path:
    at = numbers(package)
    sheet = tmp_path / "results.yaml"
    assert main(["results-template", str(package), "--out", str(sheet)]) == 0
    text = sheet.read_text(encoding="utf-8")
    text = text.replace("completed_by:            # technician", "completed_by: S. Quayle")
    text = text.replace("supervisor:\n", "supervisor: R. Tamsin\n")
    text = text.replace("completed_on:            # YYYY-MM-DD", "completed_on: 2026-12-02")
    text = text.replace("tester_proven_before: false", "tester_proven_before: true")
    text = text.replace("tester_proven_after: false", "tester_proven_after: true")
    text = fill_locks(text, "S. Quayle", first=7, removed=removed)
    text = re.sub(r'(    "[A-C12]-[A-CE12]":)\n', r"\1 0\n", text)
    text = text.replace("{done: false}", "{done: true}")
    text = re.sub(rf"(  {at['found']}\.R\d:.*\n)    value:\n    temperature:.*\n",
                  r"\1    value: 1.1\n    temperature: 25\n", text)
    text = re.sub(rf"(  {at['dry']}\.R\d:.*\n)    value:\n    temperature:.*\n",
                  rf"\1    value: {dry_out_mohm}\n    temperature: 30 °C\n", text)
    text = re.sub(rf"(  {at['pi']}\.R1:.*\n)    value:\n", r"\1    value: 2.4\n", text)
    text = re.sub(rf"(  {at['back']}\.R\d:.*\n)    value:\n", r"\1    value: 253\n", text)
    sheet.write_text(text, encoding="utf-8")
    return sheet


def test_yaml_round_trip_records_a_passed_job(packages, tmp_path, capsys) -> None:
    package = windlass(packages)
    db = tmp_path / "records.sqlite"
    assert main(["record", str(package), str(filled_sheet(package, tmp_path)),
                 "--db", str(db), "--at", AT]) == 0
    out = capsys.readouterr().out
    assert "PASSED" in out and "recorded as record 1" in out
    with open_store(db, create=False) as store:
        record = store.get(1)
        assert record.verdict == "passed"
        payload = read_payload(record)
        readings = {r.id: r for r in payload.evaluation.readings}
        # IEEE 43 halving rule: 40 MΩ at 30 °C is 20 MΩ at 40 °C.
        dry = numbers(package)["dry"]
        assert readings[f"{dry}.R1"].compared_si == pytest.approx(20e6)
        assert payload.results.readings[f"{dry}.R1"].value == "40 MΩ"
    assert main(["verify", "--db", str(db)]) == 0


def test_failing_reading_names_its_limit_and_becomes_tomorrows_finding(
    packages, tmp_path, capsys,
) -> None:
    package = windlass(packages)
    followups = tmp_path / "tomorrow.yaml"
    assert main(["record", str(package),
                 str(filled_sheet(package, tmp_path, dry_out_mohm="6 MΩ")),
                 "--db", str(tmp_path / "r.sqlite"), "--at", AT,
                 "--followups", str(followups)]) == 1  # recorded; exit 1: found wanting
    out = capsys.readouterr().out
    # 6 MΩ at 30 °C → 3 MΩ at 40 °C, below the 5 MΩ of IEEE Std 43 (2013) 12.3.
    assert "FAILED" in out and "below the minimum 5 MΩ (IEEE Std 43 (2013), 12.3)" in out
    text = followups.read_text(encoding="utf-8")
    assert "where: WL-1" in text and "kind: insulation_resistance" in text


def test_a_lock_applied_and_never_removed_fails_the_job(packages, tmp_path, capsys) -> None:
    package = windlass(packages)
    assert main(["record", str(package), str(filled_sheet(package, tmp_path, removed=False)),
                 "--db", str(tmp_path / "r.sqlite"), "--at", AT]) == 1
    out = capsys.readouterr().out
    assert "FAILED" in out
    assert "CB-WL1: lock L-08 applied by S. Quayle was never recorded as removed" in out


def test_filled_pdf_gives_the_same_record_as_the_yaml_sheet(packages, tmp_path) -> None:
    package = windlass(packages)
    data = json.loads(package.read_text(encoding="utf-8"))
    sheet = filled_sheet(package, tmp_path)
    yaml_db, pdf_db = tmp_path / "yaml.sqlite", tmp_path / "pdf.sqlite"
    assert main(["record", str(package), str(sheet), "--db", str(yaml_db), "--at", AT]) == 0

    values: dict[str, str] = {field_name("sign", "technician"): "S. Quayle",
                              field_name("sign", "supervisor"): "R. Tamsin",
                              field_name("sign", "date"): "2026-12-02"}
    for number, point in enumerate(data["isolation"], start=7):
        device = point["device"]
        values |= {field_name("lock", device, "number"): f"L-{number:02d}",
                   field_name("tag", device, "number"): f"T-{number:02d}",
                   field_name("lock", device, "applied_by"): "S. Quayle",
                   field_name("lock", device, "applied_at"): "2026-12-02 08:15",
                   field_name("lock", device, "removed_by"): "S. Quayle",
                   field_name("lock", device, "removed_at"): "2026-12-02 15:30"}
    for index, point in enumerate(data["proving_dead"], start=1):
        values |= {field_name("dead", index, pair): "0" for pair in point["pairs"]}
    at = numbers(package)
    for step in data["steps"]:
        for reading in step["readings"]:
            if reading["id"].startswith(f"{at['found']}."):
                values |= {field_name("reading", reading["id"]): "1.1",
                           field_name("temperature", reading["id"]): "25"}
            elif reading["id"].startswith(f"{at['dry']}."):
                values |= {field_name("reading", reading["id"]): "40 MΩ",
                           field_name("temperature", reading["id"]): "30 °C"}
            elif reading["id"] == f"{at['pi']}.R1":
                values[field_name("reading", reading["id"])] = "2.4"
    for step in data["restoration"]:
        for reading in step["readings"]:
            values[field_name("reading", reading["id"])] = "253"
    # Each reading names the instrument it was taken with, in its own field.
    values |= {field_name("instrument", name.split(":", 1)[1].replace("%2E", ".")): "IT-03"
               for name in list(values) if name.startswith("reading:")}
    writer = PdfWriter(clone_from=PdfReader(package.with_suffix(".pdf")))
    for page in writer.pages:
        writer.update_page_form_field_values(page, values, auto_regenerate=False)
    for name in [n for n in PdfReader(package.with_suffix(".pdf")).get_fields()
                 if n.startswith(("step:", "restore:", "tester:"))]:
        for page in writer.pages:
            writer.update_page_form_field_values(page, {name: "/Yes"}, auto_regenerate=False)
    filled = tmp_path / "filled.pdf"
    with open(filled, "wb") as handle:
        writer.write(handle)
    assert main(["record", str(package), str(filled), "--db", str(pdf_db), "--at", AT]) == 0
    with open_store(yaml_db, create=False) as a, open_store(pdf_db, create=False) as b:
        from_yaml, from_pdf = (read_payload(a.get(1)).evaluation,
                               read_payload(b.get(1)).evaluation)
    assert from_pdf.verdict == from_yaml.verdict == "passed"
    assert from_pdf.readings == from_yaml.readings
    with open_store(pdf_db, create=False) as b:
        entered = read_payload(b.get(1)).results.readings
    assert {m.instrument for m in entered.values()} == {"IT-03"}


@pytest.mark.parametrize(("change", "expected"), [
    (("package: WP-", "package: XX-"), r":5:10: package: these results answer 'XX-"),
    (("    value: 253\n", "    value: 253 kΩ\n"),
     r"readings\.X\d+\.R1\.value: 'kΩ' is not a unit of voltage"),
    (("S3.R1:", "S3.R9:"),
     r"readings\.S3\.R9: no reading 'S3\.R9' in WP-SKL-\d+-\d+ \(did you mean"),
    (("completed_on: 2026-12-02", "completed_on: 2026-13-02"),
     r":9:15: YAML: '2026-13-02' is not a real date"),
    (("  CB-WL1:", "  CB-WL9:"), r"isolation\.CB-WL9: 'CB-WL9' is not an isolation point"),
    (("package: WP-", "# package: WP-"), r": package: required field is missing"),
])
def test_bad_results_are_one_located_line_and_store_nothing(
    packages, tmp_path, capsys, change, expected,
) -> None:
    package = windlass(packages)
    sheet = filled_sheet(package, tmp_path)
    sheet.write_text(sheet.read_text(encoding="utf-8").replace(*change, 1), encoding="utf-8")
    db = tmp_path / "r.sqlite"
    assert main(["record", str(package), str(sheet), "--db", str(db), "--at", AT]) == 2
    err = capsys.readouterr().err
    assert re.search(expected, err), err
    assert err.startswith(str(sheet) + ":") and "Traceback" not in err
    assert not db.exists()  # nothing stored, not even an empty store


def test_a_correction_supersedes_and_never_changes_the_first_record(packages, tmp_path) -> None:
    package = windlass(packages)
    db = tmp_path / "r.sqlite"
    assert main(["record", str(package), str(filled_sheet(package, tmp_path, removed=False)),
                 "--db", str(db), "--at", AT]) == 1
    assert main(["record", str(package), str(filled_sheet(package, tmp_path)), "--db", str(db),
                 "--at", "2026-12-02T17:00+00:00", "--supersedes", "1"]) == 0
    with open_store(db, create=False) as store:
        assert store.get(1).verdict == "failed"
        latest = store.latest(json.loads(package.read_text(encoding="utf-8"))["id"])
        assert latest is not None and latest.sequence == 2 and latest.supersedes == 1
        assert store.verify().ok


def test_audit_and_closeout_commands_show_what_was_entered(packages, tmp_path, capsys) -> None:
    package = windlass(packages)
    db = tmp_path / "records.sqlite"
    assert main(["record", str(package), str(filled_sheet(package, tmp_path, dry_out_mohm="6")),
                 "--db", str(db), "--at", AT]) == 1  # 6 MΩ fails: recorded, exit 1
    out = tmp_path / "audit"
    assert main(["audit", "--db", str(db), "--packages", str(packages), "--as-of",
                 "2026-12-03", "--out", str(out)]) == 0
    html = (out / "audit.html").read_text(encoding="utf-8")
    package_id = json.loads(package.read_text(encoding="utf-8"))["id"]
    assert package_id in html and "FAIL" in html
    # 6 MΩ at 30 °C → 3 MΩ at 40 °C, below 5 MΩ (IEEE Std 43 (2013) halving rule, 12.3).
    assert "below the minimum 5 MΩ" in html
    closeout = tmp_path / "closeout.pdf"
    assert main(["closeout", str(package), "--db", str(db), "--out", str(closeout)]) == 0
    text = "\n".join(page.extract_text() for page in PdfReader(closeout).pages)
    assert "FAILED" in text and "S. Quayle" in text
    capsys.readouterr()


def test_verify_names_a_tampered_record(packages, tmp_path, capsys) -> None:
    import sqlite3

    package = windlass(packages)
    db = tmp_path / "records.sqlite"
    for n in range(3):
        correction = ["--supersedes", str(n)] if n else []
        assert main(["record", str(package), str(filled_sheet(package, tmp_path)), "--db",
                     str(db), "--at", f"2026-12-02T1{n}:00+00:00", *correction]) == 0
    connection = sqlite3.connect(db)
    triggers = [name for (name,) in connection.execute(
        "SELECT name FROM sqlite_master WHERE type = 'trigger'")]
    for name in triggers:
        connection.execute(f'DROP TRIGGER "{name}"')
    connection.execute("UPDATE records SET recorded_by = 'someone else' WHERE sequence = 2")
    connection.commit()
    connection.close()
    capsys.readouterr()
    assert main(["verify", "--db", str(db)]) == 1
    assert "record 2" in capsys.readouterr().out


def test_recording_twice_needs_a_correction_and_an_empty_sheet_is_refused(
    packages, tmp_path, capsys,
) -> None:
    package = windlass(packages)
    db = tmp_path / "r.sqlite"
    sheet = filled_sheet(package, tmp_path)
    assert main(["record", str(package), str(sheet), "--db", str(db), "--at", AT]) == 0
    assert main(["record", str(package), str(sheet), "--db", str(db), "--at", AT]) == 2
    assert "already recorded (record 1)" in capsys.readouterr().err
    blank = tmp_path / "blank.yaml"
    assert main(["results-template", str(package), "--out", str(blank)]) == 0
    assert main(["record", str(package), str(blank), "--db", str(tmp_path / "b.sqlite"),
                 "--at", AT]) == 2
    assert "nothing is filled in" in capsys.readouterr().err
