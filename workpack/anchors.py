"""Anchors: signed statements of a plant's chain head, kept outside the store. Pure.

The records store's chain shows every careless edit, but someone with write access to the
store can rewrite the whole chain with the chain's own hash function. An anchor taken
earlier and kept elsewhere (printed on the day sheet, sent ashore, held by the auditor)
catches that: the rewritten store no longer contains the anchor's head.

The statement (``anchor_content``), signed with ``workpack.signing`` as ``anchor``::

    {"workpack_anchor": 1, "plant": "MV Tern", "count": 120,
     "head_sha256": chain hash of record 120 (64 hex),
     "taken_at": "2026-12-02T16:30:00Z",
     "trail": [first 16 hex digits of the chain hash of record 1, ..., of record 120]}

An empty chain's head is its plant's genesis value (``workpack.store.plant_genesis``). The
trail lets ``compare_with_chain`` name the *first* record that differs, not only say that
the head is gone; an anchor typed back from paper (count and head) has none.

The file (``anchor_text``) is JSON: ``{"anchor": statement, "signature": signature}``,
the same bytes for the same anchor. Nothing here reads a file, a clock or a store: the
shell passes the chain hashes in and the text out.
"""

from __future__ import annotations

import datetime as dt
import json
import re
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from typing import Any

from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

from workpack.crew import utc_text
from workpack.model.anchor import ANCHOR_VERSION, TRAIL_DIGITS, AnchorFile, AnchorStatement
from workpack.model.crew import CrewRegister
from workpack.signing import SignatureCheck, sign_content, verify_content
from workpack.store._chain import ChainHead, is_sha256_hex, plant_genesis

SIGNED_AS = "anchor"
_TYPED_HEAD = re.compile(r"^\s*([0-9]+)\s*:\s*([0-9a-fA-F]{64})\s*$")


class AnchorError(ValueError):
    """An anchor that cannot be taken or read (a chain hash that is not one)."""


def take_anchor(plant: str, chain_hashes: Sequence[str], taken_at: dt.datetime) -> AnchorStatement:
    """The anchor of a chain whose records' chain hashes are ``chain_hashes`` (record 1
    first), taken at ``taken_at`` (aware; kept to the whole second)."""
    for number, value in enumerate(chain_hashes, start=1):
        if not is_sha256_hex(value):
            raise AnchorError(f"record {number}: {value!r} is not a chain hash")
    head = chain_hashes[-1] if chain_hashes else plant_genesis(plant)
    return AnchorStatement(workpack_anchor=ANCHOR_VERSION, plant=plant,
                           count=len(chain_hashes), head_sha256=head,
                           taken_at=taken_at.astimezone(dt.UTC).replace(microsecond=0),
                           trail=tuple(value[:TRAIL_DIGITS] for value in chain_hashes))


def anchor_content(statement: AnchorStatement) -> dict[str, Any]:
    """The statement as JSON data, exactly what is signed (the time as UTC text)."""
    return {"workpack_anchor": statement.workpack_anchor, "plant": statement.plant,
            "count": statement.count, "head_sha256": statement.head_sha256,
            "taken_at": utc_text(statement.taken_at), "trail": list(statement.trail)}


def sign_anchor(statement: AnchorStatement, private_key: Ed25519PrivateKey, *, person: str,
                key: str) -> AnchorFile:
    """``person``'s signature of the anchor with their key ``key``, made at its time."""
    signature = sign_content(private_key, anchor_content(statement), signed_as=SIGNED_AS,
                             person=person, key=key, signed_at=statement.taken_at)
    return AnchorFile(anchor=statement, signature=signature)


def anchor_text(anchor: AnchorFile) -> str:
    """The anchor file's text: JSON, one trail entry a line, ending in a newline."""
    document = {"anchor": anchor_content(anchor.anchor),
                "signature": anchor.signature.model_dump(mode="json")}
    document["signature"]["signed_at"] = utc_text(anchor.signature.signed_at)
    return json.dumps(document, indent=1, ensure_ascii=False) + "\n"


def check_anchor_signature(register: CrewRegister, anchor: AnchorFile) -> SignatureCheck:
    """Whether the anchor is signed, as ``anchor``, by a key the register held then.

    An anchor whose statement was edited (a head hash swapped for a rewritten chain's, a
    count lowered) no longer matches its signature.
    """
    return verify_content(register, anchor_content(anchor.anchor), anchor.signature,
                          signed_as=SIGNED_AS)


def anchor_head(statement: AnchorStatement) -> ChainHead | None:
    """The head as the store's ``verify(anchor=...)`` takes it; None for an empty chain."""
    return ChainHead(statement.count, statement.head_sha256) if statement.count else None


def parse_typed_head(text: str) -> ChainHead | None:
    """``COUNT:HEAD`` as printed on a day sheet (``120:3fa4…``, 64 hex digits), or None
    when ``text`` is not one (then it names an anchor file)."""
    found = _TYPED_HEAD.match(text)
    if found is None or int(found.group(1)) == 0:
        return None
    return ChainHead(int(found.group(1)), found.group(2).lower())


def anchor_line(statement: AnchorStatement) -> str:
    """One line for a day sheet or a log book: enough to type back into ``verify``."""
    noun = "record" if statement.count == 1 else "records"
    return (f"chain anchor of {statement.plant or 'this store'}: {statement.count} {noun}, "
            f"head {statement.count}:{statement.head_sha256}, taken "
            f"{utc_text(statement.taken_at)}")


@dataclass(frozen=True)
class AnchorComparison:
    """Whether the store still holds the anchored chain; if not, the first record that
    differs (None where it cannot be named) and why, in one line."""

    ok: bool
    message: str
    first_divergent: int | None = None


def compare_with_chain(statement: AnchorStatement | ChainHead,
                       stored: Iterable[tuple[int, str]], *, plant: str) -> AnchorComparison:
    """Compare an anchor with a plant's stored chain, given as (sequence, chain hash) in
    sequence order (records added after the anchor are read no further than its count).

    ``statement`` may be a full anchor or a head typed from paper (``ChainHead``), which
    has no trail: then a rewritten chain is caught but its first changed record is not
    named.
    """
    trail: tuple[str, ...] = ()
    if isinstance(statement, ChainHead):
        count, head, shown = (statement.sequence, statement.chain_sha256,
                              f"the anchor {statement}")
    else:
        if statement.plant != plant:
            return AnchorComparison(False, f"the anchor is of plant {statement.plant!r}, "
                                           f"not of {plant!r}, whose chain this is")
        count, head, trail = statement.count, statement.head_sha256, statement.trail
        shown = (f"the anchor taken {utc_text(statement.taken_at)} "
                 f"({count}:{head})")
    seen = 0
    for sequence, chain_sha256 in stored:
        if seen == count:
            break  # records added since the anchor was taken
        seen += 1
        if sequence != seen:
            return AnchorComparison(False, f"record {seen} is not where {shown} had it (the "
                                           f"store's next record is numbered {sequence}): "
                                           "records were removed or renumbered", seen)
        if trail and chain_sha256[:TRAIL_DIGITS] != trail[seen - 1]:
            return _diverged(seen, shown)
        if seen == count and chain_sha256 != head:
            if trail:
                return _diverged(seen, shown)
            return AnchorComparison(False, f"the store no longer contains {shown}: records "
                                           f"up to {count} were rewritten (a head typed from "
                                           "paper cannot name the first; its anchor file "
                                           "can)")
    if seen < count:
        return AnchorComparison(False, f"record {seen + 1} is missing: the store holds "
                                       f"{seen} record{'' if seen == 1 else 's'} of the "
                                       f"{count} in {shown}", seen + 1)
    noun = "record" if count == 1 else "records"
    return AnchorComparison(True, f"the store contains {shown}: its first {count} {noun} "
                                  "are unchanged")


def _diverged(sequence: int, shown: str) -> AnchorComparison:
    return AnchorComparison(False, f"record {sequence} differs from {shown}: the store no "
                                   f"longer contains that head; the chain was rewritten "
                                   f"from record {sequence} on", sequence)
