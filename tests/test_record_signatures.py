"""A record's signatures over its canonical content (pure): what they bind, and each way a
signature is refused against the crew register. Invented people and keys."""

from __future__ import annotations

import datetime as dt
import json
from dataclasses import replace
from typing import Any

import pytest
from crewdata import key, person, register
from trustdata import KEYS

from workpack.model.crew import CrewRegister
from workpack.record_signatures import check_record, record_content, sign_record
from workpack.signing import Verdict
from workpack.store import Record
from workpack.store._chain import sha256_hex

AT = dt.datetime(2026, 12, 2, 16, 0, 0, 250_000, tzinfo=dt.UTC)
PAYLOAD: dict[str, Any] = {"payload_version": 3,
                           "results": {"completed_by": "S. Quayle", "supervisor": "R. Tamsin",
                                       "readings": {"S2.R1": {"value": 1.1}}},
                           "evaluation": {"verdict": "failed"}}


def crew(**revoked: str) -> CrewRegister:
    def entry(pid: str, name: str, short: str) -> dict[str, Any]:
        return person(pid, name, keys=[key(f"{pid}-K1", KEYS[short], "2026-01-01T00:00:00Z",
                                           revoked_at=revoked.get(short))])
    return register(entry("LCS-0107", "S. Quayle", "quayle"),
                    entry("LCS-0098", "R. Tamsin", "penhallow"),
                    entry("LCS-0112", "T. Marrow", "marrow"))


def stored(signers: list[tuple[str, str, str]], *, verdict: str = "failed",
           payload: dict[str, Any] | None = None, sign_payload: dict[str, Any] | None = None,
           sequence: int = 1) -> Record:
    """A record as the store gives it back, signed by ``signers`` (role, key short name,
    person id) over ``sign_payload`` (default: the payload it carries)."""
    payload = payload or PAYLOAD
    ids = {"quayle": "LCS-0107", "penhallow": "LCS-0098", "marrow": "LCS-0112",
           "stranger": "LCS-0107"}
    content = record_content(package_id="WP-1", package_sha256="a" * 64, recorded_by="S. Q",
                             recorded_at=AT, supersedes=None, verdict="failed",
                             payload=sign_payload or payload)
    signatures = sign_record(content, [(role, KEYS[short], pid, f"{ids[short]}-K1")
                                       for role, short, pid in signers], AT)
    text = json.dumps({**payload, "signatures": [s.model_dump(mode="json")
                                                 for s in signatures]})
    return Record(sequence, "WP-1", "a" * 64, text, sha256_hex(text), "S. Q", AT, None,
                  verdict, "b" * 64)


BOTH = [("technician", "quayle", "LCS-0107"), ("supervisor", "penhallow", "LCS-0098")]


def verdicts(record: Record, register: CrewRegister | None = None) -> list[str]:
    return [r.check.verdict.value for r in check_record(register or crew(), record).roles]


def test_both_signatures_verify_and_name_the_signers() -> None:
    checked = check_record(crew(), stored(BOTH))
    assert checked.ok
    assert checked.message == "record 1 (WP-1): signed by S. Quayle as technician and " \
                              "R. Tamsin as supervisor"


def test_the_content_is_the_record_less_its_number_and_signatures() -> None:
    content = record_content(package_id="WP-1", package_sha256="a" * 64, recorded_by="x",
                             recorded_at=AT, supersedes=2, verdict="passed",
                             payload={**PAYLOAD, "signatures": ["left out"]})
    assert content == {"workpack_record": 1, "package_id": "WP-1", "package_sha256": "a" * 64,
                       "recorded_by": "x", "recorded_at": "2026-12-02T16:00:00.250000Z",
                       "supersedes": 2, "verdict": "passed", "payload": PAYLOAD}


def test_an_edited_verdict_or_reading_breaks_both_signatures() -> None:
    assert verdicts(replace(stored(BOTH), verdict="passed")) == ["bad_signature"] * 2
    changed = json.loads(json.dumps(PAYLOAD))
    changed["results"]["readings"]["S2.R1"]["value"] = 11
    assert verdicts(stored(BOTH, payload=changed, sign_payload=PAYLOAD)) == \
        ["bad_signature"] * 2


def test_a_signature_copied_to_another_record_does_not_verify() -> None:
    original = stored(BOTH)
    later = replace(original, sequence=2, recorded_at=AT + dt.timedelta(hours=1))
    assert verdicts(later) == ["bad_signature"] * 2


def test_unsigned_unknown_revoked_and_wrong_person_or_role() -> None:
    assert check_record(crew(), stored([])).unsigned
    assert verdicts(stored(BOTH[:1])) == ["valid", "unsigned"]
    assert verdicts(stored([("technician", "stranger", "LCS-0107"), BOTH[1]])) == \
        ["bad_signature", "valid"]  # a forged key under a real key id
    assert verdicts(stored(BOTH), crew(quayle="2026-12-02T15:00:00Z")) == ["revoked", "valid"]
    assert verdicts(stored(BOTH), crew(quayle="2026-12-02T17:00:00Z")) == ["valid", "valid"]
    swapped = [("technician", "marrow", "LCS-0112"), BOTH[1]]  # not the technician named
    assert verdicts(stored(swapped)) == ["other_person", "valid"]
    moved = [("supervisor", "quayle", "LCS-0107"), ("technician", "penhallow", "LCS-0098")]
    assert verdicts(stored(moved)) == ["other_person", "other_person"]


def test_one_person_cannot_sign_as_both() -> None:
    nameless = json.loads(json.dumps(PAYLOAD))
    nameless["results"] |= {"completed_by": None, "supervisor": None}
    twice = stored([("technician", "quayle", "LCS-0107"), ("supervisor", "quayle", "LCS-0107")],
                   payload=nameless)
    checked = check_record(crew(), twice)
    assert [r.check.verdict for r in checked.roles] == [Verdict.valid, Verdict.other_person]
    assert "signed as technician and as supervisor" in checked.message


@pytest.mark.parametrize("text", ["[1, 2]", '{"signatures": [{"signed_as": "x"}]}'])
def test_signatures_that_cannot_be_read_are_named(text: str) -> None:
    record = replace(stored(BOTH), results_json=text)
    checked = check_record(crew(), record)
    assert not checked.ok and "its signatures cannot be read" in checked.message
