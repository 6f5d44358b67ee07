"""The office's tables: records, readings and the due list, as XLSX or CSV.

Records are real: the sample package filled in, evaluated, stored in a temporary
SQLite store. Invented data. Due dates are worked out here by hand from the demo
site's routine entries and the project's interval rule (a month is 30 days, a year
365: ``Routine.interval_days``), not read from the code.
"""

from __future__ import annotations

import csv
import datetime as dt
import io
import zipfile
from pathlib import Path
from typing import Any

import pytest
from conftest import ROOT
from openpyxl import load_workbook
from samplepackage import PAIRS, sample_package

from workpack.cli import main
from workpack.evaluate import evaluate
from workpack.exports import TABLE_KINDS, ExportInputs, build_tables
from workpack.loading import load_plant
from workpack.model.package import Limit, WorkPackage
from workpack.model.results import LockRecord, MeasuredValue, Results, StepDone
from workpack.records import record_payload
from workpack.store import open_store, package_sha256

SITE = ROOT / "plants" / "demo-site.yaml"
VESSEL = ROOT / "plants" / "demo-vessel.yaml"
AS_OF = dt.date(2026, 12, 1)
IR_LIMIT = Limit(low=5e6, basis="IEEE Std 43 (2013), 12.3: 5 MΩ",
                 temperature_corrected_to_c=40.0, code_set="ieee43-2013")


def ir_package(number: int, day: dt.date, element: str) -> WorkPackage:
    """The sample package with its three IR readings taken on ``element``."""
    base = sample_package(number)
    megger = base.steps[1]
    readings = tuple(r.model_copy(update={"limit": IR_LIMIT, "element": element,
                                          "test_voltage_v": 500.0})
                     for r in megger.readings)
    steps = (base.steps[0], megger.model_copy(update={"readings": readings}),
             *base.steps[2:])
    return base.model_copy(update={"id": f"WP-{day:%Y%m%d}-{number:02d}", "date": day,
                                   "steps": steps})


def filled(package: WorkPackage, ir: tuple[Any, Any, Any]) -> Results:
    locks = {p.device: LockRecord(lock="L-1", tag="T-1", applied_by="S. Quayle",
                                  removed_by="S. Quayle") for p in package.isolation}
    readings = {f"X1.R{i}": MeasuredValue(value=253) for i in (1, 2, 3)}
    readings |= {f"S2.R{i}": MeasuredValue(value=v, temperature=25)
                 for i, v in enumerate(ir, start=1)}
    return Results(package=package.id, completed_by="S. Quayle", supervisor="R. Tamsin",
                   completed_on=package.date, tester_proven_before=True,
                   tester_proven_after=True, isolation=locks,
                   proving_dead={1: dict.fromkeys(PAIRS, 0)},
                   steps={s.number: StepDone(done=True) for s in package.steps},
                   readings=readings,
                   restoration={s.number: StepDone(done=True) for s in package.restoration})


P1 = ir_package(1, dt.date(2026, 3, 2), "SG-2")
P2 = ir_package(2, dt.date(2026, 6, 1), "SG-2")
P3 = ir_package(3, dt.date(2026, 9, 1), "SG-2")


@pytest.fixture(scope="module")
def db(tmp_path_factory: pytest.TempPathFactory, standards: dict) -> Path:
    """Records 1-4 (4 corrects 3: a slipped entry of 0.6 MΩ for 60 MΩ), then 5, whose
    payload holds no evaluation. SG-2's insulation falls from 800 to 60 MΩ."""
    path = tmp_path_factory.mktemp("export") / "vessel.records.sqlite"
    with open_store(path) as store:
        for sequence, (package, ir, supersedes) in enumerate((
            (P1, ("800 MΩ", 820, 810), None), (P2, (300, 310, "305 MΩ"), None),
            (P3, (0.6, 65, 70), None), (P3, (60, 65, 70), 3),
        ), start=1):
            results = filled(package, ir)
            evaluation = evaluate(package, results, standards)
            at = dt.datetime.combine(package.date, dt.time(16, 0), tzinfo=dt.UTC)
            record = store.append(package_id=package.id,
                                  package_sha256=package_sha256(package),
                                  results=record_payload(results, evaluation),
                                  recorded_by="office", recorded_at=at,
                                  verdict=evaluation.verdict, supersedes=supersedes)
            assert record.sequence == sequence
        store.append(package_id="WP-20261120-09", package_sha256="0" * 64,
                     results={"note": "entered by an older tool"}, recorded_by="office",
                     recorded_at=dt.datetime(2026, 11, 20, 9, tzinfo=dt.UTC),
                     verdict="passed")
    return path


def records_of(db: Path) -> list[Any]:
    with open_store(db, create=False) as store:
        return list(store.records())


def rows(table: Any) -> list[dict[str, Any]]:
    return [dict(zip(table.columns, row, strict=True)) for row in table.rows]


def test_records_name_package_verdict_who_when_and_corrections(db) -> None:
    (table,) = build_tables(["records"], ExportInputs(as_of=AS_OF, records=records_of(db)))
    records = rows(table)
    assert [(r["record"], r["package"], r["verdict"]) for r in records] == [
        (1, P1.id, "passed"), (2, P2.id, "passed"), (3, P3.id, "failed"),
        (4, P3.id, "passed"), (5, "WP-20261120-09", "passed")]
    assert records[2]["superseded_by"] == 4 and records[3]["supersedes"] == 3
    assert records[0]["recorded_at"] == "2026-03-02T16:00:00+00:00"
    assert (records[0]["recorded_by"], records[0]["completed_by"]) == ("office", "S. Quayle")
    assert records[0]["package_date"] == dt.date(2026, 3, 2) and records[0]["item"] == "WL-1"
    assert records[4]["unreadable"] == "the record holds no evaluation"


def test_readings_are_in_their_unit_as_entered_with_their_limits(db) -> None:
    (table,) = build_tables(["readings"], ExportInputs(as_of=AS_OF, records=records_of(db)))
    readings = rows(table)
    first = next(r for r in readings if r["record"] == 1 and r["reading"] == "S2.R1")
    assert (first["entered"], first["measured"], first["unit"]) == ("800 MΩ", 800.0, "MΩ")
    assert (first["low"], first["high"], first["temperature_c"]) == (5.0, None, 25.0)
    assert first["element"] == "SG-2" and first["outcome"] == "pass"
    slipped = next(r for r in readings if r["record"] == 3 and r["reading"] == "S2.R1")
    # IEEE Std 43-2013 correction to 40 °C halves per 10 °C: 0.6 MΩ at 25 °C is
    # 0.6 × 0.5^1.5 ≈ 0.21 MΩ, below the 5 MΩ minimum.
    assert (slipped["entered"], slipped["measured"], slipped["outcome"]) == ("0.6", 0.6, "fail")
    voltage = next(r for r in readings if r["record"] == 1 and r["reading"] == "X1.R1")
    assert (voltage["measured"], voltage["unit"]) == (253.0, "V")
    assert {r["record"] for r in readings} == {1, 2, 3, 4}  # record 5 has no evaluation


def expected_site_due() -> list[tuple[str, str, dt.date, int]]:
    """Worked by hand from plants/demo-site.yaml: last_done + 180 days (6 months) or
    + 365 days (1 year), as of 2026-12-01, 30 days ahead."""
    return [
        ("CR-1", "insulation_resistance", dt.date(2026, 11, 24), -7),    # 2026-05-28 + 180
        ("VSB", "insulation_resistance", dt.date(2026, 11, 25), -6),     # 2025-11-25 + 365
        ("FP-1", "insulation_resistance", dt.date(2026, 12, 2), 1),      # 2026-06-05 + 180
        ("ICP", "insulation_monitor_test", dt.date(2026, 12, 2), 1),     # 2026-06-05 + 180
        ("MSB", "insulation_monitor_test", dt.date(2026, 12, 2), 1),     # 2026-06-05 + 180
        ("T2", "transformer_inspection", dt.date(2026, 12, 2), 1),       # 2025-12-02 + 365
    ]


def test_the_due_list_covers_overdue_and_the_next_days() -> None:
    plant, _ = load_plant(SITE)
    (table,) = build_tables(["due"], ExportInputs(as_of=AS_OF, plant=plant, days=30))
    assert [(r["element"], r["test"], r["due_on"], r["days_left"]) for r in rows(table)] == \
        expected_site_due()
    (today,) = build_tables(["due"], ExportInputs(as_of=AS_OF, plant=plant, days=0))
    assert [r["element"] for r in rows(today)] == ["CR-1", "VSB"]


def test_a_falling_insulation_record_brings_a_test_into_the_due_list(db, standards) -> None:
    """SG-2: last done 2026-09-02, every 6 months: due 2027-03-01 by interval, but its
    recorded insulation fell from 800 to 60 MΩ: the planner tests it now."""
    from workpack.history import history_from_records

    plant, _ = load_plant(VESSEL)
    inputs = ExportInputs(as_of=AS_OF, plant=plant, days=30, standards=standards)
    plain = rows(build_tables(["due"], inputs)[0])
    assert "SG-2" not in {r["element"] for r in plain}
    history = history_from_records(records_of(db), "ieee43-2013")
    (table,) = build_tables(["due"], ExportInputs(as_of=AS_OF, plant=plant, days=30,
                                                  history=history, standards=standards))
    sg2 = next(r for r in rows(table) if r["element"] == "SG-2")
    assert (sg2["due_on"], sg2["days_left"]) == (AS_OF, 0)
    assert sg2["reason"].startswith("brought forward: insulation ")
    assert sg2["last_done"] == dt.date(2026, 9, 2)


def test_the_command_writes_one_workbook_with_a_sheet_per_table(db, tmp_path, capsys) -> None:
    out = tmp_path / "office.xlsx"
    assert main(["export", "--db", str(db), "--plant", str(SITE), "--as-of", "2026-12-01",
                 "--out", str(out)]) == 0
    assert capsys.readouterr().out == ("records: 5 rows\nreadings: 24 rows\ndue: 6 rows\n"
                                       f"written: {out}\n")
    book = load_workbook(out)
    assert book.sheetnames == ["records", "readings", "due"]
    due = book["due"]
    assert [c.value for c in due[1]] == list(TABLE_KINDS["due"].build(ExportInputs(
        as_of=AS_OF, plant=load_plant(SITE)[0]))[0].columns)
    assert due["G2"].value == dt.datetime(2026, 11, 24)  # a date cell, not text
    assert due["G2"].number_format == "yyyy-mm-dd"


def test_two_exports_are_byte_identical_with_fixed_dates(db, tmp_path) -> None:
    """openpyxl stamps "now" into the document and zip entries; ours are the as-of day."""
    first, second = tmp_path / "a.xlsx", tmp_path / "b.xlsx"
    for out in (first, second):
        assert main(["export", "--db", str(db), "--plant", str(SITE), "--as-of",
                     "2026-12-01", "--out", str(out)]) == 0
    assert first.read_bytes() == second.read_bytes()
    with zipfile.ZipFile(first) as archive:
        assert {entry.date_time for entry in archive.infolist()} == {(2026, 12, 1, 0, 0, 0)}
        core = archive.read("docProps/core.xml").decode()
    # Read as XML: openpyxl writes the namespaces in another place when lxml is there
    # (pyhanko brings it), the same bytes every time either way.
    from xml.etree import ElementTree

    terms = "{http://purl.org/dc/terms/}"
    typed = "{http://www.w3.org/2001/XMLSchema-instance}type"
    root = ElementTree.fromstring(core)
    for name in ("created", "modified"):
        stamp = root.find(terms + name)
        assert stamp is not None and stamp.text == "2026-12-01T00:00:00Z"
        assert stamp.get(typed) == "dcterms:W3CDTF"


def test_an_asset_list_does_not_depend_on_the_day(tmp_path) -> None:
    """No table of it depends on --as-of, so the workbook carries a fixed date."""
    outs = [tmp_path / "a.xlsx", tmp_path / "b.xlsx"]
    for out, day in zip(outs, ("2026-12-01", "2027-02-11"), strict=True):
        assert main(["export", "--what", "assets", "--plant", str(SITE), "--as-of", day,
                     "--out", str(out)]) == 0
    assert outs[0].read_bytes() == outs[1].read_bytes()


def test_csv_goes_to_one_file_per_table(db, tmp_path, capsys) -> None:
    folder = tmp_path / "office"
    assert main(["export", "--db", str(db), "--plant", str(SITE), "--as-of", "2026-12-01",
                 "--out", str(folder)]) == 0
    assert sorted(p.name for p in folder.iterdir()) == ["due.csv", "readings.csv",
                                                        "records.csv"]
    raw = (folder / "due.csv").read_bytes()
    assert raw.startswith(b"\xef\xbb\xbf")  # BOM: spreadsheet programs then read UTF-8
    table = list(csv.reader(io.StringIO(raw.decode("utf-8-sig"))))
    assert table[1][:3] == ["CR-1", "primary crusher motor", "crusher building"]
    assert table[1][6:8] == ["2026-11-24", "-7"]
    capsys.readouterr()
    assert main(["export", "--db", str(db), "--plant", str(SITE), "--as-of", "2026-12-01",
                 "--out", str(tmp_path / "one.csv")]) == 2
    assert capsys.readouterr().err == (
        f"{tmp_path}/one.csv: a CSV file holds one table, and this export has 3 (records, "
        "readings, due); name a folder (one CSV each) or a .xlsx workbook\n")
    assert not (tmp_path / "one.csv").exists()


def test_export_tells_what_is_missing(tmp_path, capsys) -> None:
    assert main(["export", "--what", "due", "--out", str(tmp_path / "d.csv")]) == 2
    assert capsys.readouterr().err == "--plant: the due table needs the plant inventory\n"
    assert main(["export", "--plant", str(SITE), "--out", str(tmp_path / "x.xlsx")]) == 2
    assert capsys.readouterr().err == (
        f"no records store at {ROOT}/plants/demo-site.records.sqlite: give --db, or "
        "--what due for the due list alone\n")
    assert main(["export", "--what", "due", "--plant", str(SITE), "--days", "-1",
                 "--out", str(tmp_path / "d.csv")]) == 2
    assert capsys.readouterr().err == "--days -1: give 0 or more days\n"


def test_an_office_store_exports_the_chain_of_the_plant_named(pg_fresh_url, tmp_path,
                                                              capsys) -> None:
    """A PostgreSQL store keeps a chain per plant: the export takes the one named."""
    for plant, package in (("MV Skerry Lantern", "WP-20261201-01"),
                           ("MV Birch (invented)", "WP-20261201-02")):
        with open_store(pg_fresh_url, plant=plant) as store:
            store.append(package_id=package, package_sha256="0" * 64, results={},
                         recorded_by="office", verdict="passed",
                         recorded_at=dt.datetime(2026, 12, 1, 9, tzinfo=dt.UTC))
    out = tmp_path / "records.csv"
    assert main(["export", "--what", "records", "--db", pg_fresh_url, "--out", str(out)]) == 2
    assert capsys.readouterr().err == (
        f"{pg_fresh_url}: the store holds the records of 2 plants (MV Birch (invented), "
        "MV Skerry Lantern); name one\n")
    assert main(["export", "--what", "records", "--db", pg_fresh_url, "--plant",
                 "MV Birch (invented)", "--out", str(out)]) == 0
    table = list(csv.reader(io.StringIO(out.read_bytes().decode("utf-8-sig"))))
    assert [row[:2] for row in table[1:]] == [["1", "WP-20261201-02"]]
