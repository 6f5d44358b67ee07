"""The record format (workpack.records): payloads written and read back through one module,
old payloads still read, and one definition of the latest effective record that both
stores' SQL is held to.

The version-1 payloads in tests/fixtures/records-v1 were written by the code before the
payload had a version (see the README there); they are judged again here by today's
code, so "still reads" means "reads into the very evaluation the code makes now".
Names, times and readings are invented.
"""

from __future__ import annotations

import datetime as dt
import itertools
import json
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from samplepackage import sample_package

from workpack.evaluate import evaluate
from workpack.history import history_from_records
from workpack.loading import load_package
from workpack.model.evaluation import Evaluation
from workpack.model.results import Results
from workpack.records import (
    PAYLOAD_VERSION,
    PayloadError,
    RecordPayload,
    latest_effective,
    read_back,
    read_for_planning,
    read_payload,
    record_payload,
    superseded_by,
)
from workpack.store import RecordStore, canonical_json, open_store, package_sha256

FIXTURES = Path(__file__).resolve().parent / "fixtures" / "records-v1"
OLD_PAYLOADS = sorted(FIXTURES.glob("record-*.json"))
T0 = dt.datetime(2026, 12, 2, 8, 0, tzinfo=dt.UTC)
PKG = package_sha256(sample_package())


class Stored:
    """A stand-in for ``store.Record``: just what the records module reads."""

    def __init__(self, results_json: str, sequence: int = 1, package_id: str = "WP-1",
                 supersedes: int | None = None):
        self.results_json = results_json
        self.sequence = sequence
        self.package_id = package_id
        self.supersedes = supersedes
        self.recorded_at = T0


def old_payload(path: Path) -> tuple[Stored, Any]:
    """A version-1 record as the store kept it, and the package it answers (as issued)."""
    text = path.read_text(encoding="utf-8")
    package_id = json.loads(text)["evaluation"]["package_id"]
    package, _ = load_package(FIXTURES / f"{package_id}.json")
    return Stored(text, package_id=package_id), package


# --- old payloads ------------------------------------------------------------------------


def test_the_fixtures_are_version_1_payloads() -> None:
    """Four payloads, none with a version: a search ended at a final test, a failing reading
    with its follow-up, a lock never removed, locks kept on by the restoration's gate."""
    assert len(OLD_PAYLOADS) == 4
    for path in OLD_PAYLOADS:
        assert set(json.loads(path.read_text(encoding="utf-8"))) == {"results", "evaluation"}


@pytest.mark.parametrize("path", OLD_PAYLOADS, ids=lambda p: p.stem)
def test_an_old_payload_reads_into_the_evaluation_the_code_makes_today(path: Path,
                                                                       standards: dict) -> None:
    stored, package = old_payload(path)
    payload = read_payload(stored)
    assert payload.payload_version == 1
    assert payload.evaluation == evaluate(package, payload.results, standards)


@pytest.mark.parametrize("path", OLD_PAYLOADS, ids=lambda p: p.stem)
def test_todays_payload_is_the_old_one_with_its_version(path: Path, standards: dict) -> None:
    """Nothing lost, renamed or retyped: written again, the payload of the same results is
    the stored one plus ``payload_version`` and the fields added since, at their defaults."""
    stored, package = old_payload(path)
    results = read_payload(stored).results
    written = record_payload(results, evaluate(package, results, standards))
    assert written == {**with_fields_added_since_v1(json.loads(stored.results_json)),
                       "payload_version": PAYLOAD_VERSION}


def with_fields_added_since_v1(payload: dict) -> dict:
    """Version 3 added lock boxes, lock transfers and the instrument of a reading (all
    optional: a version 1 or 2 payload reads with them empty)."""
    def locks(scope: dict) -> None:
        for lock in scope.get("isolation", {}).values():
            lock.update({"box": None, "transfers": []})

    results = payload["results"]
    locks(results)
    for final in results.get("final_tests", {}).values():
        locks(final)
    for reading in results.get("readings", {}).values():
        reading["instrument"] = None
    results["lock_boxes"] = {}
    return payload


def test_the_old_payloads_cover_what_a_record_can_hold() -> None:
    """Between them the fixtures hold every part of an evaluation that is not always
    empty, so a field that stopped reading back could not hide."""
    read = [read_payload(old_payload(path)[0]) for path in OLD_PAYLOADS]
    evaluations = [p.evaluation for p in read]
    assert {e.verdict for e in evaluations} == {"failed"}
    assert any(e.followups for e in evaluations)
    assert any(e.locks_left_on for e in evaluations)
    assert any(e.locks_not_removed and not e.locks_left_on for e in evaluations)
    assert any(e.ground_found_at for e in evaluations)
    assert any(r.code_set and r.compared_si != r.measured_si
               for e in evaluations for r in e.readings)
    assert any(p.results.final_tests for p in read)


# --- new payloads ------------------------------------------------------------------------


@pytest.fixture(scope="module")
def written(standards: dict) -> tuple[Results, Evaluation, dict[str, Any]]:
    stored, package = old_payload(FIXTURES / "record-6.json")
    results = read_payload(stored).results
    evaluation = evaluate(package, results, standards)
    return results, evaluation, record_payload(results, evaluation)


def test_a_new_payload_states_its_version_and_reads_back_whole(written) -> None:
    results, evaluation, data = written
    assert data["payload_version"] == PAYLOAD_VERSION == 3
    assert "signatures" not in data  # unsigned: version 2's shape with its new number
    payload = read_payload(Stored(canonical_json(data)))
    assert (payload.payload_version, payload.results, payload.evaluation,
            payload.signatures) == (3, results, evaluation, ())


def test_a_payload_without_its_version_is_not_made_by_accident(written) -> None:
    """Only a stored payload is taken as version 1 when it names none."""
    results, evaluation, _ = written
    with pytest.raises(ValueError, match="payload_version"):
        RecordPayload(results=results, evaluation=evaluation)  # type: ignore[call-arg]


def test_a_payload_of_a_newer_workpack_is_refused_saying_so(written) -> None:
    data = {**written[2], "payload_version": PAYLOAD_VERSION + 1, "signatures": []}
    with pytest.raises(PayloadError) as caught:
        read_payload(Stored(canonical_json(data)))
    assert str(caught.value) == (f"the record's payload was written by a newer workpack "
                                 f"(payload version {PAYLOAD_VERSION + 1}; this one reads up "
                                 f"to {PAYLOAD_VERSION}); upgrade workpack")


@pytest.mark.parametrize(("text", "why"), [
    ("{not json", "the record's payload is not JSON"),
    ("[1, 2]", "the record's payload is not a mapping"),
    ('{"note": "entered by an older tool"}', "the record holds no evaluation"),
    ("EVALUATION ONLY", "the record holds no results"),
    ("VERDICT MISSPELT", "the record's evaluation.verdict does not read back: Input should "
                         "be 'passed', 'failed' or 'incomplete'"),
    ("VERSION AS TEXT", "the record's payload_version does not read back: Input should be a "
                        "valid integer, unable to parse string as an integer"),
])
def test_an_unreadable_payload_says_why_in_one_line(written, text: str, why: str) -> None:
    data = written[2]
    text = {"EVALUATION ONLY": canonical_json({"evaluation": data["evaluation"]}),
            "VERDICT MISSPELT": canonical_json(
                {**data, "evaluation": {**data["evaluation"], "verdict": "pased"}}),
            "VERSION AS TEXT": canonical_json({**data, "payload_version": "two"}),
            }.get(text, text)
    with pytest.raises(PayloadError) as caught:
        read_payload(Stored(text))
    assert str(caught.value) == why
    read = read_back(Stored(text))  # never raises: says why instead
    assert (read.payload, read.evaluation, read.results, read.problem) == (None, None, None,
                                                                           why)


@pytest.mark.parametrize("path", OLD_PAYLOADS, ids=lambda p: p.stem)
def test_what_planning_reads_is_what_the_whole_payload_says(path: Path) -> None:
    """The planner's quicker view of a payload (it reads every record, every day) gives
    the same evaluation, day and ground as reading the whole payload."""
    stored, _ = old_payload(path)
    whole, view = read_payload(stored), read_for_planning(stored)
    assert view is not None and view.payload_version == whole.payload_version == 1
    assert view.evaluation == whole.evaluation
    assert (view.results.completed_on, view.results.ground_found_at) == \
        (whole.results.completed_on, whole.results.ground_found_at)
    newer = {**json.loads(stored.results_json), "payload_version": PAYLOAD_VERSION + 1}
    assert read_for_planning(Stored(canonical_json(newer))) is None


def test_history_leaves_out_a_record_it_cannot_read(written) -> None:
    """Planning reads what it can; the audit and the records table name the rest."""
    data = written[2]
    records = [Stored(canonical_json(data), sequence=1, package_id="WP-1"),
               Stored('{"note": "entered by an older tool"}', sequence=2, package_id="WP-2")]
    history = history_from_records(records, "ieee43-2013")
    assert list(history.insulation) == ["WL-1"]
    assert [r.resistance_ohm for r in history.insulation["WL-1"].readings] == [6e6]


# --- the latest effective record -----------------------------------------------------------


def chain(*links: tuple[str, int | None]) -> list[Stored]:
    """Records 1, 2, 3… of the given (package, supersedes)."""
    return [Stored("{}", sequence=n, package_id=package, supersedes=supersedes)
            for n, (package, supersedes) in enumerate(links, start=1)]


def test_the_latest_effective_record_ends_the_line_of_corrections() -> None:
    records = chain(("WP-A", None), ("WP-B", None), ("WP-A", 1), ("WP-B", None), ("WP-A", 3))
    assert superseded_by(records) == {1: 3, 3: 5}
    latest = latest_effective(records)
    assert list(latest) == ["WP-A", "WP-B"]
    assert [r.sequence for r in latest.values()] == [5, 4]


def test_a_record_left_standing_is_not_revived_by_correcting_a_later_one() -> None:
    """WP-A's records 1 and 2 both stand; correcting 2 by 3 leaves 3 in effect, and
    correcting 1 by 4 makes 4 the latest: the highest number that nothing supersedes."""
    records = chain(("WP-A", None), ("WP-A", None), ("WP-A", 2))
    assert latest_effective(records)["WP-A"].sequence == 3
    records = chain(("WP-A", None), ("WP-A", None), ("WP-A", 2), ("WP-A", 1))
    assert latest_effective(records)["WP-A"].sequence == 4
    assert latest_effective(reversed(records))["WP-A"].sequence == 4  # order of reading
    assert latest_effective([]) == {}


# A chain of records the store accepts: each step adds a record of one of four packages,
# either new or correcting one of that package's records that nothing corrects yet (the
# n-th of them, counted modulo their number).
Step = tuple[int, int | None]
STEPS = st.lists(st.tuples(st.integers(0, 3), st.none() | st.integers(0, 7)),
                 min_size=1, max_size=14)

_plants = itertools.count(1)
NewStore = Callable[[], RecordStore]


@pytest.fixture(params=["sqlite", "postgresql"])
def new_store(request: pytest.FixtureRequest, tmp_path_factory: pytest.TempPathFactory
              ) -> NewStore:
    """Opens a store of its own on each call: a new SQLite file, or a new plant's chain in
    the PostgreSQL store the suite runs."""
    if request.param == "sqlite":
        folder = tmp_path_factory.mktemp("chains")
        return lambda: open_store(folder / f"r{next(_plants)}.sqlite")
    url = request.getfixturevalue("pg_store_url")
    return lambda: open_store(url, plant=f"MV Chain Plant {next(_plants):05d}")


def append_chain(store: RecordStore, steps: list[Step]) -> None:
    standing: dict[str, list[int]] = {}
    for n, (package_index, correct) in enumerate(steps, start=1):
        package = f"WP-{package_index}"
        own = standing.setdefault(package, [])
        supersedes = own[correct % len(own)] if correct is not None and own else None
        store.append(package_id=package, package_sha256=PKG, results={"n": n},
                     recorded_by="A. Lindqvist", recorded_at=T0 + dt.timedelta(minutes=n),
                     verdict="passed", supersedes=supersedes)
        if supersedes is not None:
            own.remove(supersedes)
        own.append(n)


@settings(max_examples=30, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(steps=STEPS)
def test_both_stores_sql_agrees_with_the_definition(new_store: NewStore,
                                                    steps: list[Step]) -> None:
    """``latest`` and ``latest_per_package`` (SQL in each backend) give the records that
    ``latest_effective`` (the definition, in Python) picks from the same chain."""
    with new_store() as store:
        append_chain(store, steps)
        defined = {pid: r.sequence for pid, r in latest_effective(store.records()).items()}
        per_package = store.latest_per_package()
        assert list(per_package) == list(defined)  # package id order
        assert {pid: r.sequence for pid, r in per_package.items()} == defined
        for pid in ("WP-0", "WP-1", "WP-2", "WP-3"):
            found = store.latest(pid)
            assert (found.sequence if found is not None else None) == defined.get(pid)
