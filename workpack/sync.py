"""Bundles: a plant's new records, signed, in one file, from a vessel's store to the office's.

Pure: bytes in, bytes out; the shell reads and writes the files, opens the stores and the
key. A bundle is UTF-8 text, one JSON value a line (each in RFC 8785 canonical form), so
it survives mail, a USB stick or a slow satellite link and can be read in any editor::

    line 1      {"manifest": {...}, "signature": {...}}
    line 2…     one record a line, exactly as the store holds it (``StoredRow``'s fields,
                the results as the canonical JSON text the chain hashed)

The manifest::

    {"workpack_bundle": 1, "plant": NAME, "genesis": the value record 1 chains from,
     "after": {"sequence": N, "chain_sha256": H}   the last record the office should hold
                                                   already (sequence 0: the genesis),
     "through": {"sequence": M, "chain_sha256": H} the last record in the bundle,
     "count": M - N, "records_sha256": SHA-256 of the record lines' bytes, newlines and all,
     "exported_at": UTC time to the second}

The signature (``workpack.signing``, signed as ``bundle``) covers the manifest, which
covers the record lines by their hash: a record changed, added, dropped or reordered after
export breaks the signature or the chain. Reading a bundle checks all of it except the
signer against a crew register (``check_signature``, which needs one).
"""

from __future__ import annotations

import datetime as dt
import hashlib
import json
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass
from typing import Any

from pydantic import BaseModel, ConfigDict, Field, StrictInt, StrictStr, ValidationError

from workpack.crew import utc_text
from workpack.errors import WorkpackError
from workpack.model.crew import CrewRegister
from workpack.model.signature import Signature
from workpack.signing import SignatureCheck, canonical_bytes, content_digest, verify_digest
from workpack.store._base import Record
from workpack.store._chain import (
    GENESIS,
    ChainHead,
    StoredRow,
    format_timestamp,
    is_sha256_hex,
    plant_genesis,
)

BUNDLE_VERSION = 1
SIGNED_AS = "bundle"


class BundleError(WorkpackError):
    """A bundle that cannot be read or does not hold together; names the file and line."""


class _Head(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)

    sequence: StrictInt = Field(ge=0)
    chain_sha256: StrictStr = Field(pattern="^[0-9a-f]{64}$")


class Manifest(BaseModel):
    """What a bundle holds, as signed (see the module docstring)."""

    model_config = ConfigDict(extra="forbid", frozen=True)

    workpack_bundle: StrictInt
    plant: StrictStr = Field(min_length=1)
    genesis: StrictStr = Field(pattern="^[0-9a-f]{64}$")
    after: _Head
    through: _Head
    count: StrictInt = Field(ge=0)
    records_sha256: StrictStr = Field(pattern="^[0-9a-f]{64}$")
    exported_at: StrictStr

    def content(self) -> dict[str, Any]:
        return self.model_dump(mode="json")


class _Row(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)

    sequence: StrictInt = Field(ge=1)
    package_id: StrictStr
    package_sha256: StrictStr
    results_json: StrictStr
    results_sha256: StrictStr
    recorded_by: StrictStr
    recorded_at: StrictStr
    supersedes: StrictInt | None
    verdict: StrictStr
    prev_sha256: StrictStr
    chain_sha256: StrictStr


@dataclass(frozen=True)
class Bundle:
    """A bundle read back and found whole: its manifest, signature and records."""

    manifest: Manifest
    signature: Signature
    rows: tuple[StoredRow, ...]

    @property
    def plant(self) -> str:
        return self.manifest.plant

    @property
    def after(self) -> ChainHead | None:
        """The record the office must hold already; None when the bundle starts at 1."""
        head = self.manifest.after
        return ChainHead(head.sequence, head.chain_sha256) if head.sequence else None

    @property
    def through(self) -> ChainHead:
        head = self.manifest.through
        return ChainHead(head.sequence, head.chain_sha256)

    def describe(self) -> str:
        m = self.manifest
        if not m.count:
            return f"plant {m.plant}: no records after record {m.after.sequence}"
        return (f"plant {m.plant}: records {m.after.sequence + 1} to {m.through.sequence}, "
                f"exported {m.exported_at} by {self.signature.person}")


# --- writing -----------------------------------------------------------------------------


def rows_after(records: Iterable[Record], after: ChainHead | None,
               genesis: str) -> list[StoredRow]:
    """The stored rows of ``records`` (one plant's, in order) numbered above ``after``,
    each with the chain hash it follows."""
    start = after.sequence if after is not None else 0
    prev = genesis
    rows: list[StoredRow] = []
    for record in records:
        if record.sequence > start:
            rows.append(StoredRow(record.sequence, record.package_id, record.package_sha256,
                                  record.results_json, record.results_sha256,
                                  record.recorded_by, format_timestamp(record.recorded_at),
                                  record.supersedes, record.verdict, prev,
                                  record.chain_sha256))
        prev = record.chain_sha256
    return rows


def _row_line(row: StoredRow) -> bytes:
    return canonical_bytes({
        "sequence": row.sequence, "package_id": row.package_id,
        "package_sha256": row.package_sha256, "results_json": row.results_json,
        "results_sha256": row.results_sha256, "recorded_by": row.recorded_by,
        "recorded_at": row.recorded_at, "supersedes": row.supersedes, "verdict": row.verdict,
        "prev_sha256": row.prev_sha256, "chain_sha256": row.chain_sha256}) + b"\n"


def bundle_bytes(*, plant: str, genesis: str, after: ChainHead | None,
                 rows: Sequence[StoredRow], exported_at: dt.datetime,
                 sign: Callable[[str], Signature]) -> bytes:
    """The bundle file of ``rows`` (records ``after.sequence + 1`` on, in order), signed by
    ``sign(digest)`` over the manifest's ``content_digest``."""
    start = after or ChainHead(0, genesis)
    end = ChainHead(rows[-1].sequence, rows[-1].chain_sha256) if rows else start
    body = b"".join(_row_line(row) for row in rows)
    manifest = Manifest(
        workpack_bundle=BUNDLE_VERSION, plant=plant, genesis=genesis,
        after=_Head(sequence=start.sequence, chain_sha256=start.chain_sha256),
        through=_Head(sequence=end.sequence, chain_sha256=end.chain_sha256),
        count=len(rows), records_sha256=hashlib.sha256(body).hexdigest(),
        exported_at=utc_text(exported_at))
    signature = sign(content_digest(manifest.content()))
    header = {"manifest": manifest.content(), "signature": signature.model_dump(mode="json")}
    return canonical_bytes(header) + b"\n" + body


# --- reading -----------------------------------------------------------------------------


def _invalid(source: str, line: int, what: str, error: ValidationError) -> BundleError:
    first = error.errors()[0]
    place = ".".join(str(part) for part in first["loc"])
    field = f"{what}.{place}" if place else what
    return BundleError(f"{source}:{line}: {field}: {first['msg']}")


def _json_object(source: str, line: int, text: bytes) -> dict[str, Any]:
    try:
        value = json.loads(text.decode("utf-8"))
    except UnicodeDecodeError:
        raise BundleError(f"{source}:{line}: not UTF-8 text; a bundle is what "
                          "`workpack sync export` writes") from None
    except ValueError as error:
        raise BundleError(f"{source}:{line}: not JSON ({error.args[0].split(':')[0]}); a "
                          "bundle is what `workpack sync export` writes") from None
    if not isinstance(value, dict):
        raise BundleError(f"{source}:{line}: expected a JSON object")
    return value


def read_bundle(data: bytes, source: str) -> Bundle:
    """The bundle in ``data``, checked whole: manifest, record lines, their hash, every
    record's chain. BundleError naming ``source`` and the line for anything wrong."""
    if not data.endswith(b"\n"):
        raise BundleError(f"{source}: the bundle is cut short (it does not end with a "
                          "complete line); fetch or copy it again")
    lines = data.split(b"\n")[:-1]
    manifest, signature = read_header(lines[0], source)
    body = lines[1:]
    if len(body) != manifest.count:
        raise BundleError(f"{source}: the manifest lists {manifest.count} records but "
                          f"{len(body)} follow it; the bundle was cut or added to")
    if hashlib.sha256(b"".join(line + b"\n" for line in body)).hexdigest() != \
            manifest.records_sha256:
        raise BundleError(f"{source}: the record lines do not match the hash in the "
                          "manifest: changed since export")
    rows = tuple(_read_row(source, number, line) for number, line in enumerate(body, 2))
    _check_rows(source, manifest, rows)
    return Bundle(manifest, signature, rows)


def read_header(line: bytes, source: str) -> tuple[Manifest, Signature]:
    """A bundle's first line: its manifest (checked to start its plant's chain rightly)
    and signature, so bundles can be ordered and their signatures checked before the
    records are read."""
    header = _json_object(source, 1, line)
    if set(header) != {"manifest", "signature"}:
        raise BundleError(f"{source}:1: expected the manifest and its signature, found "
                          f"{', '.join(sorted(header)) or 'nothing'}; a bundle is what "
                          "`workpack sync export` writes")
    try:
        manifest = Manifest.model_validate(header["manifest"])
    except ValidationError as error:
        raise _invalid(source, 1, "manifest", error) from None
    if manifest.workpack_bundle != BUNDLE_VERSION:
        raise BundleError(f"{source}:1: manifest.workpack_bundle: bundle format "
                          f"{manifest.workpack_bundle}; this workpack reads format "
                          f"{BUNDLE_VERSION} (upgrade workpack)")
    try:
        signature = Signature.model_validate(header["signature"])
    except ValidationError as error:
        raise _invalid(source, 1, "signature", error) from None
    _check_chain_start(source, manifest)
    return manifest, signature


def _check_chain_start(source: str, manifest: Manifest) -> None:
    if manifest.genesis not in (plant_genesis(manifest.plant), GENESIS):
        raise BundleError(f"{source}:1: manifest.genesis: not the start of plant "
                          f"{manifest.plant}'s chain")
    if manifest.after.sequence == 0 and manifest.after.chain_sha256 != manifest.genesis:
        raise BundleError(f"{source}:1: manifest.after: a bundle from record 1 starts at "
                          "the genesis value")


def _read_row(source: str, line: int, text: bytes) -> StoredRow:
    try:
        row = _Row.model_validate(_json_object(source, line, text))
    except ValidationError as error:
        raise _invalid(source, line, "record", error) from None
    return StoredRow(row.sequence, row.package_id, row.package_sha256, row.results_json,
                     row.results_sha256, row.recorded_by, row.recorded_at, row.supersedes,
                     row.verdict, row.prev_sha256, row.chain_sha256)


def _check_rows(source: str, manifest: Manifest, rows: Sequence[StoredRow]) -> None:
    """Every record numbered in turn, chained to the one before, hashes as stored."""
    sequence, chain = manifest.after.sequence, manifest.after.chain_sha256
    for line, row in enumerate(rows, 2):
        where = f"{source}:{line}: record {row.sequence}"
        if row.sequence != sequence + 1:
            raise BundleError(f"{where}: expected record {sequence + 1} here")
        if row.prev_sha256 != chain:
            raise BundleError(f"{where}: does not chain to record {sequence} before it")
        if not (is_sha256_hex(row.package_sha256) and row.results_intact()):
            raise BundleError(f"{where}: its results no longer match their SHA-256")
        if row.hash_as() != row.chain_sha256:
            raise BundleError(f"{where}: a field no longer matches its chain hash")
        sequence, chain = row.sequence, row.chain_sha256
    through = manifest.through
    if (sequence, chain) != (through.sequence, through.chain_sha256):
        raise BundleError(f"{source}:1: manifest.through: the records end at record "
                          f"{sequence}, not at the head the manifest names")


def check_signature(register: CrewRegister, signed: Bundle | tuple[Manifest, Signature]
                    ) -> SignatureCheck:
    """Whether a bundle's signature (the bundle, or its header) is a valid one of a person
    in ``register``."""
    manifest, signature = ((signed.manifest, signed.signature) if isinstance(signed, Bundle)
                           else signed)
    return verify_digest(register, content_digest(manifest.content()), signature,
                         signed_as=SIGNED_AS)


def import_order(manifests: Iterable[Manifest]) -> list[Manifest]:
    """Bundles (by their manifests) in the order to import them: each plant's by where
    they start, so several bundles of one vessel given at once go in chain order whatever
    order they came in."""
    return sorted(manifests, key=lambda m: (m.plant, m.after.sequence, m.through.sequence))
