"""The integrity chain as pure functions: canonical JSON, the byte encoding, verification.

No database here: these pin the format every backend shares. Record data is invented.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import hashlib
import json
import struct
from pathlib import Path

import pytest
from imports import forbidden_in
from samplepackage import sample_package

import workpack.store as store_api
from workpack.store import (
    GENESIS,
    ChainBreak,
    canonical_json,
    chain_hash,
    package_sha256,
    plant_genesis,
)
from workpack.store._chain import (
    NotStorableError,
    StoredRow,
    format_timestamp,
    next_row,
    parse_timestamp,
    verify_rows,
)

CHAIN_MODULE = Path(store_api.__file__).resolve().parent / "_chain.py"
FORBIDDEN = {"os", "pathlib", "io", "shutil", "sqlite3", "yaml", "socket", "subprocess",
             "tempfile", "time", "urllib"}


def reference_chain_hash(prev: str, sequence: int, package_id: str, package_hash: str,
                         results_hash: str, recorded_by: str, recorded_at: str,
                         supersedes: int | None, verdict: str) -> str:
    """The encoding re-implemented from the docstring of workpack/store/_chain.py."""

    def text(s: str) -> bytes:
        b = s.encode("utf-8")
        return struct.pack(">I", len(b)) + b

    data = (b"workpack-record-chain-v1\x00" + text(prev) + struct.pack(">Q", sequence)
            + text(package_id) + text(package_hash) + text(results_hash) + text(recorded_by)
            + text(recorded_at)
            + (b"\x00" if supersedes is None else b"\x01" + struct.pack(">Q", supersedes))
            + text(verdict))
    return hashlib.sha256(data).hexdigest()


def test_chain_hash_follows_the_documented_encoding() -> None:
    """An independent implementation of the documented bytes gives the same hashes."""
    cases = [
        (GENESIS, 1, "WP-2026-12-02-01", "a" * 64, "b" * 64, "J. Tern",
         "2026-12-02T09:15:00.000000Z", None, "pass"),
        ("c" * 64, 7, "WP-Ω", "a" * 64, "b" * 64, "J. Tern", "2026-12-02T09:15:00.000000Z",
         3, "fail"),
    ]
    for case in cases:
        assert chain_hash(*case) == reference_chain_hash(*case)


def test_chain_hash_is_frozen_for_version_1() -> None:
    """Known answers: changing the encoding would orphan every stored chain."""
    assert chain_hash(GENESIS, 1, "WP-2026-12-02-01", "a" * 64, "b" * 64, "J. Tern",
                      "2026-12-02T09:15:00.000000Z", None, "pass") == \
        "6ad1d31f7d60b39a1ab1c9c001d9046fb8a75c746f4dfd82cbc3d8f9a2a789e2"
    assert chain_hash("c" * 64, 7, "WP-Ω", "a" * 64, "b" * 64, "J. Tern",
                      "2026-12-02T09:15:00.000000Z", 3, "fail") == \
        "c607763019843b198501195ba1dce4e8614f981f10787b429681739d6cf741a4"


def test_genesis_is_sixty_four_zeros() -> None:
    """The first record chains from a fixed, documented value."""
    assert GENESIS == "0" * 64


def test_plant_genesis_follows_the_documented_encoding_and_is_frozen() -> None:
    """Re-implemented from the docstring, plus a known answer; an unnamed plant: GENESIS."""
    for plant in ("MV Skerry Lantern", "Ω-7"):
        data = plant.encode("utf-8")
        assert plant_genesis(plant) == hashlib.sha256(
            b"workpack-plant-genesis-v1\x00" + struct.pack(">I", len(data)) + data).hexdigest()
    assert plant_genesis("MV Skerry Lantern") == \
        "44e65a1f4f5fec103f4b7d584b9c9e9a2c41b702eac99c84422e144330ffd040"
    assert plant_genesis("") == GENESIS
    assert plant_genesis("MV A") != plant_genesis("MV B")


def test_a_chain_begun_for_one_plant_fails_as_another_plants() -> None:
    """Rows chained from plant A's genesis break at record 1 when checked as plant B's."""
    rows: list[StoredRow] = []
    for i in range(1, 4):
        rows.append(next_row(rows[-1] if rows else None, package_id="WP-1",
                             package_sha256="a" * 64, results_json="{}", recorded_by="t",
                             recorded_at=f"2026-12-02T08:0{i}:00.000000Z", supersedes=None,
                             verdict="pass", genesis=plant_genesis("MV A")))
    assert rows[0].prev_sha256 == plant_genesis("MV A")
    assert _verify(rows, genesis=plant_genesis("MV A")) is None
    found = _verify(rows, genesis=plant_genesis("MV B"))
    assert found is not None and (found.kind, found.sequence) == ("altered", 1)
    assert "does not chain from its plant's genesis value" in found.detail


def test_length_prefixes_keep_adjacent_fields_apart() -> None:
    """Moving text across a field boundary changes the hash."""
    common = (GENESIS, 1, "WP-1", "a" * 64, "b" * 64)
    at = "2026-12-02T09:15:00.000000Z"
    assert chain_hash(*common, "ab", at, None, "pass") != \
        chain_hash(*common, "a", "b" + at, None, "pass")


def test_supersedes_none_differs_from_any_number() -> None:
    """No record number encodes like 'no supersedes' (not even a zero)."""
    common = (GENESIS, 2, "WP-1", "a" * 64, "b" * 64, "x", "2026-12-02T09:15:00.000000Z")
    assert chain_hash(*common, None, "pass") != chain_hash(*common, 0, "pass")


def test_canonical_json_sorts_keys_without_spaces_in_utf8() -> None:
    """Two orders of the same mapping give the same text; non-ASCII stays as written."""
    a = canonical_json({"b": 1, "a": {"z": [1.5, None, True], "y": "Ω °C"}})
    b = canonical_json({"a": {"y": "Ω °C", "z": [1.5, None, True]}, "b": 1})
    assert a == b == '{"a":{"y":"Ω °C","z":[1.5,null,true]},"b":1}'


@pytest.mark.parametrize(("value", "where"), [
    ({"r": float("nan")}, "results.r"),
    ({"r": [1.0, float("inf")]}, "results.r[1]"),
    ({"r": (1, 2)}, "results.r"),
    ({"r": {3: "x"}}, "results.r"),
    ({"r": b"raw"}, "results.r"),
    ({"r": {1.5}}, "results.r"),
    ({"r": "\ud800"}, "results.r"),
])
def test_canonical_json_refuses_what_would_not_come_back_exactly(value: object,
                                                                   where: str) -> None:
    """NaN, infinities, tuples, non-text keys, bytes, sets and lone surrogates are refused."""
    with pytest.raises(NotStorableError) as caught:
        canonical_json(value, what="results")
    assert caught.value.path == where


def test_package_hash_is_the_same_for_the_model_and_its_json_twin() -> None:
    """Hashing the model or the JSON twin read back from disk gives one digest."""
    package = sample_package()
    twin = json.loads(package.model_dump_json(indent=2))
    assert package_sha256(package) == package_sha256(twin)
    assert package_sha256(package) != package_sha256(sample_package(number=2))


def test_timestamps_are_stored_in_utc_at_fixed_width() -> None:
    """Offsets become UTC; text order is time order; naive times are refused."""
    local = dt.datetime(2026, 12, 2, 10, 15, tzinfo=dt.timezone(dt.timedelta(hours=2)))
    assert format_timestamp(local) == "2026-12-02T08:15:00.000000Z"
    assert parse_timestamp(format_timestamp(local)) == local
    assert format_timestamp(dt.datetime(999, 1, 2, tzinfo=dt.UTC)) == \
        "0999-01-02T00:00:00.000000Z"
    with pytest.raises(ValueError, match="timezone-aware"):
        format_timestamp(dt.datetime(2026, 12, 2, 10, 15))


def _rows(n: int) -> list[StoredRow]:
    rows: list[StoredRow] = []
    for i in range(1, n + 1):
        rows.append(next_row(rows[-1] if rows else None, package_id=f"WP-{i % 3}",
                             package_sha256="a" * 64, results_json=canonical_json({"i": i}),
                             recorded_by="tester", recorded_at=f"2026-12-02T08:{i:02d}:00.000000Z",
                             supersedes=None, verdict="pass"))
    return rows


def _verify(rows: list[StoredRow], **kwargs: object) -> ChainBreak | None:
    result = verify_rows("mem", iter(rows), lambda: iter(rows), **kwargs)  # type: ignore[arg-type]
    assert result.count == len(rows)
    return result.first_break


def test_pure_verification_accepts_an_intact_chain() -> None:
    """Rows made by next_row verify with no database involved."""
    rows = _rows(6)
    assert rows[0].prev_sha256 == GENESIS
    assert _verify(rows) is None


def test_pure_verification_names_a_row_with_a_wrong_type() -> None:
    """A field of the wrong type (possible in a hand-edited store) reads as altered."""
    rows = _rows(5)
    rows[2] = dataclasses.replace(rows[2], supersedes="2")  # type: ignore[arg-type]
    assert _verify(rows) == ChainBreak("altered", 3,
                                       "a stored field no longer matches its chain hash")


def test_pure_verification_finds_records_cut_from_the_end_by_high_water() -> None:
    """A backend that knows the highest number handed out exposes a shortened tail."""
    rows = _rows(5)
    found = _verify(rows[:3], high_water=5)
    assert found is not None and (found.kind, found.sequence) == ("removed", 4)


def test_chain_module_does_no_io() -> None:
    """Hashing and verification import no file, clock or database module."""
    assert not forbidden_in(CHAIN_MODULE, FORBIDDEN)


def test_public_api_is_sorted_and_complete() -> None:
    """__all__ is sorted and names only what the package really exports."""
    assert store_api.__all__ == sorted(store_api.__all__)
    for name in store_api.__all__:
        assert hasattr(store_api, name), name
