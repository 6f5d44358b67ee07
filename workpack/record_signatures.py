"""A record's signatures: the technician's and the supervisor's, over its canonical content,
checked against the crew register. Pure: the shell opens the key files and the store.

What is signed
    ``record_content``: the record as it is appended, less its number (not known until
    the store numbers it) and less the signatures themselves::

        {"workpack_record": 1, "package_id": ..., "package_sha256": ...,
         "recorded_by": ..., "recorded_at": the store's UTC text (microseconds),
         "supersedes": ... or null, "verdict": ...,
         "payload": the payload (workpack.records) without "signatures"}

    through ``workpack.signing`` (RFC 8785 canonical JSON, SHA-256, an Ed25519 statement
    naming the signer, key, role and time). The signatures travel in the payload
    (``RecordPayload.signatures``), so the chain protects them as it protects the results.
    A signature copied to another record, moved to the other role or to another person,
    or left on a record whose verdict or results were changed, no longer verifies.

A signature's time is the record's time, to the second: whether the key was valid then is
what the register is asked. The shell refuses to sign with a key that is revoked now.
"""

from __future__ import annotations

import datetime as dt
import json
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey
from pydantic import ValidationError

from workpack.model.crew import CrewRegister, Person
from workpack.model.signature import Signature
from workpack.signing import SignatureCheck, Verdict, content_digest, sign_digest, verify_digest
from workpack.store._chain import format_timestamp

if TYPE_CHECKING:
    from workpack.store import Record

ROLES = ("technician", "supervisor")
CONTENT_VERSION = 1


def record_content(*, package_id: str, package_sha256: str, recorded_by: str,
                   recorded_at: dt.datetime, supersedes: int | None, verdict: str,
                   payload: Mapping[str, Any]) -> dict[str, Any]:
    """What the signatures of a record cover (see the module docstring); ``payload``
    without its signatures."""
    return {"workpack_record": CONTENT_VERSION, "package_id": package_id,
            "package_sha256": package_sha256, "recorded_by": recorded_by,
            "recorded_at": format_timestamp(recorded_at), "supersedes": supersedes,
            "verdict": verdict,
            "payload": {k: v for k, v in payload.items() if k != "signatures"}}


def sign_record(content: Mapping[str, Any],
                signers: Iterable[tuple[str, Ed25519PrivateKey, str, str]],
                at: dt.datetime) -> tuple[Signature, ...]:
    """The signatures of ``content`` by ``signers``: (role, private key, person id, key id)
    each, made at ``at`` (the record's time; kept to the second)."""
    digest = content_digest(content)
    return tuple(sign_digest(private, digest, signed_as=role, person=person, key=key,
                             signed_at=at) for role, private, person, key in signers)


def named_person(register: CrewRegister, named: str | None) -> Person | None:
    """The register's person a results sheet names, by id or by name (None: nobody, or
    a name two people share)."""
    if not named:
        return None
    by_id = register.person(named)
    if by_id is not None:
        return by_id
    found = [p for p in register.people if p.name == named]
    return found[0] if len(found) == 1 else None


@dataclass(frozen=True)
class RoleCheck:
    """One role's signature on one record, as checked."""

    role: str
    check: SignatureCheck


@dataclass(frozen=True)
class RecordSignatures:
    """Both signatures of one record, checked; ``problem`` where they could not be read."""

    sequence: int
    package_id: str
    roles: tuple[RoleCheck, ...]
    problem: str | None = None

    @property
    def ok(self) -> bool:
        return self.problem is None and all(r.check.ok for r in self.roles)

    @property
    def unsigned(self) -> bool:
        return self.problem is None and all(r.check.verdict is Verdict.unsigned
                                            for r in self.roles)

    @property
    def message(self) -> str:
        """One line naming the record and what is wrong with each role's signature."""
        name = f"record {self.sequence} ({self.package_id})"
        if self.problem is not None:
            return f"{name}: its signatures cannot be read: {self.problem}"
        if self.unsigned:
            return f"{name}: unsigned (no technician's or supervisor's signature)"
        wrong = [f"{r.role}: {r.check.verdict.value.replace('_', ' ')}: {r.check.message}"
                 for r in self.roles if not r.check.ok]
        if not wrong:
            return f"{name}: signed by " + " and ".join(
                f"{r.check.person.name if r.check.person else '?'} as {r.role}"
                for r in self.roles)
        return f"{name}: " + "; ".join(wrong)


def check_record(register: CrewRegister, record: Record) -> RecordSignatures:
    """The technician's and the supervisor's signatures of ``record``, checked against the
    register at their time, over the record's content as stored."""
    try:
        payload = json.loads(record.results_json)
        if not isinstance(payload, dict):
            raise ValueError("the payload is not a mapping")
        signatures = [Signature.model_validate(s) for s in payload.get("signatures", [])]
    except (ValueError, TypeError, ValidationError) as error:
        reason = (error.errors(include_url=False)[0]["msg"] if isinstance(error, ValidationError)
                  else str(error))
        return RecordSignatures(record.sequence, record.package_id, (), reason)
    if not signatures:  # nothing to hash the content for
        return RecordSignatures(record.sequence, record.package_id, tuple(
            RoleCheck(role, SignatureCheck(Verdict.unsigned, f"not signed as {role}"))
            for role in ROLES))
    digest = content_digest(record_content(
        package_id=record.package_id, package_sha256=record.package_sha256,
        recorded_by=record.recorded_by, recorded_at=record.recorded_at,
        supersedes=record.supersedes, verdict=record.verdict, payload=payload))
    results = payload.get("results")
    results = results if isinstance(results, dict) else {}
    named = {"technician": results.get("completed_by"), "supervisor": results.get("supervisor")}
    checks = []
    for role in ROLES:
        found = [s for s in signatures if s.signed_as == role]
        signature = found[0] if found else None
        expected = named_person(register, named[role])
        check = verify_digest(register, digest, signature, signed_as=role,
                              person=expected.id if expected is not None else None)
        if check.ok and len(found) > 1:
            check = SignatureCheck(Verdict.other_purpose, f"signed {len(found)} times as "
                                                          f"{role}", check.person)
        checks.append(RoleCheck(role, check))
    strays = sorted({s.signed_as for s in signatures} - set(ROLES))
    if strays:
        checks.append(RoleCheck(strays[0], SignatureCheck(
            Verdict.other_purpose, f"signed as {strays[0]}, which a record does not carry")))
    people = [c.check.person.id for c in checks if c.check.ok and c.check.person is not None]
    if len(people) == 2 and people[0] == people[1]:
        person = checks[1].check.person
        assert person is not None
        checks[1] = RoleCheck("supervisor", SignatureCheck(
            Verdict.other_person, f"{person.name} ({person.id}) signed as technician and as "
                                  "supervisor: the record needs two people", person))
    return RecordSignatures(record.sequence, record.package_id, tuple(checks))


@dataclass(frozen=True)
class SignatureReport:
    """Every record's signatures checked: the records that fail, and how many were."""

    checked: int
    failing: tuple[RecordSignatures, ...]

    @property
    def ok(self) -> bool:
        return not self.failing

    @property
    def summary(self) -> str:
        noun = "record" if self.checked == 1 else "records"
        if not self.failing:
            return f"signatures checked against the crew register: {self.checked} {noun}, " \
                   "all signed by the technician and the supervisor with valid keys"
        kinds: dict[str, int] = {}
        for record in self.failing:
            for kind in _kinds(record):
                kinds[kind] = kinds.get(kind, 0) + 1
        said = ", ".join(f"{n} {kind}" for kind, n in sorted(kinds.items()))
        return (f"signatures checked against the crew register: {self.checked} {noun}, "
                f"{len(self.failing)} refused ({said})")


def _kinds(record: RecordSignatures) -> list[str]:
    if record.problem is not None:
        return ["unreadable"]
    if record.unsigned:
        return ["unsigned"]
    return sorted({r.check.verdict.value.replace("_", " ") for r in record.roles
                   if not r.check.ok})


def check_records(register: CrewRegister, records: Iterable[Record]) -> SignatureReport:
    """``check_record`` of every record, in sequence order."""
    checked = 0
    failing = []
    for record in records:
        checked += 1
        result = check_record(register, record)
        if not result.ok:
            failing.append(result)
    return SignatureReport(checked, tuple(failing))
