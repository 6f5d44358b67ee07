"""A record against the registers: the plant's lock register (from the store), the crew
register (who signs) and the instrument register (what each reading was taken with).

Each bad entry is one located line (file:line:col: field: message), exit 2, and nothing
written. The crew and instrument registers are the demo vessel's.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest
from conftest import ROOT
from lockfill import fill_locks
from test_record import AT, filled_sheet, windlass

from workpack.cli import main
from workpack.records import read_payload
from workpack.store import open_store

CREW = str(ROOT / "plants" / "demo-vessel-crew.yaml")
INSTRUMENTS = str(ROOT / "plants" / "demo-vessel-instruments.yaml")
VESSEL = str(ROOT / "plants" / "demo-vessel.yaml")


@pytest.fixture(scope="module")
def packages(demo_plan: Path) -> Path:
    return demo_plan


def other_isolating_package(packages: Path, not_this: Path) -> Path:
    """A second package of the day that locks something off."""
    for twin in sorted(packages.glob("WP-*.json")):
        data = json.loads(twin.read_text(encoding="utf-8"))
        if twin != not_this and data["isolation"] and not data["final_tests"]:
            return twin
    raise AssertionError("no second package with an isolation")


def signed_sheet(package: Path, tmp_path: Path, **changes: str) -> Path:
    """The windlass sheet signed by people of the demo crew, each reading naming IT-03."""
    sheet = filled_sheet(package, tmp_path)
    text = sheet.read_text(encoding="utf-8")
    text = text.replace("supervisor: R. Tamsin\n", "supervisor: R. Penhallow\n")
    text = re.sub(r"(?m)^    instrument:.*$", "    instrument: IT-03", text)
    for old, new in changes.items():
        assert old in text, old
        text = text.replace(old, new, 1)
    sheet.write_text(text, encoding="utf-8")
    return sheet


def refused(capsys, sheet: Path, db: Path, fragment: str) -> str:
    err = capsys.readouterr().err
    assert re.match(rf"{re.escape(str(sheet))}:\d+:\d+: ", err), err
    assert fragment in err, err
    assert len(err.strip().splitlines()) == 1 and "Traceback" not in err, err
    assert not db.exists()  # nothing stored, not even an empty store
    return err


def record(package: Path, sheet: Path, db: Path, *options: str) -> int:
    return main(["record", str(package), str(sheet), "--db", str(db), "--at", AT, *options])


# --- locks -------------------------------------------------------------------------------------


def test_one_lock_number_on_two_breakers_is_refused(packages, tmp_path, capsys) -> None:
    package = windlass(packages)
    sheet = signed_sheet(package, tmp_path, **{"lock: L-08": "lock: L-07"})
    db = tmp_path / "r.sqlite"
    assert record(package, sheet, db) == 2
    err = refused(capsys, sheet, db, "lock L-07 is also on CB-DK-H-WL1 for job WP-")
    assert "isolation.CB-WL1.lock: " in err


def test_a_lock_time_in_words_is_refused(packages, tmp_path, capsys) -> None:
    package = windlass(packages)
    sheet = signed_sheet(package, tmp_path, **{'applied_at: "2026-12-02 08:15"':
                                               "applied_at: after lunch"})
    db = tmp_path / "r.sqlite"
    assert record(package, sheet, db) == 2
    refused(capsys, sheet, db, "applied_at: 'after lunch' is not a date and time: write it "
                               "as YYYY-MM-DD HH:MM")


def test_a_removal_before_the_lock_went_on_is_refused(packages, tmp_path, capsys) -> None:
    package = windlass(packages)
    sheet = signed_sheet(package, tmp_path, **{'removed_at: "2026-12-02 15:30"':
                                               'removed_at: "2026-12-02 07:00"'})
    db = tmp_path / "r.sqlite"
    assert record(package, sheet, db) == 2
    refused(capsys, sheet, db, "removed_at: removed at 2026-12-02 07:00, before it was "
                               "applied (2026-12-02 08:15)")


def test_a_lock_left_on_by_one_job_cannot_go_on_another_point(packages, tmp_path,
                                                              capsys) -> None:
    """The windlass job is suspended with its locks on; the next job may not reuse L-07
    until it is recorded removed; then it may."""
    windlass_package = windlass(packages)
    db = tmp_path / "r.sqlite"
    # Recorded, and found wanting (exit 1): its locks are still on.
    assert record(windlass_package, filled_sheet(windlass_package, tmp_path, removed=False),
                  db) == 1
    other = other_isolating_package(packages, windlass_package)
    sheet = tmp_path / "other.yaml"
    assert main(["results-template", str(other), "--out", str(sheet)]) == 0
    sheet.write_text(fill_locks(sheet.read_text(encoding="utf-8"), "S. Quayle", first=7,
                                day="2026-12-02").replace("completed_by:            # "
                                                          "technician",
                                                          "completed_by: S. Quayle"),
                     encoding="utf-8")
    capsys.readouterr()
    with open_store(db, create=False) as store:
        before = len(list(store.records()))
    assert record(other, sheet, db) == 2
    err = capsys.readouterr().err
    assert "lock L-07 is on CB-DK-H-WL1 for job " in err
    assert "since 2026-12-02 08:15 (held by S. Quayle): a lock number is on one place at a " \
           "time" in err
    with open_store(db, create=False) as store:
        assert len(list(store.records())) == before  # nothing written
    # The windlass record corrected: its locks removed at 15:30; L-07 is free again.
    assert main(["record", str(windlass_package), str(filled_sheet(windlass_package, tmp_path)),
                 "--db", str(db), "--at", AT, "--supersedes", "1"]) == 0
    assert record(other, sheet, db) == 2  # still: the other job put L-07 on at 08:15 too
    assert "until 2026-12-02 15:30" in capsys.readouterr().err
    later = sheet.read_text(encoding="utf-8").replace("2026-12-02 08:15", "2026-12-02 16:00")
    later = later.replace("2026-12-02 15:30", "2026-12-02 17:00")
    sheet.write_text(later, encoding="utf-8")
    assert record(other, sheet, db) == 1  # recorded; incomplete (only its locks filled in)
    assert "recorded as record 3" in capsys.readouterr().out


def test_the_lock_register_shows_what_is_on_with_its_transfer(packages, tmp_path,
                                                              capsys) -> None:
    """A job suspended with its locks on; at the shift change S. Quayle hands L-07 to
    M. Rosevear (29 CFR 1910.147(f)(4)); `workpack locks` shows both locks, whose now."""
    package = windlass(packages)
    sheet = filled_sheet(package, tmp_path, removed=False)
    text = sheet.read_text(encoding="utf-8")
    handover = ('    transfers: [{from_holder: S. Quayle, to_holder: M. Rosevear, '
                'at: "2026-12-02 20:00"}]\n')
    first_lock = text.index("    removed_at:")
    end = text.index("\n", first_lock) + 1
    sheet.write_text(text[:end] + handover + text[end:], encoding="utf-8")
    db = tmp_path / "r.sqlite"
    assert record(package, sheet, db) == 1  # recorded; failed while its locks are on
    capsys.readouterr()
    assert main(["locks", VESSEL, "--db", str(db)]) == 0
    out = capsys.readouterr().out
    assert "Locks on now, MV Skerry Lantern" in out and ": 2\n" in out
    job = json.loads(package.read_text(encoding="utf-8"))["id"]
    assert re.search(r"L-07\s+CB-DK-H-WL1\s+M\. Rosevear \(from 2026-12-02 20:00; applied by "
                     rf"S\. Quayle\)\s+2026-12-02 08:15\s+{job}", out), out
    assert re.search(rf"L-08\s+CB-WL1\s+S\. Quayle\s+2026-12-02 08:15\s+{job}", out), out
    assert main(["locks", VESSEL, "--db", str(db), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert [(lock["lock"], lock["place"], lock["holder"], lock["job"])
            for lock in data["locks_on"]] == [("L-07", "CB-DK-H-WL1", "M. Rosevear", job),
                                              ("L-08", "CB-WL1", "S. Quayle", job)]


def test_a_transfer_from_someone_not_holding_the_lock_is_refused(packages, tmp_path,
                                                                 capsys) -> None:
    package = windlass(packages)
    sheet = filled_sheet(package, tmp_path, removed=False)
    text = sheet.read_text(encoding="utf-8")
    first_lock = text.index("    removed_at:")
    end = text.index("\n", first_lock) + 1
    text = (text[:end] + '    transfers: [{from_holder: T. Marrow, to_holder: M. Rosevear, '
            'at: "2026-12-02 20:00"}]\n' + text[end:])
    sheet.write_text(text, encoding="utf-8")
    db = tmp_path / "r.sqlite"
    assert record(package, sheet, db) == 2
    refused(capsys, sheet, db, "transfer 1 is from 'T. Marrow', but the lock is held then "
                               "by 'S. Quayle'")


def test_group_lockout_box_keys_must_match_the_locks_in_it(packages, tmp_path, capsys) -> None:
    """29 CFR 1910.147(f)(3): both point locks' keys in lock box B-1, each worker's own lock
    on the box; a box said to hold three keys for two locks is refused."""
    package = windlass(packages)
    sheet = filled_sheet(package, tmp_path)
    text = sheet.read_text(encoding="utf-8")
    text = re.sub(r"(?m)^(    lock: L-0[78])$", r"\1\n    box: B-1", text)
    boxes = ("lock_boxes:\n  B-1:\n    keys: {keys}\n    personal_locks:\n"
             '      P-31: {{applied_by: M. Rosevear, applied_at: "2026-12-02 08:30", '
             'removed_by: M. Rosevear, removed_at: "2026-12-02 15:00"}}\n'
             '      P-12: {{applied_by: T. Marrow, applied_at: "2026-12-02 08:35", '
             'removed_by: T. Marrow, removed_at: "2026-12-02 15:10"}}\n')
    sheet.write_text(text + boxes.format(keys=2), encoding="utf-8")
    db = tmp_path / "r.sqlite"
    assert record(package, sheet, db) == 0
    capsys.readouterr()
    sheet.write_text(text + boxes.format(keys=3), encoding="utf-8")
    db2 = tmp_path / "r2.sqlite"
    assert record(package, sheet, db2) == 2
    refused(capsys, sheet, db2, "lock_boxes.B-1.keys: lock box B-1 holds 3 key(s), but 2 "
                                "point lock(s) put their key in it")


# --- people ------------------------------------------------------------------------------------


def test_signed_by_people_of_the_register_is_recorded(packages, tmp_path, capsys) -> None:
    package = windlass(packages)
    db = tmp_path / "r.sqlite"
    assert record(package, signed_sheet(package, tmp_path), db, "--crew", CREW,
                  "--instruments", INSTRUMENTS) == 0
    assert "PASSED" in capsys.readouterr().out


@pytest.mark.parametrize(("change", "fragment"), [
    ({"completed_by: S. Quayle": "completed_by: S. Quale"},
     "completed_by: technician 'S. Quale' is not in the crew register"),
    ({"completed_by: S. Quayle": "completed_by: A. Polglaze"},
     "completed_by: A. Polglaze (LCS-0140) does not hold authorised_person"),
    ({"completed_by: S. Quayle": "completed_by: T. Marrow"},
     "completed_by: T. Marrow (LCS-0112) does not hold authorised_person"),
    ({"supervisor: R. Penhallow": "supervisor: LCS-0107"},
     "supervisor: S. Quayle (LCS-0107) is named as technician and as supervisor: the job "
     "needs two people"),
    ({"supervisor: R. Penhallow": "supervisor: M. Rosevear"},
     "supervisor: M. Rosevear (LCS-0131) does not hold supervisor"),
], ids=["unknown", "trainee", "competent-not-authorised", "same-person", "not-a-supervisor"])
def test_a_record_signed_by_the_wrong_people_is_refused(packages, tmp_path, capsys, change,
                                                       fragment) -> None:
    package = windlass(packages)
    sheet = signed_sheet(package, tmp_path, **change)
    db = tmp_path / "r.sqlite"
    assert record(package, sheet, db, "--crew", CREW) == 2
    refused(capsys, sheet, db, fragment)


# --- instruments -------------------------------------------------------------------------------


def test_a_reading_with_an_instrument_out_of_calibration_is_refused(packages, tmp_path,
                                                                     capsys) -> None:
    """IT-01's calibration held until 2026-11-30; the work was done on 2026-12-02."""
    package = windlass(packages)
    sheet = signed_sheet(package, tmp_path, **{"instrument: IT-03": "instrument: IT-01"})
    db = tmp_path / "r.sqlite"
    assert record(package, sheet, db, "--instruments", INSTRUMENTS) == 2
    refused(capsys, sheet, db, "IT-01 (insulation_tester, serial TR2-004417) was out of "
                               "calibration on 2026-12-02: its calibration held until "
                               "2026-11-30")


@pytest.mark.parametrize(("change", "fragment"), [
    ({"instrument: IT-03": "instrument: IT-3"},
     "instrument 'IT-3' is not in the instrument register"),
    ({"instrument: IT-03": "instrument:"}, "name the instrument it was read with"),
], ids=["unknown", "not-named"])
def test_a_reading_must_name_an_instrument_of_the_register(packages, tmp_path, capsys, change,
                                                           fragment) -> None:
    package = windlass(packages)
    sheet = signed_sheet(package, tmp_path, **change)
    db = tmp_path / "r.sqlite"
    assert record(package, sheet, db, "--instruments", INSTRUMENTS) == 2
    refused(capsys, sheet, db, fragment)


def test_a_reading_outside_the_instruments_range_is_recorded_as_not_accepted(
    packages, tmp_path, capsys,
) -> None:
    """The dry-out test's three readings of 50 MΩ written as taken with the multimeter
    MM-11, whose resistance range ends at 40 MΩ: recorded, not accepted, and why."""
    package = windlass(packages)
    sheet = signed_sheet(package, tmp_path)
    text = sheet.read_text(encoding="utf-8")
    text = text.replace("value: 40 MΩ\n    temperature: 30 °C\n    instrument: IT-03",
                        "value: 50 MΩ\n    temperature: 30 °C\n    instrument: MM-11")
    assert "instrument: MM-11" in text
    sheet.write_text(text, encoding="utf-8")
    db = tmp_path / "r.sqlite"
    assert record(package, sheet, db, "--instruments", INSTRUMENTS) == 1  # found wanting
    out = capsys.readouterr().out
    assert "INCOMPLETE" in out
    assert out.count("not accepted: 50 MΩ is outside the range of MM-11 (100 mΩ to "
                     "40 MΩ)") == 3
    with open_store(db, create=False) as store:
        payload = read_payload(store.get(1))
    dry = [r for r in payload.evaluation.readings if r.note.startswith("not accepted")]
    assert [(r.outcome, r.measured_si) for r in dry] == [("not recorded", 50e6)] * 3


def test_a_lock_holder_not_in_the_crew_register_is_refused(packages, tmp_path, capsys) -> None:
    package = windlass(packages)
    sheet = signed_sheet(package, tmp_path, **{"applied_by: S. Quayle": "applied_by: S. Qualye"})
    db = tmp_path / "r.sqlite"
    assert record(package, sheet, db, "--crew", CREW) == 2
    refused(capsys, sheet, db, "applied_by: 'S. Qualye' is not in the crew register")


def test_a_transferred_lock_is_removed_by_its_new_holder(packages, tmp_path, capsys) -> None:
    """After the shift change M. Rosevear holds L-07 and removes it: no deviation; had
    S. Quayle removed it, the record would say the holder should have."""
    package = windlass(packages)
    sheet = signed_sheet(package, tmp_path)
    text = sheet.read_text(encoding="utf-8")
    start = text.index("    lock: L-07")
    end = text.index("    removed_at:", start)
    block = text[start:end].replace("removed_by: S. Quayle", "removed_by: M. Rosevear")
    handover = ('    transfers: [{from_holder: S. Quayle, to_holder: M. Rosevear, '
                'at: "2026-12-02 12:00"}]\n')
    sheet.write_text(text[:start] + block + handover + text[end:], encoding="utf-8")
    db = tmp_path / "r.sqlite"
    assert record(package, sheet, db, "--crew", CREW) == 0
    assert "PASSED" in capsys.readouterr().out
    sheet.write_text(text[:start] + text[start:end] + handover + text[end:], encoding="utf-8")
    assert record(package, sheet, tmp_path / "r2.sqlite") == 1  # incomplete: said why
    out = capsys.readouterr().out
    assert "lock L-07 held by M. Rosevear (transferred from S. Quayle) was removed by " \
           "S. Quayle: each lock is removed by whoever holds it" in out


@pytest.mark.parametrize(("change", "to", "expected"), [
    ("  - id: MM-11\n", "  - id: IT-03\n",
     r":23:9: instruments\[1\]\.id: instrument id 'IT-03' is given twice: readings name an "
     r"instrument by its id \(first given on line 12\)"),
    ("{measures: voltage, low: 12 V, high: 1000 V}",
     "{measures: resistance, low: 12 V, high: 1000 V}",
     r":\d+:\d+: instruments\[2\]\.ranges\[0\]: low: 'V' is not a unit of resistance"),
], ids=["duplicate-id", "range-in-the-wrong-unit"])
def test_a_broken_instrument_register_is_one_located_line(packages, tmp_path, capsys, change,
                                                          to, expected) -> None:
    register = tmp_path / "instruments.yaml"
    text = Path(INSTRUMENTS).read_text(encoding="utf-8")
    assert change in text
    register.write_text(text.replace(change, to, 1), encoding="utf-8")
    package = windlass(packages)
    db = tmp_path / "r.sqlite"
    assert record(package, signed_sheet(package, tmp_path), db, "--instruments",
                  str(register)) == 2
    err = capsys.readouterr().err
    assert re.match(re.escape(str(register)) + expected, err), err
    assert len(err.strip().splitlines()) == 1
    assert not db.exists()
