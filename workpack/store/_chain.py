"""The integrity chain: canonical JSON, the record hash, and verification of a stored chain.

Pure functions over plain data: no file, clock or database access, so every backend
(SQLite and PostgreSQL) hashes and verifies exactly alike.

Canonical JSON
    ``json.dumps(value, sort_keys=True, separators=(",", ":"), ensure_ascii=False,
    allow_nan=False)`` encoded as UTF-8. Only JSON types are accepted (objects with text
    keys, lists, text, integers, finite floats, booleans, null), so what is parsed back is
    exactly what was entered: a tuple would come back as a list, a NaN would not come back
    at all, and both are refused. Floats are written as Python's shortest round-trip text.
    (This is not RFC 8785: every backend uses this one function, so it need not be.)

Timestamps
    ``recorded_at`` is given by the caller, timezone-aware, and stored in UTC as
    ``YYYY-MM-DDTHH:MM:SS.ffffffZ`` (fixed width, so text order is time order).

Chain hash, version 1
    ``chain_sha256`` of record *n* is the lowercase hex SHA-256 of the bytes::

        b"workpack-record-chain-v1\\x00"
        text(prev_chain_sha256)      the chain hash of record n-1, or the genesis for n = 1
        u64(sequence)
        text(package_id)
        text(package_sha256)         SHA-256 of the package's canonical JSON
        text(results_sha256)         SHA-256 of the results' canonical JSON
        text(recorded_by)
        text(recorded_at)            the stored UTC text above
        b"\\x00"  or  b"\\x01" u64(supersedes)
        text(verdict)

    where ``u64(n)`` is 8 bytes big-endian unsigned, ``text(s)`` is ``u32(len(b)) b`` with
    ``b = s.encode("utf-8")`` and ``u32`` 4 bytes big-endian unsigned; hashes enter as
    their 64-character lowercase hex text. Length prefixes make the encoding unambiguous:
    no two different field tuples give the same bytes.

One chain per plant: the genesis
    Record 1 of a plant's chain chains from that plant's genesis value, the lowercase hex
    SHA-256 of ``b"workpack-plant-genesis-v1\\x00" text(plant)``; so every record of the
    chain is bound to its plant's name, and a chain relabelled as another plant's breaks
    at record 1. ``GENESIS`` (64 zeros) starts the chain of an unnamed store: an SQLite
    file made before stores knew their plant, or one opened without a plant name.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import json
import math
import struct
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass
from typing import Any, Literal

from pydantic import BaseModel

GENESIS = "0" * 64
CHAIN_VERSION = 1
_DOMAIN = b"workpack-record-chain-v1\x00"
_PLANT_DOMAIN = b"workpack-plant-genesis-v1\x00"
_U64 = struct.Struct(">Q")
_U32 = struct.Struct(">I")
_HEX = frozenset("0123456789abcdef")


class NotStorableError(ValueError):
    """A value that canonical JSON cannot hold exactly; ``path`` says where in it."""

    def __init__(self, path: str, reason: str):
        self.path = path
        self.reason = reason
        super().__init__(f"{path}: {reason}")


# --- canonical JSON and hashes -------------------------------------------------------


def _check_json(value: Any, path: str) -> None:
    if value is None or isinstance(value, bool | int):
        return
    if isinstance(value, float):
        if not math.isfinite(value):
            raise NotStorableError(path, f"{value!r} is not a number JSON can hold; "
                                         "write a finite number or leave the value out")
        return
    if isinstance(value, str):
        try:
            value.encode("utf-8")
        except UnicodeEncodeError:
            raise NotStorableError(path, "text is not valid Unicode (a lone surrogate)") from None
        return
    if isinstance(value, list):
        for i, item in enumerate(value):
            _check_json(item, f"{path}[{i}]")
        return
    if isinstance(value, Mapping):
        for key, item in value.items():
            if not isinstance(key, str):
                raise NotStorableError(path, f"key {key!r} is a {type(key).__name__}; "
                                             "keys must be text")
            _check_json(key, f"{path}.{key}")
            _check_json(item, f"{path}.{key}")
        return
    raise NotStorableError(path, f"a {type(value).__name__} cannot be stored exactly; "
                                 "use text, a number, true/false, null, a list or a mapping")


def _plain(value: Any) -> Any:
    """A copy with every mapping a dict (only called on values _check_json accepted)."""
    if isinstance(value, Mapping):
        return {key: _plain(item) for key, item in value.items()}
    if isinstance(value, list):
        return [_plain(item) for item in value]
    return value


def _dumps(value: Any) -> str:
    return json.dumps(value, sort_keys=True, separators=(",", ":"), ensure_ascii=False,
                      allow_nan=False)


def canonical_json(value: Any, *, what: str = "value") -> str:
    """The canonical JSON text of ``value``; NotStorableError naming ``what`` if not JSON."""
    # Fast path in C: a value that survives the round trip unchanged is plain JSON
    # (a tuple or a non-text key would come back different). Anything else takes the
    # slow walk, which finds and names the offending place.
    try:
        text = _dumps(value)
        text.encode("utf-8")
        if json.loads(text) == value:
            return text
    except (TypeError, ValueError):
        pass
    _check_json(value, what)
    return _dumps(_plain(value))


def sha256_hex(text: str) -> str:
    """Lowercase hex SHA-256 of ``text`` encoded as UTF-8."""
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def package_sha256(package: BaseModel | Mapping[str, Any]) -> str:
    """SHA-256 of a work package's canonical JSON (a model, or its parsed JSON twin).

    A model is dumped in JSON mode first (dates as ISO text, tuples as lists), so the
    model and its JSON twin read back from disk hash alike.
    """
    data = package.model_dump(mode="json") if isinstance(package, BaseModel) else package
    return sha256_hex(canonical_json(data, what="package"))


def is_sha256_hex(value: object) -> bool:
    return isinstance(value, str) and len(value) == 64 and set(value) <= _HEX


def format_timestamp(when: dt.datetime) -> str:
    """The stored UTC text of an aware datetime; ValueError if it has no time zone."""
    if when.tzinfo is None or when.utcoffset() is None:
        raise ValueError(f"recorded_at must be timezone-aware (got naive {when.isoformat()})")
    u = when.astimezone(dt.UTC)
    return (f"{u.year:04d}-{u.month:02d}-{u.day:02d}T{u.hour:02d}:{u.minute:02d}:"
            f"{u.second:02d}.{u.microsecond:06d}Z")


def parse_timestamp(text: str) -> dt.datetime:
    """The aware UTC datetime of a stored timestamp text; ValueError if it is not one."""
    if not (isinstance(text, str) and len(text) == 27 and text.endswith("Z")):
        raise ValueError(f"not a stored timestamp: {text!r}")
    return dt.datetime.fromisoformat(text[:-1]).replace(tzinfo=dt.UTC)


def _text(value: object) -> bytes:
    if not isinstance(value, str):
        raise TypeError(f"expected text, got {type(value).__name__}")
    data = value.encode("utf-8")
    return _U32.pack(len(data)) + data


def _u64(value: object) -> bytes:
    if type(value) is not int:
        raise TypeError(f"expected an integer, got {type(value).__name__}")
    return _U64.pack(value)


def chain_hash(prev_chain_sha256: str, sequence: int, package_id: str, package_sha256: str,
               results_sha256: str, recorded_by: str, recorded_at: str, supersedes: int | None,
               verdict: str) -> str:
    """The chain hash of one record, in the version-1 encoding of the module docstring.

    TypeError or struct.error if a field has the wrong type or range.
    """
    parts = [_DOMAIN, _text(prev_chain_sha256), _u64(sequence), _text(package_id),
             _text(package_sha256), _text(results_sha256), _text(recorded_by),
             _text(recorded_at),
             b"\x00" if supersedes is None else b"\x01" + _u64(supersedes),
             _text(verdict)]
    return hashlib.sha256(b"".join(parts)).hexdigest()


def plant_genesis(plant: str) -> str:
    """The value record 1 of ``plant``'s chain chains from; GENESIS for an unnamed chain."""
    if plant == "":
        return GENESIS
    return hashlib.sha256(_PLANT_DOMAIN + _text(plant)).hexdigest()


# --- stored rows and verification ----------------------------------------------------


@dataclass(frozen=True)
class StoredRow:
    """One record exactly as a backend holds it, before any parsing.

    Field types are what the API writes; a tampered store may hold anything, and the
    verifier treats a field it cannot encode as altered.
    """

    sequence: int
    package_id: str
    package_sha256: str
    results_json: str
    results_sha256: str
    recorded_by: str
    recorded_at: str
    supersedes: int | None
    verdict: str
    prev_sha256: str
    chain_sha256: str

    def hash_as(self, prev: str | None = None, sequence: int | None = None) -> str | None:
        """This row's chain hash with its own fields (prev and sequence replaceable).

        None when a field cannot be encoded (a tampered type or range).
        """
        try:
            return chain_hash(self.prev_sha256 if prev is None else prev,
                              self.sequence if sequence is None else sequence,
                              self.package_id, self.package_sha256, self.results_sha256,
                              self.recorded_by, self.recorded_at, self.supersedes, self.verdict)
        except (TypeError, ValueError, struct.error):
            return None

    def as_tuple(self) -> tuple[Any, ...]:
        """The fields in column order (what dataclasses.astuple gives, without copying)."""
        return (self.sequence, self.package_id, self.package_sha256, self.results_json,
                self.results_sha256, self.recorded_by, self.recorded_at, self.supersedes,
                self.verdict, self.prev_sha256, self.chain_sha256)

    def results_intact(self) -> bool:
        return (isinstance(self.results_json, str) and is_sha256_hex(self.results_sha256)
                and _safe_sha256(self.results_json) == self.results_sha256)


def _safe_sha256(text: str) -> str | None:
    try:
        return sha256_hex(text)
    except UnicodeEncodeError:
        return None


def next_row(prev: StoredRow | None, *, package_id: str, package_sha256: str,
             results_json: str, recorded_by: str, recorded_at: str, supersedes: int | None,
             verdict: str, genesis: str = GENESIS) -> StoredRow:
    """The row that follows ``prev`` (None for the first record), chain hash computed.

    ``genesis`` is what the first record chains from (``plant_genesis(plant)``).
    """
    sequence = 1 if prev is None else prev.sequence + 1
    prev_chain = genesis if prev is None else prev.chain_sha256
    results_sha256 = sha256_hex(results_json)
    chain = chain_hash(prev_chain, sequence, package_id, package_sha256, results_sha256,
                       recorded_by, recorded_at, supersedes, verdict)
    return StoredRow(sequence, package_id, package_sha256, results_json, results_sha256,
                     recorded_by, recorded_at, supersedes, verdict, prev_chain, chain)


@dataclass(frozen=True, order=True)
class ChainHead:
    """The last record's sequence number and chain hash.

    Written down (on an audit report, in a log book) it is an anchor: a later
    ``verify(anchor=...)`` proves the store still holds that very chain up to it.
    """

    sequence: int
    chain_sha256: str

    def __str__(self) -> str:
        return f"{self.sequence}:{self.chain_sha256}"


BreakKind = Literal["altered", "removed", "reordered"]


@dataclass(frozen=True)
class ChainBreak:
    """The first record where the stored chain stops being what was written."""

    kind: BreakKind
    sequence: int  # the first record altered, removed or out of place
    detail: str  # one line, without the store's location


@dataclass(frozen=True)
class Verification:
    """What ``verify`` found: OK with the count, or the first break and why."""

    location: str
    count: int  # records in the store
    head: ChainHead | None  # last record as stored (None when empty)
    first_break: ChainBreak | None = None
    guards_intact: bool = True  # the database's append-only guards are in place

    @property
    def ok(self) -> bool:
        return self.first_break is None

    @property
    def message(self) -> str:
        """One line for a person."""
        guards = ("" if self.guards_intact else
                  "; the append-only triggers are missing or changed (the file was edited "
                  "outside workpack)")
        if self.first_break is not None:
            b = self.first_break
            return f"{self.location}: record {b.sequence} was {b.kind}: {b.detail}{guards}"
        if self.head is None:
            return f"{self.location}: OK, empty store (0 records){guards}"
        noun = "record" if self.count == 1 else "records"
        return (f"{self.location}: OK, {self.count} {noun}, chain intact to "
                f"{self.head}{guards}")

    def __str__(self) -> str:
        return self.message


Rescan = Callable[[], Iterable[StoredRow]]


def verify_rows(location: str, rows: Iterable[StoredRow], rescan: Rescan, *,
                high_water: int | None = None, anchor: ChainHead | None = None,
                guards_intact: bool = True, genesis: str = GENESIS) -> Verification:
    """Recompute the chain over ``rows`` (in sequence order) and name the first break.

    ``rescan`` gives the same rows again; it is used only once a break is found, to tell
    an altered record from one moved or removed. ``high_water`` is the highest sequence
    number the backend has ever handed out (None if it does not know): more than the last
    row means records were cut from the end. ``anchor`` is a head written down earlier.
    ``genesis`` is the value record 1 must chain from (``plant_genesis`` of the plant).
    """
    prev: StoredRow | None = None
    count = 0
    found: ChainBreak | None = None
    anchor_met = False
    for row in rows:
        count += 1
        if found is None:
            found = _break_at(row, prev, rescan, genesis)
            if found is None and anchor is not None and row.sequence == anchor.sequence:
                anchor_met = True
                if row.chain_sha256 != anchor.chain_sha256:
                    found = ChainBreak("altered", anchor.sequence,
                                       f"the chain no longer ends in the anchor {anchor} "
                                       f"taken earlier: records up to {anchor.sequence} were "
                                       "rewritten and rehashed (the first is not known)")
        prev = row
    last = prev.sequence if prev is not None else 0
    head = ChainHead(prev.sequence, prev.chain_sha256) if prev is not None else None
    if found is None and high_water is not None and high_water > last:
        found = ChainBreak("removed", last + 1,
                           _missing(last + 1, high_water) +
                           f"the store has handed out numbers up to {high_water} but ends "
                           f"at {last}")
    if found is None and anchor is not None and not anchor_met:
        found = ChainBreak("removed", last + 1,
                           _missing(last + 1, anchor.sequence) +
                           f"the anchor {anchor} taken earlier is beyond the last record, "
                           f"{last}")
    return Verification(location, count, head, found, guards_intact)


def _missing(first: int, last: int) -> str:
    """'' for one record (the message names it already), else the run that is gone."""
    return "" if first == last else f"records {first} to {last} are gone; "


def _break_at(row: StoredRow, prev: StoredRow | None, rescan: Rescan,
              genesis: str) -> ChainBreak | None:
    """None if ``row`` follows ``prev`` intact; otherwise the first break it shows."""
    prev_seq = prev.sequence if prev is not None else 0
    prev_chain = prev.chain_sha256 if prev is not None else genesis
    s = row.sequence
    expected = prev_seq + 1
    if s != expected:
        written = _written_as(row, rescan, genesis)
        if written == expected:
            return ChainBreak("altered", expected, f"it has been renumbered to {s}")
        jump = (f"the sequence jumps from {prev_seq} to {s}" if prev_seq else
                f"the first record is numbered {s}")
        return ChainBreak("removed", expected, _missing(expected, s - 1) + jump)
    if not row.results_intact():
        return ChainBreak("altered", s, "its results no longer match their SHA-256")
    if row.hash_as() == row.chain_sha256:
        if row.prev_sha256 == prev_chain:
            return None
        holder = _holder_of(row.prev_sha256, rescan, genesis)
        if holder is not None and holder != prev_seq:
            return ChainBreak("reordered", s,
                              f"it was chained after record {holder}, not after record "
                              f"{prev_seq}")
        if prev is None:
            return ChainBreak("altered", s, "it does not chain from its plant's genesis "
                                            "value (the chain was begun for another plant "
                                            "or rewritten)")
        return ChainBreak("altered", prev_seq,
                          f"record {s} was chained to a different record {prev_seq} "
                          "(this one was rewritten and rehashed)")
    written = _written_as(row, rescan, genesis)
    if written is not None and written != s:
        if _held_elsewhere(s, prev_chain, row, rescan):
            return ChainBreak("reordered", s,
                              f"its row holds the contents of record {written}, and its own "
                              "contents are in another row")
        if written > s:
            return ChainBreak("removed", s,
                              f"the row now numbered {s} was written as record {written} "
                              "(the rows after the removal were renumbered)")
        return ChainBreak("reordered", s, f"its row holds a copy of record {written}")
    return ChainBreak("altered", s, "a stored field no longer matches its chain hash")


def _holder_of(chain_sha256: str, rescan: Rescan, genesis: str) -> int | None:
    """The sequence of the row whose chain hash is ``chain_sha256``; 0 for the genesis."""
    if chain_sha256 == genesis:
        return 0
    for other in rescan():
        if other.chain_sha256 == chain_sha256:
            return other.sequence
    return None


def _written_as(row: StoredRow, rescan: Rescan, genesis: str) -> int | None:
    """The sequence number ``row``'s fields were written under, if it can be found."""
    holder = _holder_of(row.prev_sha256, rescan, genesis)
    if holder is not None and row.hash_as(sequence=holder + 1) == row.chain_sha256:
        return holder + 1
    highest = 0
    for other in rescan():  # contents moved without their chain columns
        if type(other.sequence) is int:
            highest = max(highest, other.sequence)
        if other.sequence != row.sequence and \
                row.hash_as(other.prev_sha256, other.sequence) == other.chain_sha256:
            return other.sequence
    for k in range(1, 2 * highest + 2):  # renumbered after its predecessor was removed
        if row.hash_as(sequence=k) == row.chain_sha256:
            return k
    return None


def _held_elsewhere(sequence: int, prev_chain: str, row: StoredRow, rescan: Rescan) -> bool:
    """Whether another row holds the contents written as record ``sequence``."""
    for other in rescan():
        if other.sequence != row.sequence and \
                other.hash_as(prev_chain, sequence) in (other.chain_sha256, row.chain_sha256):
            return True
    return False
