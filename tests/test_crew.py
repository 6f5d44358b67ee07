"""The crew register: demo registers load, broken ones are refused where the mistake is,
and the pure questions (qualified, may supervise, may this key sign now) answer right."""

from __future__ import annotations

import datetime as dt
import json
from pathlib import Path

import pytest
from crewdata import at, key, person, register
from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

from workpack.cli import main
from workpack.crew import (
    KeyOutcome,
    KeyRefusal,
    competence_gap,
    key_valid_at,
    may_supervise,
    qualified,
    serves,
    signer_problems,
)
from workpack.crew_shell import load_crew
from workpack.errors import InputError
from workpack.model.crew import Competence, Requirement

ROOT = Path(__file__).resolve().parent.parent
BROKEN = ROOT / "tests" / "fixtures" / "crew"
VESSEL_CREW = ROOT / "plants" / "demo-vessel-crew.yaml"
SITE_CREW = ROOT / "plants" / "demo-site-crew.yaml"


# --- the demo registers ----------------------------------------------------------------------


def test_the_demo_registers_load_and_pass_every_check() -> None:
    vessel, _ = load_crew(VESSEL_CREW)
    site, _ = load_crew(SITE_CREW)
    assert vessel.crew.plants == ("MV Skerry Lantern",)
    assert [p.id for p in vessel.people] == ["LCS-0098", "LCS-0107", "LCS-0112", "LCS-0131",
                                             "LCS-0140", "LCS-0064"]
    assert len(site.people) == 4
    assert serves(vessel, "MV Skerry Lantern") and not serves(vessel, "MV Other")
    assert serves(register(person("P-1", "A. One")), "any plant at all")


def test_crew_check_summarises_who_holds_what_and_which_key_signs(capsys) -> None:
    assert main(["crew", "check", str(VESSEL_CREW), "--at", "2026-12-02T08:00Z"]) == 0
    out = capsys.readouterr().out
    assert out.startswith("MV Skerry Lantern electrical crew: 6 people (1 left), 6 keys "
                          "(2 revoked), as of 2026-12-02T08:00:00Z\n")
    assert ("LCS-0107  S. Quayle  electrical officer  8 h/day\n"
            "  holds: authorised_person up to 1000 V until 2028-03-01; ground_present up to "
            "1000 V until 2028-03-01\n  signs with: LCS-0107-K2\n") in out
    assert ("LCS-0064  D. Vellacott  electrical officer  8 h/day, left on 2026-06-30\n"
            "  holds: nothing current\n  signs with: no key valid now\n") in out


def test_crew_check_before_a_rotation_shows_the_old_key(capsys) -> None:
    assert main(["crew", "check", str(VESSEL_CREW), "--at", "2026-09-14T06:59:59Z",
                 "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    quayle = next(p for p in data["people"] if p["id"] == "LCS-0107")
    assert quayle["keys_valid"] == ["LCS-0107-K1"]
    assert data["crew"]["plants"] == ["MV Skerry Lantern"]


def test_crew_check_refuses_a_time_without_zone(capsys) -> None:
    assert main(["crew", "check", str(VESSEL_CREW), "--at", "2026-12-02T08:00"]) == 2
    captured = capsys.readouterr()
    assert captured.out == ""
    assert captured.err == ("--at 2026-12-02T08:00: give the time zone too, e.g. "
                            "2026-12-02T08:00Z (UTC) or 2026-12-02T08:00+01:00: key times "
                            "are compared across time zones\n")


# --- broken registers: exit 2, one line each, at the mistake -----------------------------------

BROKEN_CASES = [
    ("duplicate_person_id", ["14:9: people[1].id: person id 'P-1' is given twice: an id "
                             "belongs to one person for good (give this person a new one) "
                             "(first given on line 7)"]),
    ("duplicate_key_id", ["20:13: people[1].keys[0].id: key id 'K-1' is given twice: a key "
                          "id is never reused (first given on line 11)"]),
    ("public_key_on_two_people", ["20:21: people[1].keys[0].public_key: this public key is "
                                  "also A. One (P-1)'s key K-1: each key belongs to one entry "
                                  "(create a new key pair) (first given on line 12)"]),
    ("revoked_before_valid", ["14:21: people[0].keys[0].revoked_at: revoked at "
                              "2026-01-05T07:59:59Z, before it became valid "
                              "(2026-01-05T08:00:00Z)"]),
    ("time_without_zone", ["13:21: people[0].keys[0].valid_from: 2026-01-05T08:00:00 has no "
                           "time zone: write 2026-01-05T08:00:00Z (UTC) or with its offset, "
                           "e.g. 2026-01-05T08:00:00+01:00"]),
    ("public_key_too_short", ["12:21: people[0].keys[0].public_key: the public key decodes "
                              "to 31 bytes, expected 32"]),
    ("revoked_without_reason", ["11:9: people[0].keys[0]: revoked_at needs revoked_reason: "
                                "say why the key was revoked"]),
    ("leaver_key_not_revoked", ["12:9: people[0].keys[0]: A. One left on 2026-06-30, but key "
                                "K-1 is not revoked by then: revoke it (`workpack key "
                                "revoke`)"]),
    ("misspelled_field", ["6:5: people[0].hours_per_day: required field is missing",
                          "9:5: people[0].hours_per_dya: unknown field (check its spelling; "
                          "`workpack schema` lists the fields)"]),
    ("qualification_expires_before_granted", ["11:9: people[0].qualifications[0]: expires_on "
                                              "2026-02-01 is not after granted_on "
                                              "2026-03-01"]),
    ("voltage_in_amperes", ["12:22: people[0].qualifications[0].up_to_volts: 'A' is not a "
                            "unit of voltage: it is a unit of current (expected something "
                            "like V)"]),
]


def test_every_broken_register_has_a_case() -> None:
    assert {p.stem for p in BROKEN.glob("*.yaml")} == {name for name, _ in BROKEN_CASES}


@pytest.mark.parametrize(("name", "lines"), BROKEN_CASES, ids=[n for n, _ in BROKEN_CASES])
def test_a_broken_register_is_refused_at_its_mistake(name: str, lines: list[str],
                                                     capsys) -> None:
    path = BROKEN / f"{name}.yaml"
    assert main(["crew", "check", str(path), "--at", "2026-12-01T00:00Z"]) == 2
    captured = capsys.readouterr()
    assert captured.out == ""
    assert captured.err == "".join(f"{path}:{line}\n" for line in lines)


def test_the_fixture_comments_name_the_line_the_loader_reports() -> None:
    """Each fixture's first line names the line of its mistake: it and the message agree."""
    for name, lines in BROKEN_CASES:
        first = (BROKEN / f"{name}.yaml").read_text(encoding="utf-8").splitlines()[0]
        reported = lines[-1].split(":")[0]
        assert f"line {reported}" in first, (name, first)


def test_a_register_that_is_not_a_mapping_is_one_line(tmp_path: Path) -> None:
    path = tmp_path / "crew.yaml"
    path.write_text("- just\n- a list\n", encoding="utf-8")
    with pytest.raises(InputError) as caught:
        load_crew(path)
    assert caught.value.format_message() == (f"{path}:1:1: expected a crew register (a "
                                             "mapping of sections), found a list")


# --- qualified, may supervise, signers ---------------------------------------------------------

QUAYLE = person("P-7", "S. Quayle", qualifications=[
    {"kind": "authorised_person", "up_to_volts": "1000 V", "granted_on": "2025-03-01",
     "expires_on": "2028-03-01"}])
MARROW = person("P-12", "T. Marrow", qualifications=[
    {"kind": "competent_person", "up_to_volts": "440 V"}])
PENHALLOW = person("P-98", "R. Penhallow", role="supervisor", qualifications=[
    {"kind": "supervisor", "up_to_volts": "1000 V", "granted_on": "2024-02-01"}])
LEAVER = person("P-64", "D. Vellacott", left_on="2026-06-30", qualifications=[
    {"kind": "competent_person", "up_to_volts": "1000 V"}])
CREW = register(QUAYLE, MARROW, PENHALLOW, LEAVER)


def need(kind: str, volts: float) -> Requirement:
    return Requirement(kind=Competence(kind), volts=volts)


def crew_member(person_id: str):
    found = CREW.person(person_id)
    assert found is not None
    return found


DAY = dt.date(2026, 12, 2)


def test_a_qualification_covers_its_voltage_and_no_more() -> None:
    marrow = crew_member("P-12")
    assert qualified(marrow, need("competent_person", 440.0), DAY)
    assert qualified(marrow, need("competent_person", 230.0), DAY)
    assert not qualified(marrow, need("competent_person", 690.0), DAY)
    assert competence_gap(marrow, need("competent_person", 690.0), DAY) == (
        "T. Marrow (P-12) holds competent_person only up to 440 V (the work is on 690 V)")


def test_an_authorised_person_counts_as_competent_but_not_the_other_way() -> None:
    """Common practice: an authorised person is appointed from among the competent."""
    assert qualified(crew_member("P-7"), need("competent_person", 440.0), DAY)
    assert not qualified(crew_member("P-12"), need("authorised_person", 440.0), DAY)
    assert competence_gap(crew_member("P-12"), need("authorised_person", 440.0), DAY) == (
        "T. Marrow (P-12) does not hold authorised_person")


def test_a_qualification_holds_from_its_first_day_until_the_day_it_expires() -> None:
    quayle = crew_member("P-7")
    work = need("authorised_person", 440.0)
    assert not qualified(quayle, work, dt.date(2025, 2, 28))
    assert qualified(quayle, work, dt.date(2025, 3, 1))
    assert qualified(quayle, work, dt.date(2028, 2, 29))
    assert not qualified(quayle, work, dt.date(2028, 3, 1))
    assert competence_gap(quayle, work, dt.date(2028, 3, 1)) == (
        "S. Quayle (P-7) held authorised_person until 2028-03-01")
    assert competence_gap(quayle, work, dt.date(2025, 2, 28)) == (
        "S. Quayle (P-7) holds authorised_person only from 2025-03-01")


def test_the_day_of_a_time_is_its_date_as_given() -> None:
    """23:30 on the last day at +10:00 is still that day locally (13:30 UTC)."""
    quayle = crew_member("P-7")
    work = need("authorised_person", 440.0)
    assert qualified(quayle, work, at("2028-02-29T23:30:00+10:00"))
    assert not qualified(quayle, work, at("2028-03-01T00:30:00+10:00"))


def test_someone_who_left_is_qualified_for_nothing_after_their_last_day() -> None:
    leaver = crew_member("P-64")
    assert qualified(leaver, need("competent_person", 440.0), dt.date(2026, 6, 30))
    assert competence_gap(leaver, need("competent_person", 440.0), dt.date(2026, 7, 1)) == (
        "D. Vellacott (P-64) left on 2026-06-30")


def test_only_a_supervisor_may_supervise() -> None:
    assert may_supervise(crew_member("P-98"), 440.0, DAY)
    assert not may_supervise(crew_member("P-7"), 440.0, DAY)
    assert not may_supervise(crew_member("P-98"), 440.0, dt.date(2024, 1, 31))
    assert not may_supervise(crew_member("P-98"), 3300.0, DAY)


def test_a_record_may_be_signed_by_a_qualified_technician_and_another_supervisor() -> None:
    needs = [need("competent_person", 440.0)]
    assert signer_problems(CREW, "P-12", "P-98", needs, 440.0, DAY) == []


def test_the_same_person_may_not_sign_as_technician_and_supervisor() -> None:
    both = person("P-99", "K. Ashgrove", qualifications=[
        {"kind": "supervisor", "up_to_volts": "1000 V"},
        {"kind": "authorised_person", "up_to_volts": "1000 V"}])
    crew = register(both)
    assert signer_problems(crew, "P-99", "P-99", [need("competent_person", 440.0)], 440.0,
                           DAY) == ["K. Ashgrove (P-99) is named as technician and as "
                                    "supervisor: the job needs two people"]
    assert signer_problems(crew, "P-99", None, [need("competent_person", 440.0)], 440.0, DAY,
                           supervisor_needed=False) == []


def test_unknown_and_unqualified_signers_are_named() -> None:
    problems = signer_problems(CREW, "P-21", "P-7", [need("competent_person", 440.0)], 440.0,
                               DAY)
    assert problems == ["technician 'P-21' is not in the crew register (did you mean 'P-12'?)",
                        "S. Quayle (P-7) does not hold supervisor"]
    assert signer_problems(CREW, "P-12", "P-98", [need("competent_person", 690.0)], 690.0,
                           DAY) == ["T. Marrow (P-12) holds competent_person only up to 440 V "
                                    "(the work is on 690 V)"]
    assert signer_problems(CREW, None, None, [], 440.0, DAY) == [
        "no technician named", "no supervisor named, and the job needs one"]


# --- may this key sign at this time -----------------------------------------------------------

OLD, NEW = Ed25519PrivateKey.generate(), Ed25519PrivateKey.generate()
KEYED = register(person("P-7", "S. Quayle", keys=[
    key("P-7-K1", OLD, "2026-01-05T08:00:00Z", "2026-09-14T07:00:00Z", "replaced by P-7-K2"),
    key("P-7-K2", NEW, "2026-09-14T07:00:00Z")]))


def test_a_key_signs_from_its_valid_from_up_to_but_not_at_its_revocation() -> None:
    assert key_valid_at(KEYED, "P-7-K1", at("2026-01-05T08:00:00Z")) == KEYED.people[0]
    assert key_valid_at(KEYED, "P-7-K1", at("2026-09-14T06:59:59Z")) == KEYED.people[0]
    refused = key_valid_at(KEYED, "P-7-K1", at("2026-09-14T07:00:00Z"))
    assert refused == KeyRefusal(KeyOutcome.revoked, "key P-7-K1 of S. Quayle (P-7) was "
                                 "revoked at 2026-09-14T07:00:00Z (replaced by P-7-K2), before "
                                 "2026-09-14T07:00:00Z")
    assert key_valid_at(KEYED, "P-7-K2", at("2026-09-14T07:00:00Z")) == KEYED.people[0]


def test_times_in_other_zones_compare_as_instants() -> None:
    """09:00 at +02:00 is 07:00 UTC: the moment K1 was revoked."""
    assert isinstance(key_valid_at(KEYED, "P-7-K1", at("2026-09-14T09:00:00+02:00")),
                      KeyRefusal)
    assert key_valid_at(KEYED, "P-7-K1", at("2026-09-14T08:59:59+02:00")) == KEYED.people[0]


def test_a_key_does_not_sign_before_it_is_valid_and_an_unknown_key_never() -> None:
    early = key_valid_at(KEYED, "P-7-K2", at("2026-09-14T06:00:00Z"))
    assert isinstance(early, KeyRefusal) and early.outcome is KeyOutcome.not_yet_valid
    assert early.message == ("key P-7-K2 of S. Quayle (P-7) is valid only from "
                             "2026-09-14T07:00:00Z, not at 2026-09-14T06:00:00Z")
    unknown = key_valid_at(KEYED, "P-7-K3", at("2026-10-01T00:00:00Z"))
    assert unknown == KeyRefusal(KeyOutcome.unknown_key, "no key 'P-7-K3' in the crew "
                                 "register (did you mean 'P-7-K2' or 'P-7-K1'?)")
