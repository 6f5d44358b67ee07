"""Anchors: a signed statement of a chain head, and the comparison that catches a chain
rewritten with recomputed hashes. Pure: chains are built with the store's own hash
function (``workpack.store._chain.next_row``), as a tamperer with write access would."""

from __future__ import annotations

import datetime as dt
import json

import pytest
from crewdata import at, key, person, register
from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey
from pydantic import ValidationError

from workpack.anchors import (
    AnchorError,
    anchor_content,
    anchor_head,
    anchor_line,
    anchor_text,
    check_anchor_signature,
    compare_with_chain,
    parse_typed_head,
    sign_anchor,
    take_anchor,
)
from workpack.model.anchor import AnchorFile, AnchorStatement
from workpack.signing import Verdict
from workpack.store._chain import StoredRow, next_row, plant_genesis

PLANT = "MV Tern"
TAKEN = at("2026-12-02T16:30:00.750+01:00")
OFFICER = Ed25519PrivateKey.from_private_bytes(bytes(range(32)))
STRANGER = Ed25519PrivateKey.from_private_bytes(bytes(range(1, 33)))


def chain(verdicts: list[str], plant: str = PLANT) -> list[StoredRow]:
    rows: list[StoredRow] = []
    for number, verdict in enumerate(verdicts, start=1):
        rows.append(next_row(rows[-1] if rows else None, package_id=f"WP-{number}",
                             package_sha256="a" * 64, results_json='{"r":1}',
                             recorded_by="tech", recorded_at=f"2026-12-0{number}T10:00:00"
                                                             ".000000Z",
                             supersedes=None, verdict=verdict, genesis=plant_genesis(plant)))
    return rows


def pairs(rows: list[StoredRow]) -> list[tuple[int, str]]:
    return [(row.sequence, row.chain_sha256) for row in rows]


def crew(revoked_at: str | None = None):  # type: ignore[no-untyped-def]
    return register(person("EO-1", "R. Penhallow", role="electrical_officer",
                           keys=[key("EO-1-K1", OFFICER, "2026-01-01T00:00:00Z",
                                     revoked_at=revoked_at)]))


ORIGINAL = ["passed", "failed", "passed", "passed"]


def test_anchor_states_plant_count_head_and_time() -> None:
    rows = chain(ORIGINAL)
    statement = take_anchor(PLANT, [r.chain_sha256 for r in rows], TAKEN)
    assert (statement.plant, statement.count) == (PLANT, 4)
    assert statement.head_sha256 == rows[-1].chain_sha256
    assert statement.taken_at == dt.datetime(2026, 12, 2, 15, 30, tzinfo=dt.UTC)
    assert statement.trail == tuple(r.chain_sha256[:16] for r in rows)
    assert anchor_head(statement) is not None and anchor_head(statement).sequence == 4  # type: ignore[union-attr]
    assert f"head 4:{rows[-1].chain_sha256}" in anchor_line(statement)


def test_empty_chain_is_anchored_at_its_plants_genesis() -> None:
    statement = take_anchor(PLANT, [], TAKEN)
    assert statement.head_sha256 == plant_genesis(PLANT)
    assert anchor_head(statement) is None
    assert compare_with_chain(statement, pairs(chain(ORIGINAL)), plant=PLANT).ok


def test_a_value_that_is_not_a_chain_hash_is_refused() -> None:
    with pytest.raises(AnchorError, match="record 2"):
        take_anchor(PLANT, ["a" * 64, "not a hash"], TAKEN)


def test_file_round_trips_byte_for_byte_and_verifies() -> None:
    rows = chain(ORIGINAL)
    signed = sign_anchor(take_anchor(PLANT, [r.chain_sha256 for r in rows], TAKEN), OFFICER,
                         person="EO-1", key="EO-1-K1")
    text = anchor_text(signed)
    again = AnchorFile.model_validate(json.loads(text))
    assert anchor_text(again) == text
    assert text == anchor_text(sign_anchor(take_anchor(PLANT, [r.chain_sha256 for r in rows],
                                                       TAKEN), OFFICER, person="EO-1",
                                           key="EO-1-K1"))
    assert check_anchor_signature(crew(), again).ok


@pytest.mark.parametrize("field, value", [("count", 3), ("plant", "MV Plover"),
                                          ("head_sha256", "b" * 64)])
def test_an_edited_statement_no_longer_matches_its_signature(field: str, value: object) -> None:
    rows = chain(ORIGINAL)
    signed = sign_anchor(take_anchor(PLANT, [r.chain_sha256 for r in rows], TAKEN), OFFICER,
                         person="EO-1", key="EO-1-K1")
    data = json.loads(anchor_text(signed))
    data["anchor"][field] = value
    if field == "count":
        data["anchor"]["trail"] = data["anchor"]["trail"][:3]
        data["anchor"]["head_sha256"] = rows[2].chain_sha256
    if field == "head_sha256":
        data["anchor"]["trail"][-1] = value[:16]  # type: ignore[index]
    edited = AnchorFile.model_validate(data)
    assert check_anchor_signature(crew(), edited).verdict is Verdict.bad_signature


def test_anchor_signed_by_a_stranger_or_after_revocation_is_refused() -> None:
    statement = take_anchor(PLANT, [r.chain_sha256 for r in chain(ORIGINAL)], TAKEN)
    forged = sign_anchor(statement, STRANGER, person="EO-1", key="EO-1-K1")
    assert check_anchor_signature(crew(), forged).verdict is Verdict.bad_signature
    unknown = sign_anchor(statement, STRANGER, person="EO-1", key="EO-1-K9")
    assert check_anchor_signature(crew(), unknown).verdict is Verdict.unknown_key
    signed = sign_anchor(statement, OFFICER, person="EO-1", key="EO-1-K1")
    late = crew(revoked_at="2026-12-01T00:00:00Z")
    assert check_anchor_signature(late, signed).verdict is Verdict.revoked


def test_the_same_chain_with_records_added_since_still_contains_the_anchor() -> None:
    rows = chain(ORIGINAL)
    statement = take_anchor(PLANT, [r.chain_sha256 for r in rows], TAKEN)
    grown = chain(ORIGINAL + ["passed", "failed"])
    result = compare_with_chain(statement, pairs(grown), plant=PLANT)
    assert result.ok and result.first_divergent is None, result.message


@pytest.mark.parametrize("changed", [1, 2, 4])
def test_whole_chain_rewrite_with_recomputed_hashes_names_the_first_changed_record(
        changed: int) -> None:
    rows = chain(ORIGINAL)
    statement = take_anchor(PLANT, [r.chain_sha256 for r in rows], TAKEN)
    verdicts = list(ORIGINAL)
    verdicts[changed - 1] = "passed" if verdicts[changed - 1] == "failed" else "failed"
    rewritten = chain(verdicts + ["passed"])  # a valid chain in itself, hashes recomputed
    result = compare_with_chain(statement, pairs(rewritten), plant=PLANT)
    assert not result.ok
    assert result.first_divergent == changed
    assert f"record {changed} differs" in result.message


def test_a_head_typed_from_paper_catches_the_rewrite_without_naming_the_record() -> None:
    rows = chain(ORIGINAL)
    typed = parse_typed_head(f" 4 : {rows[-1].chain_sha256.upper()} ")
    assert typed is not None and typed.chain_sha256 == rows[-1].chain_sha256
    assert compare_with_chain(typed, pairs(rows), plant=PLANT).ok
    rewritten = chain(["passed", "passed", "passed", "passed"])
    result = compare_with_chain(typed, pairs(rewritten), plant=PLANT)
    assert not result.ok and result.first_divergent is None
    assert "no longer contains" in result.message


def test_records_cut_from_the_end_or_renumbered() -> None:
    rows = chain(ORIGINAL)
    statement = take_anchor(PLANT, [r.chain_sha256 for r in rows], TAKEN)
    short = compare_with_chain(statement, pairs(rows[:2]), plant=PLANT)
    assert (short.ok, short.first_divergent) == (False, 3)
    assert "record 3 is missing" in short.message
    gap = compare_with_chain(statement, pairs([rows[0], rows[2], rows[3]]), plant=PLANT)
    assert (gap.ok, gap.first_divergent) == (False, 2)


def test_anchor_of_another_plant_is_refused() -> None:
    statement = take_anchor("MV Plover", [r.chain_sha256 for r in chain(ORIGINAL)], TAKEN)
    result = compare_with_chain(statement, pairs(chain(ORIGINAL)), plant=PLANT)
    assert not result.ok and "MV Plover" in result.message


def test_text_that_is_not_a_typed_head() -> None:
    assert parse_typed_head("anchors/tern.json") is None
    assert parse_typed_head("0:" + "a" * 64) is None
    assert parse_typed_head("3:" + "a" * 63) is None


@pytest.mark.parametrize("change", [{"trail": ["a" * 16]}, {"taken_at": "2026-12-02T16:30:00"},
                                    {"head_sha256": "A" * 64}])
def test_malformed_statements_are_refused(change: dict[str, object]) -> None:
    good = anchor_content(take_anchor(PLANT, [r.chain_sha256 for r in chain(ORIGINAL)], TAKEN))
    with pytest.raises(ValidationError):
        AnchorStatement.model_validate(good | change)
