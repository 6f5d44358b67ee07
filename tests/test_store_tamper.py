"""Tampering with the SQLite file directly, as an attacker would, and what verify names.

Each test fills a store through the API, then opens the file with plain sqlite3, drops
the append-only triggers (and the one-correction index where a swap needs it), edits,
commits, and asserts that ``verify`` names the first record touched. Data is invented.
"""

from __future__ import annotations

import datetime as dt
import sqlite3
from collections.abc import Callable
from pathlib import Path

import pytest

from workpack.store import GENESIS, ChainHead, SQLiteStore, chain_hash

T0 = dt.datetime(2026, 12, 2, 8, 0, tzinfo=dt.UTC)
N = 8
DATA_COLUMNS = ("package_id", "package_sha256", "results_json", "results_sha256",
                "recorded_by", "recorded_at", "supersedes", "verdict")
CHAIN_COLUMNS = ("prev_sha256", "chain_sha256")

Attack = Callable[[sqlite3.Connection], None]


def filled(tmp_path: Path) -> tuple[Path, ChainHead]:
    """A store of N records: three packages, two corrections; returns its path and head."""
    path = tmp_path / "records.sqlite"
    with SQLiteStore(path) as store:
        for i in range(1, N + 1):
            package = f"WP-2026-12-02-{(i - 1) % 3 + 1:02d}"
            supersedes = {5: 2, 8: 5}.get(i)
            store.append(package_id=package, package_sha256=f"{i:x}" * 64,
                         results={"S2.R1": {"value_ohm": 1.0e8 + i}, "note": f"entry {i}"},
                         recorded_by="B. Okafor" if i % 2 else "C. Duarte",
                         recorded_at=T0 + dt.timedelta(minutes=7 * i),
                         verdict="fail" if i == 4 else "pass", supersedes=supersedes)
        head = store.head()
    assert head is not None
    return path, head


def attack(path: Path, edit: Attack) -> None:
    """Drop the guards as an attacker would, then edit and commit."""
    raw = sqlite3.connect(path, isolation_level=None)
    try:
        for name in ("records_no_update", "records_no_delete", "records_append_in_order"):
            raw.execute(f"DROP TRIGGER {name}")
        raw.execute("DROP INDEX records_by_supersedes")
        raw.execute("BEGIN")
        edit(raw)
        raw.execute("COMMIT")
    finally:
        raw.close()


def first_break(path: Path, anchor: ChainHead | None = None) -> tuple[str, int, str]:
    with SQLiteStore(path, create=False) as store:
        result = store.verify(anchor=anchor)
    assert not result.ok and result.first_break is not None
    assert not result.guards_intact
    assert "\n" not in result.message
    assert result.message.startswith(f"{path}: record {result.first_break.sequence} ")
    return result.first_break.kind, result.first_break.sequence, result.message


def row(raw: sqlite3.Connection, sequence: int, columns: tuple[str, ...]) -> tuple:
    return raw.execute(f"SELECT {', '.join(columns)} FROM records WHERE sequence = ?",
                       (sequence,)).fetchone()


def put(raw: sqlite3.Connection, sequence: int, columns: tuple[str, ...],
        values: tuple) -> None:
    assignments = ", ".join(f"{c} = ?" for c in columns)
    raw.execute(f"UPDATE records SET {assignments} WHERE sequence = ?", (*values, sequence))


def swap(columns: tuple[str, ...], a: int, b: int) -> Attack:
    def edit(raw: sqlite3.Connection) -> None:
        first, second = row(raw, a, columns), row(raw, b, columns)
        put(raw, a, columns, second)
        put(raw, b, columns, first)
    return edit


def sql(*statements: str) -> Attack:
    def edit(raw: sqlite3.Connection) -> None:
        for statement in statements:
            raw.execute(statement)
    return edit


def rehash(raw: sqlite3.Connection, sequence: int) -> None:
    """Recompute one row's chain hash over its current fields, as a careful attacker."""
    fields = row(raw, sequence, ("prev_sha256", "sequence", "package_id", "package_sha256",
                                 "results_sha256", "recorded_by", "recorded_at",
                                 "supersedes", "verdict"))
    raw.execute("UPDATE records SET chain_sha256 = ? WHERE sequence = ?",
                (chain_hash(*fields), sequence))


def test_untouched_store_verifies(tmp_path: Path) -> None:
    """The fixture itself is clean, guards in place."""
    path, head = filled(tmp_path)
    with SQLiteStore(path) as store:
        result = store.verify(anchor=head)
    assert result.ok and result.count == N and result.guards_intact


@pytest.mark.parametrize(("edit", "kind", "sequence", "words"), [
    (sql("UPDATE records SET verdict = 'pass' WHERE sequence = 4"),
     "altered", 4, "a stored field no longer matches its chain hash"),
    (sql("UPDATE records SET recorded_by = 'D. Someone' WHERE sequence = 6"),
     "altered", 6, "no longer matches its chain hash"),
    (sql("UPDATE records SET recorded_at = '2026-12-01T08:00:00.000000Z' WHERE sequence = 1"),
     "altered", 1, "no longer matches its chain hash"),
    (sql("UPDATE records SET package_id = 'WP-2026-12-02-03' WHERE sequence = 7"),
     "altered", 7, "no longer matches its chain hash"),
    (sql("UPDATE records SET supersedes = NULL WHERE sequence = 5"),
     "altered", 5, "no longer matches its chain hash"),
    (sql("""UPDATE records SET results_json = replace(results_json, '100000003', '900000003')
            WHERE sequence = 3"""),
     "altered", 3, "its results no longer match their SHA-256"),
    (sql("UPDATE records SET verdict = 'fail' WHERE sequence = 8",
         "UPDATE records SET verdict = 'pass' WHERE sequence = 4"),
     "altered", 4, "no longer matches its chain hash"),
])
def test_an_updated_field_names_its_record(tmp_path: Path, edit: Attack, kind: str,
                                           sequence: int, words: str) -> None:
    """UPDATE of any chained field names that record (the first, if several)."""
    path, _ = filled(tmp_path)
    attack(path, edit)
    found_kind, found_sequence, message = first_break(path)
    assert (found_kind, found_sequence) == (kind, sequence)
    assert words in message


def test_results_rewritten_with_a_fresh_hash_still_break_the_chain(tmp_path: Path) -> None:
    """Recomputing the results hash does not help: it is inside the chain hash."""
    path, _ = filled(tmp_path)

    def edit(raw: sqlite3.Connection) -> None:
        import hashlib
        forged = '{"S2.R1":{"value_ohm":900000003.0},"note":"entry 3"}'
        put(raw, 3, ("results_json", "results_sha256"),
            (forged, hashlib.sha256(forged.encode()).hexdigest()))

    attack(path, edit)
    assert first_break(path)[:2] == ("altered", 3)


def test_a_record_rewritten_and_rehashed_is_named_by_its_successor(tmp_path: Path) -> None:
    """Rehashing one altered record leaves the next one chained to the old hash."""
    path, _ = filled(tmp_path)

    def edit(raw: sqlite3.Connection) -> None:
        raw.execute("UPDATE records SET verdict = 'pass' WHERE sequence = 4")
        rehash(raw, 4)

    attack(path, edit)
    kind, sequence, message = first_break(path)
    assert (kind, sequence) == ("altered", 4)
    assert "record 5 was chained to a different record 4" in message


@pytest.mark.parametrize(("gone", "words"), [
    (4, "record 4 was removed: the sequence jumps from 3 to 5"),
    (2, "record 2 was removed: the sequence jumps from 1 to 3"),
    (1, "record 1 was removed: the first record is numbered 2"),
])
def test_a_deleted_record_is_named(tmp_path: Path, gone: int, words: str) -> None:
    """DELETE leaves a gap in the numbers; the first missing number is named."""
    path, _ = filled(tmp_path)
    attack(path, sql(f"DELETE FROM records WHERE sequence = {gone}"))
    kind, found, message = first_break(path)
    assert (kind, found) == ("removed", gone)
    assert words in message


def test_several_deleted_records_name_the_first(tmp_path: Path) -> None:
    """A run of deletions is reported from its first number."""
    path, _ = filled(tmp_path)
    attack(path, sql("DELETE FROM records WHERE sequence IN (3, 4, 5)"))
    kind, found, message = first_break(path)
    assert (kind, found) == ("removed", 3)
    assert "record 3 was removed: records 3 to 5 are gone; the sequence jumps from 2 to 6" \
        in message


def test_deleting_the_last_record_is_seen_by_the_high_water_mark(tmp_path: Path) -> None:
    """Cutting the tail leaves no gap, but the file remembers the highest number used."""
    path, _ = filled(tmp_path)
    attack(path, sql(f"DELETE FROM records WHERE sequence = {N}"))
    kind, found, message = first_break(path)
    assert (kind, found) == ("removed", N)
    assert f"handed out numbers up to {N} but ends at {N - 1}" in message


def test_a_cut_tail_with_its_traces_removed_needs_the_anchor(tmp_path: Path) -> None:
    """With the high-water mark reset too, only an anchor written down earlier shows it."""
    path, head = filled(tmp_path)
    attack(path, sql(f"DELETE FROM records WHERE sequence > {N - 2}",
                     f"UPDATE sqlite_sequence SET seq = {N - 2} WHERE name = 'records'"))
    with SQLiteStore(path) as store:
        assert store.verify().ok  # the limit of any hash chain kept in one place
    kind, found, message = first_break(path, anchor=head)
    assert (kind, found) == ("removed", N - 1)
    assert f"records {N - 1} to {N} are gone; the anchor {head} taken earlier" in message


def test_a_deletion_hidden_by_renumbering_is_named(tmp_path: Path) -> None:
    """Deleting record 4 and renumbering 5.. down to 4.. still names record 4."""
    path, _ = filled(tmp_path)
    attack(path, sql("DELETE FROM records WHERE sequence = 4",
                     "UPDATE records SET sequence = sequence - 1 WHERE sequence > 4"))
    kind, found, message = first_break(path)
    assert (kind, found) == ("removed", 4)
    assert "was written as record 5" in message


def test_two_rows_swapped_whole_are_named_as_reordered(tmp_path: Path) -> None:
    """Swapping every column but the number names the first of the two."""
    path, _ = filled(tmp_path)
    attack(path, swap(DATA_COLUMNS + CHAIN_COLUMNS, 3, 6))
    kind, found, message = first_break(path)
    assert (kind, found) == ("reordered", 3)
    assert "record 3 was reordered: its row holds the contents of record 6" in message


def test_two_rows_swapped_without_their_hashes_are_named_as_reordered(tmp_path: Path) -> None:
    """Swapping only the data columns is recognised as a swap too."""
    path, _ = filled(tmp_path)
    attack(path, swap(DATA_COLUMNS, 2, 7))
    kind, found, message = first_break(path)
    assert (kind, found) == ("reordered", 2)
    assert "record 2 was reordered: its row holds the contents of record 7" in message


def test_neighbours_swapped_are_named_as_reordered(tmp_path: Path) -> None:
    """Adjacent records exchanged: the earlier position is named."""
    path, _ = filled(tmp_path)
    attack(path, swap(DATA_COLUMNS + CHAIN_COLUMNS, 6, 7))
    assert first_break(path)[:2] == ("reordered", 6)


def test_a_whole_chain_rewritten_consistently_needs_the_anchor(tmp_path: Path) -> None:
    """Rehashing every record from the first defeats the chain alone, not an anchor."""
    path, head = filled(tmp_path)

    def edit(raw: sqlite3.Connection) -> None:
        raw.execute("UPDATE records SET verdict = 'pass' WHERE sequence = 4")
        prev = GENESIS
        for sequence in range(1, N + 1):
            raw.execute("UPDATE records SET prev_sha256 = ? WHERE sequence = ?",
                        (prev, sequence))
            rehash(raw, sequence)
            prev = row(raw, sequence, ("chain_sha256",))[0]

    attack(path, edit)
    with SQLiteStore(path) as store:
        assert store.verify().ok
    kind, found, message = first_break(path, anchor=head)
    assert (kind, found) == ("altered", N)
    assert "the chain no longer ends in the anchor" in message


def test_a_trigger_replaced_by_a_harmless_one_is_reported(tmp_path: Path) -> None:
    """Same name, no teeth: the guard check compares the triggers' text."""
    path, _ = filled(tmp_path)
    raw = sqlite3.connect(path)
    raw.execute("DROP TRIGGER records_no_update")
    raw.execute("CREATE TRIGGER records_no_update BEFORE UPDATE ON records BEGIN SELECT 1; END")
    raw.commit()
    raw.close()
    with SQLiteStore(path) as store:
        result = store.verify()
    assert result.ok and not result.guards_intact
    assert result.message.endswith("the append-only triggers are missing or changed (the "
                                   "file was edited outside workpack)")
