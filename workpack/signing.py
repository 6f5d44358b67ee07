"""Signatures bound to people: Ed25519 over RFC 8785 canonical JSON, checked against the
crew register at the time of signing. Pure: keys arrive as objects, nothing is read or
written here (key files are ``workpack.keyfiles``).

What is signed
    Not the content alone but a *statement* (``statement``)::

        {"workpack_signature": 1, "signed_as": ..., "person": ..., "key": ...,
         "algorithm": "ed25519", "signed_at": "2026-12-02T16:30:00Z",
         "content_sha256": SHA-256 of the content's canonical JSON, 64 hex digits}

    both the content and the statement serialised by the JSON Canonicalization Scheme
    (RFC 8785, the ``rfc8785`` package): members sorted by their UTF-16 code units, no
    white space, numbers as ECMAScript prints them. So the same content gives the same bytes
    however its keys were ordered or its JSON was spaced, and a signature binds the content
    to its signer, key, purpose and time: copied onto other content, moved to another
    person, re-labelled from technician to supervisor or backdated, it no longer verifies.
    Content must be I-JSON (RFC 7493): text keys, integers within ±(2**53 - 1), finite
    numbers. The content enters by its digest so that the several signatures over one
    record canonicalise it once (``content_digest``; the ``*_digest`` functions take it).

Ed25519 (RFC 8032) is deterministic: one key and one message give one signature.
"""

from __future__ import annotations

import base64
import datetime as dt
import hashlib
from collections.abc import Mapping
from dataclasses import dataclass
from enum import StrEnum
from typing import Any

import rfc8785
from cryptography.exceptions import InvalidSignature
from cryptography.hazmat.primitives.asymmetric.ed25519 import (
    Ed25519PrivateKey,
    Ed25519PublicKey,
)
from cryptography.hazmat.primitives.serialization import Encoding, PublicFormat

from workpack.crew import KeyOutcome, KeyRefusal, key_valid_at, utc_text
from workpack.model.crew import CrewRegister, Person, SigningKey
from workpack.model.signature import Signature

ALGORITHM = "ed25519"
STATEMENT_VERSION = 1


class SigningError(ValueError):
    """Content that cannot be signed (not I-JSON), or a time without a zone."""


def canonical_bytes(value: Any) -> bytes:
    """``value`` (JSON data) as RFC 8785 canonical JSON, UTF-8."""
    try:
        return rfc8785.dumps(value)
    except rfc8785.CanonicalizationError as error:
        raise SigningError(f"cannot be signed as canonical JSON (RFC 8785): {error}") from None
    except TypeError as error:  # a value JSON has no form for (a date, a set)
        raise SigningError(f"cannot be signed as canonical JSON (RFC 8785): {error}") from None


# --- the raw layer: bytes in, bytes out -----------------------------------------------------


def public_key_bytes(key: Ed25519PrivateKey | Ed25519PublicKey) -> bytes:
    """The 32-byte public key (RFC 8032 section 5.1.5) of a private or public key."""
    public = key.public_key() if isinstance(key, Ed25519PrivateKey) else key
    return public.public_bytes(Encoding.Raw, PublicFormat.Raw)


def public_key_text(key: Ed25519PrivateKey | Ed25519PublicKey) -> str:
    """The public key as the register holds it: base64 of its 32 bytes."""
    return base64.b64encode(public_key_bytes(key)).decode("ascii")


def sign_message(key: Ed25519PrivateKey, message: bytes) -> bytes:
    """The 64-byte Ed25519 signature of ``message`` (RFC 8032 section 5.1.6)."""
    return key.sign(message)


def verify_message(public_key: bytes, message: bytes, signature: bytes) -> bool:
    """True when ``signature`` is ``public_key``'s signature of ``message`` (RFC 8032 5.1.7)."""
    try:
        Ed25519PublicKey.from_public_bytes(public_key).verify(signature, message)
    except (InvalidSignature, ValueError):
        return False
    return True


# --- statements: content bound to signer, key, purpose and time -----------------------------


def content_digest(content: Mapping[str, Any]) -> str:
    """SHA-256 (hex) of ``content``'s RFC 8785 canonical JSON: what a statement names."""
    return hashlib.sha256(canonical_bytes(dict(content))).hexdigest()


def statement(digest: str, *, signed_as: str, person: str, key: str,
              signed_at: dt.datetime) -> dict[str, Any]:
    """What a signature covers (see the module's docstring); ``digest`` is the content's."""
    return {"workpack_signature": STATEMENT_VERSION, "signed_as": signed_as, "person": person,
            "key": key, "algorithm": ALGORITHM, "signed_at": utc_text(signed_at),
            "content_sha256": digest}


def sign_digest(private_key: Ed25519PrivateKey, digest: str, *, signed_as: str, person: str,
                key: str, signed_at: dt.datetime) -> Signature:
    """``person``'s signature, as ``signed_as`` with their key ``key``, of the content whose
    ``content_digest`` is ``digest``.

    ``signed_at`` (aware) is kept to the whole second. Whether the key may sign then is the
    register's business: ``verify_digest`` checks it; the shell checks it before signing.
    """
    at = signed_at.astimezone(dt.UTC).replace(microsecond=0)
    message = canonical_bytes(statement(digest, signed_as=signed_as, person=person, key=key,
                                        signed_at=at))
    value = base64.b64encode(sign_message(private_key, message)).decode("ascii")
    return Signature(signed_as=signed_as, person=person, key=key, signed_at=at, value=value)


def sign_content(private_key: Ed25519PrivateKey, content: Mapping[str, Any], *,
                 signed_as: str, person: str, key: str, signed_at: dt.datetime) -> Signature:
    """``person``'s signature of ``content`` (JSON data) as ``signed_as`` with ``key``."""
    return sign_digest(private_key, content_digest(content), signed_as=signed_as,
                       person=person, key=key, signed_at=signed_at)


class Verdict(StrEnum):
    """What a signature check found: valid; unsigned (no signature where one is needed);
    unknown_key (its key is not in the register); revoked (its key was revoked before the
    signing time); not_yet_valid (signed before its key was valid); other_person (its key
    belongs to someone other than the signer it names, or than the one expected);
    other_purpose (signed as something other than expected); bad_signature (the bytes do not
    verify: the content, signer, key, purpose or time was changed, or it was never signed
    with that key)."""

    valid = "valid"
    unsigned = "unsigned"
    unknown_key = "unknown_key"
    revoked = "revoked"
    not_yet_valid = "not_yet_valid"
    other_person = "other_person"
    other_purpose = "other_purpose"
    bad_signature = "bad_signature"


_KEY_VERDICTS = {KeyOutcome.unknown_key: Verdict.unknown_key,
                 KeyOutcome.revoked: Verdict.revoked,
                 KeyOutcome.not_yet_valid: Verdict.not_yet_valid}


@dataclass(frozen=True)
class SignatureCheck:
    """The verdict on one signature, the signer where known, and why in words."""

    verdict: Verdict
    message: str
    person: Person | None = None

    @property
    def ok(self) -> bool:
        return self.verdict is Verdict.valid


def verify_content(register: CrewRegister, content: Mapping[str, Any],
                   signature: Signature | None, *, person: str | None = None,
                   signed_as: str | None = None) -> SignatureCheck:
    """Check ``signature`` over ``content`` against the register at its signing time.

    ``person`` and ``signed_as``, where given, are who must have signed and as what (a
    record's technician must sign as technician, not lend the supervisor's signature).
    """
    return verify_digest(register, content_digest(content), signature, person=person,
                         signed_as=signed_as)


def verify_digest(register: CrewRegister, digest: str, signature: Signature | None, *,
                  person: str | None = None, signed_as: str | None = None) -> SignatureCheck:
    """``verify_content`` for the content whose ``content_digest`` is ``digest``."""
    if signature is None:
        who = f" by {person}" if person else ""
        what = f" as {signed_as}" if signed_as else ""
        return SignatureCheck(Verdict.unsigned, f"not signed{who}{what}")
    if signed_as is not None and signature.signed_as != signed_as:
        return SignatureCheck(Verdict.other_purpose, f"signed as {signature.signed_as}, "
                                                     f"not as {signed_as}")
    holder = key_valid_at(register, signature.key, signature.signed_at)
    if isinstance(holder, KeyRefusal):
        return SignatureCheck(_KEY_VERDICTS[holder.outcome], holder.message)
    if holder.id != signature.person:
        return SignatureCheck(Verdict.other_person,
                              f"key {signature.key} belongs to {holder.name} ({holder.id}), "
                              f"not to {signature.person}, the signer it names", holder)
    if person is not None and holder.id != person:
        return SignatureCheck(Verdict.other_person,
                              f"signed by {holder.name} ({holder.id}), not by {person}",
                              holder)
    found = register.key(signature.key)
    assert found is not None  # key_valid_at found it
    message = canonical_bytes(statement(digest, signed_as=signature.signed_as,
                                        person=signature.person, key=signature.key,
                                        signed_at=signature.signed_at))
    if not verify_message(found[1].public_bytes(), message, signature.signature_bytes()):
        return SignatureCheck(Verdict.bad_signature,
                              f"the signature of {holder.name} ({holder.id}) with key "
                              f"{signature.key} does not match what it signs: changed since, "
                              "or copied from other content", holder)
    return SignatureCheck(Verdict.valid, f"signed by {holder.name} ({holder.id}) as "
                                         f"{signature.signed_as} at "
                                         f"{utc_text(signature.signed_at)}", holder)


# --- register entries for new, rotated and revoked keys ---------------------------------------


def new_key_entry(private_key: Ed25519PrivateKey, key_id: str,
                  valid_from: dt.datetime) -> SigningKey:
    """The register entry of a new key (its public half), valid from ``valid_from``."""
    return SigningKey(id=key_id, public_key=public_key_text(private_key),
                      valid_from=valid_from.astimezone(dt.UTC).replace(microsecond=0))


def next_key_id(register: CrewRegister, person: Person) -> str:
    """``<person id>-K<n>``, the first n not used by any key in the register."""
    used = {key.id for p in register.people for key in p.keys}
    number = len(person.keys) + 1
    while f"{person.id}-K{number}" in used:
        number += 1
    return f"{person.id}-K{number}"


def revoked(key: SigningKey, at: dt.datetime, reason: str) -> SigningKey:
    """``key`` revoked from ``at`` for ``reason``.

    Raises SigningError when ``at`` is before the key was valid, or later than a revocation
    already recorded (a revocation may be moved earlier, as when a key is found to have been
    lost before it was reported, never later).
    """
    at = at.astimezone(dt.UTC).replace(microsecond=0)
    if at < key.valid_from:
        raise SigningError(f"key {key.id} is valid only from {utc_text(key.valid_from)}: it "
                           f"cannot be revoked at {utc_text(at)}")
    if key.revoked_at is not None and at >= key.revoked_at:
        raise SigningError(f"key {key.id} is already revoked at {utc_text(key.revoked_at)} "
                           f"({key.revoked_reason}); a revocation may move earlier, not later")
    if not reason.strip():
        raise SigningError("say why the key is revoked (--reason)")
    return key.model_copy(update={"revoked_at": at, "revoked_reason": reason.strip()})


def keys_to_revoke_on_rotation(person: Person, at: dt.datetime) -> list[SigningKey]:
    """The person's keys that would still sign at ``at``: rotation revokes them then."""
    return [key for key in person.keys
            if key.valid_from <= at and (key.revoked_at is None or key.revoked_at > at)]
