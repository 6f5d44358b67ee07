"""Named people on the day's jobs (`plan --crew`), and what each job asks of them."""

from __future__ import annotations

import datetime as dt
import json
from collections import defaultdict
from pathlib import Path

import pytest
from conftest import ROOT
from pypdf import PdfReader

from workpack.cli import main
from workpack.competence import derive_needs, job_needs
from workpack.crew import may_supervise, qualified
from workpack.crew_shell import load_crew
from workpack.model.crew import Competence, Requirement
from workpack.model.package import WorkPackage

VESSEL = str(ROOT / "plants" / "demo-vessel.yaml")
FINDINGS = str(ROOT / "plants" / "demo-vessel-findings.yaml")
CREW = ROOT / "plants" / "demo-vessel-crew.yaml"
DAY = dt.date(2026, 12, 2)


@pytest.fixture(scope="module")
def staffed(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The demo day planned with the demo crew register (hours from the register)."""
    out = tmp_path_factory.mktemp("staffed") / "out"
    assert main(["plan", VESSEL, FINDINGS, "--out", str(out), "--crew", str(CREW)]) == 0
    return out


def packages(folder: Path) -> list[WorkPackage]:
    return [WorkPackage.model_validate_json(p.read_text(encoding="utf-8"))
            for p in sorted(folder.glob("WP-*.json"))]


def test_isolation_needs_an_authorised_person_and_a_supervisor() -> None:
    """Common practice in employers' electrical safety rules (workpack.competence)."""
    isolating = derive_needs("insulation_test", isolates=True, tests=True, volts=440.0)
    assert [(n.kind, n.volts) for n in isolating.needs] == [
        (Competence.authorised_person, 440.0)]
    assert isolating.supervisor_needed
    live_test = derive_needs("inspection", isolates=False, tests=True, volts=440.0)
    assert [n.kind for n in live_test.needs] == [Competence.competent_person]
    assert not live_test.supervisor_needed
    search = derive_needs("locate_ground", isolates=True, tests=True, volts=None)
    assert [n.kind for n in search.needs] == [Competence.authorised_person,
                                             Competence.ground_present]
    assert search.volts == 1000.0  # unknown voltage: the top of the low-voltage band


def test_every_package_states_what_it_needs_and_prints_it(staffed) -> None:
    folder = staffed
    for package in packages(folder):
        assert package.needs, package.id
        assert job_needs(package).needs == package.needs
        if package.isolation:
            assert package.supervisor_needed
    first = sorted(folder.glob("WP-*.pdf"))[0]
    text = " ".join(PdfReader(first).pages[0].extract_text().split())
    assert "the technician: authorised person" in text
    assert "Assigned" in text and "S. Quayle (LCS-0107)" in text


def test_named_people_hold_what_the_job_needs_within_their_hours(staffed) -> None:
    folder = staffed
    register, _ = load_crew(CREW)
    by_name = {f"{p.name} ({p.id})": p for p in register.people}
    used: dict[str, float] = defaultdict(float)
    staffed_ids = []
    for package in packages(folder):
        if not package.assigned:
            continue
        staffed_ids.append(package.id)
        lead, *helpers = (by_name[name] for name in package.assigned)
        assert len(package.assigned) == package.crew
        assert all(qualified(lead, need, DAY) for need in package.needs)
        volts = job_needs(package).volts
        helper_need = Requirement(kind=Competence.competent_person, volts=volts)
        assert all(qualified(helper, helper_need, DAY) for helper in helpers)
        if package.supervisor_needed:
            supervisor = by_name[package.supervisor_assigned or ""]
            assert supervisor not in (lead, *helpers)
            assert may_supervise(supervisor, volts, DAY)
        for name in package.assigned:
            used[name] += package.duration_h
    assert staffed_ids  # the demo crew staffs some of the day
    for name, hours in used.items():
        assert hours <= by_name[name].hours_per_day + 1e-9, name


def test_a_job_nobody_can_staff_is_deferred_and_named(staffed, capsys) -> None:
    folder = staffed
    day = json.loads(next(folder.glob("WP-*.json")).read_text(encoding="utf-8"))["date"]
    assert day == DAY.isoformat()
    out = folder.parent / "again"
    assert main(["plan", VESSEL, FINDINGS, "--out", str(out), "--crew", str(CREW)]) == 0
    text = capsys.readouterr().out
    assert "ATTENTION: WP-SKL-20261202-03: nobody with 3 h left holds authorised_person and " \
           "ground_present for 440 V: not staffed" in text
    assert "WP-SKL-20261202-03  P2  deferred" in text
    # Same inputs, same bytes.
    assert {p.name: p.read_bytes() for p in out.iterdir()} == {
        p.name: p.read_bytes() for p in folder.iterdir()}


def test_crew_hours_still_wins_over_the_registers_hours(tmp_path, capsys) -> None:
    assert main(["plan", VESSEL, FINDINGS, "--out", str(tmp_path / "a"), "--crew", str(CREW),
                 "--crew-hours", "8"]) == 0
    assert "(8 person-hours)" in capsys.readouterr().out
    assert main(["plan", VESSEL, FINDINGS, "--out", str(tmp_path / "b"), "--crew",
                 str(CREW)]) == 0
    # 3 + 8 + 4 + 8 + 8: everyone present on the day (the leaver left in 2026-06).
    assert "(31 person-hours)" in capsys.readouterr().out


def test_another_plants_crew_register_is_refused(tmp_path, capsys) -> None:
    site_crew = str(ROOT / "plants" / "demo-site-crew.yaml")
    assert main(["plan", VESSEL, FINDINGS, "--out", str(tmp_path / "a"), "--crew",
                 site_crew]) == 2
    err = capsys.readouterr().err
    assert err.startswith(f"--crew {site_crew}: the register is for ")
    assert err.rstrip().endswith("not MV Skerry Lantern")
    assert not (tmp_path / "a").exists()


def test_the_day_sheet_and_the_json_name_who_does_each_job(tmp_path, capsys) -> None:
    """The supervisor hands out the day from the day sheet: each staffed job's line names
    its crew (lead first) and supervisor, as its package does; --json says the same."""
    out = tmp_path / "out"
    assert main(["plan", VESSEL, FINDINGS, "--out", str(out), "--crew", str(CREW),
                 "--json"]) == 0
    report = json.loads(capsys.readouterr().out)
    staffed = {p.id: p for p in packages(out) if p.assigned}
    assert staffed
    listed = {p["id"]: (tuple(p["assigned"]), p["supervisor_assigned"])
              for p in report["packages"]}
    sheet = " ".join(" ".join(page.extract_text().split())
                     for page in PdfReader(out / f"day-{DAY}.pdf").pages)
    for package in staffed.values():
        assert listed[package.id] == (package.assigned, package.supervisor_assigned)
        names = "; ".join(package.assigned) + (
            f"; supervisor {package.supervisor_assigned}" if package.supervisor_assigned
            else "")
        assert f"Crew: {names}" in sheet, package.id
    assert all(listed[i] == ((), None) for i in listed if i not in staffed)
    plain = tmp_path / "plain"
    assert main(["plan", VESSEL, FINDINGS, "--out", str(plain), "--json"]) == 0
    unstaffed = json.loads(capsys.readouterr().out)
    assert all(p["assigned"] == [] and p["supervisor_assigned"] is None
               for p in unstaffed["packages"])
    sheet = " ".join(PdfReader(plain / f"day-{DAY}.pdf").pages[0].extract_text().split())
    assert "Crew:" not in sheet
