"""The crew register: who may do, supervise and sign electrical work on a plant or fleet.

One hand-written YAML file per plant or per fleet (``plants/*-crew.yaml``). Each person
has a stable id that is never given to anyone else, their role, the qualifications the
employer's own competence scheme has given them (the register records them; it does not
decide them), the hours a day they are available for planned work, and the public halves
of their signing keys. A person who leaves keeps their entry (with ``left_on``) and a key
is never deleted, only revoked: records signed years ago must stay checkable, and an id
once used must not come back as somebody else.

Times of keys carry a time zone (``2026-01-05T08:00:00Z``): signatures are compared
across vessels and an office in other zones. Dates of qualifications are whole days.
"""

from __future__ import annotations

import base64
import binascii
import datetime as dt
from enum import StrEnum
from typing import Any, Literal

from pydantic import AwareDatetime, Field, field_validator, model_validator

from workpack.model.plant import ID_RULE, Id, Strict
from workpack.model.quantities import Volts

# Ed25519 sizes (RFC 8032 section 5.1.5 and 5.1.6): 32-byte public keys, 64-byte signatures.
PUBLIC_KEY_BYTES = 32
SIGNATURE_BYTES = 64


def _aware_time(schema: dict[str, Any]) -> None:
    """Key times as people write them (2026-01-05T08:00Z, seconds optional) with a zone:
    described by a pattern, since an editor's strict "date-time" check wants seconds."""
    schema.pop("format", None)
    schema["pattern"] = (r"^[0-9]{4}-[0-9]{2}-[0-9]{2}[Tt ][0-9]{2}:[0-9]{2}(:[0-9]{2}"
                         r"(\.[0-9]+)?)?([Zz]|[+-][0-9]{2}:?[0-9]{2})$")


def zoned_time(value: Any) -> Any:
    """Before validation: a time without its zone (as YAML reads 2026-01-05T08:00:00) or a
    bare date is refused in words that show the fix."""
    if isinstance(value, str):
        try:
            value = dt.datetime.fromisoformat(value)
        except ValueError:
            return value  # pydantic's own message names what is wrong with the text
    if isinstance(value, dt.datetime) and (value.tzinfo is None or value.utcoffset() is None):
        shown = value.isoformat(timespec="seconds")
        raise ValueError(f"{shown} has no time zone: write {shown}Z (UTC) or with its offset, "
                         f"e.g. {shown}+01:00")
    if isinstance(value, dt.date) and not isinstance(value, dt.datetime):
        raise ValueError(f"{value} is a date: give the time and zone too, e.g. "
                         f"{value}T00:00:00Z")
    return value


def whole_seconds(value: dt.datetime) -> dt.datetime:
    """After validation: a signed time is kept to the second (what is signed is its text)."""
    if value.microsecond:
        raise ValueError(f"{value.isoformat()} has fractions of a second: signed times are "
                         "in whole seconds")
    return value


def decode_base64(text: str, size: int, what: str) -> bytes:
    """Standard base64 (RFC 4648 section 4, with padding) of exactly ``size`` bytes."""
    try:
        raw = base64.b64decode(text.encode("ascii"), validate=True)
    except (binascii.Error, UnicodeEncodeError):
        raise ValueError(f"{what} is not base64 text (RFC 4648 section 4: A-Z a-z 0-9 + / "
                         "and = padding)") from None
    if len(raw) != size:
        raise ValueError(f"{what} decodes to {len(raw)} bytes, expected {size}")
    return raw


class Role(StrEnum):
    """What a person is on board or on site, for reading the register (what they may do is
    in their qualifications, not their role): electrical_officer (the vessel's or site's
    electrical officer), electrician, engineer (a marine or plant engineer who does
    electrical work within their qualifications), supervisor (who oversees and countersigns
    work), trainee (works under another's direction), other."""

    electrical_officer = "electrical_officer"
    electrician = "electrician"
    engineer = "engineer"
    supervisor = "supervisor"
    trainee = "trainee"
    other = "other"


class Competence(StrEnum):
    """What a qualification allows, on systems up to its voltage. The employer's own
    competence scheme decides who holds which; the register only records it.
    competent_person: has the training, knowledge and experience to isolate, prove dead,
    test and work on such systems without danger. authorised_person: appointed in writing by
    the employer to take charge of isolations and of work on such systems (also counts as a
    competent person for them). supervisor: may supervise such work and countersign its
    record. ground_present: may work on an insulated (IT) system while a ground is present on
    it, where a second ground on another phase makes a phase-to-phase fault through the
    frames."""

    competent_person = "competent_person"
    authorised_person = "authorised_person"
    supervisor = "supervisor"
    ground_present = "ground_present"


# What holding one competence also gives, at the same voltage and dates. Common practice
# in electrical safety rules: an authorised person is chosen from the competent ones.
IMPLIES: dict[Competence, frozenset[Competence]] = {
    Competence.authorised_person: frozenset({Competence.competent_person}),
}


class Qualification(Strict):
    """One competence a person holds, up to a voltage, between two dates, as the employer's
    competence scheme records it."""

    kind: Competence = Field(description="what it allows (see its values)",
                             examples=["authorised_person"])
    up_to_volts: Volts = Field(
        description="highest nominal line-to-line voltage of the systems it covers, in "
                    "volts or with a unit", examples=["1000 V", 690])
    granted_on: dt.date | None = Field(
        default=None, description="first day it holds, YYYY-MM-DD; not before this day",
        examples=["2025-03-01"])
    expires_on: dt.date | None = Field(
        default=None, description="first day it no longer holds, YYYY-MM-DD (a renewal is "
                                  "a new entry); none: until withdrawn",
        examples=["2028-03-01"])
    reference: str | None = Field(
        default=None, min_length=1, description="where the employer's scheme records it: "
                                                "a certificate or appointment number",
        examples=["appointment letter EL-2025-014"])

    @model_validator(mode="after")
    def _dates_in_order(self) -> Qualification:
        if (self.granted_on is not None and self.expires_on is not None
                and self.expires_on <= self.granted_on):
            raise ValueError(f"expires_on {self.expires_on} is not after granted_on "
                             f"{self.granted_on}")
        return self


class Requirement(Strict):
    """What a job needs of a person: a competence on a system of a voltage."""

    kind: Competence = Field(description="the competence needed (see its values)",
                             examples=["competent_person"])
    volts: Volts = Field(description="nominal line-to-line voltage of the system the work is "
                                     "on, in volts or with a unit", examples=["440 V"])


class SigningKey(Strict):
    """The public half of one of a person's Ed25519 signing keys. The private half stays
    with the person, in a key file protected by a passphrase. A key is never deleted: a
    replaced or lost one is revoked from a time, and signatures made before that time stay
    valid."""

    id: Id = Field(description=f"the key's id, unique in the register and never reused: "
                               f"{ID_RULE}", examples=["LCS-0107-K1"])
    algorithm: Literal["ed25519"] = Field(
        default="ed25519", description="signature algorithm: ed25519 (RFC 8032), the only one",
        examples=["ed25519"])
    public_key: str = Field(
        description="the 32-byte Ed25519 public key in base64 (RFC 4648 section 4), as "
                    "`workpack key create` prints it",
        examples=["8zzyElhkqOGy4+9EnHNuGRVX0NodYVmKUNbE6Zpi4z8="])
    valid_from: AwareDatetime = Field(
        description="from when it signs: date, time and zone, e.g. 2026-01-05T08:00:00Z",
        examples=["2026-01-05T08:00:00Z"], json_schema_extra=_aware_time)
    revoked_at: AwareDatetime | None = Field(
        default=None, description="from when it no longer signs: date, time and zone; "
                                  "signatures made before stay valid",
        examples=["2026-11-30T18:00:00Z"], json_schema_extra=_aware_time)
    revoked_reason: str | None = Field(
        default=None, min_length=1, description="why it was revoked (given with revoked_at)",
        examples=["replaced by LCS-0107-K2"])

    _zoned = field_validator("valid_from", "revoked_at", mode="before")(zoned_time)

    @field_validator("public_key")
    @classmethod
    def _thirty_two_bytes(cls, value: str) -> str:
        decode_base64(value, PUBLIC_KEY_BYTES, "the public key")
        return value

    @model_validator(mode="after")
    def _reason_with_time(self) -> SigningKey:
        if self.revoked_at is not None and self.revoked_reason is None:
            raise ValueError("revoked_at needs revoked_reason: say why the key was revoked")
        if self.revoked_reason is not None and self.revoked_at is None:
            raise ValueError("revoked_reason needs revoked_at: from when is it revoked?")
        return self

    def public_bytes(self) -> bytes:
        return decode_base64(self.public_key, PUBLIC_KEY_BYTES, "the public key")


class Person(Strict):
    """One person of the crew: who, what they may do, how long a day, and their keys."""

    id: Id = Field(description=f"stable id, never given to anyone else (an employee or "
                               f"register number): {ID_RULE}", examples=["LCS-0107"])
    name: str = Field(min_length=1, description="name as it is signed and printed",
                      examples=["S. Quayle"])
    role: Role = Field(description="what the person is (see its values); what they may do "
                                   "is in qualifications", examples=["electrical_officer"])
    qualifications: tuple[Qualification, ...] = Field(
        default=(), description="the competences the employer's scheme gives them",
        examples=[[{"kind": "authorised_person", "up_to_volts": "1000 V",
                    "granted_on": "2025-03-01", "expires_on": "2028-03-01"}]])
    hours_per_day: float = Field(
        gt=0, le=24, description="hours a day available for planned work, in hours",
        examples=[8])
    keys: tuple[SigningKey, ...] = Field(
        default=(), description="signing keys, old and new (a key is revoked, never "
                                "removed)",
        examples=[[{"id": "LCS-0107-K1", "public_key":
                    "8zzyElhkqOGy4+9EnHNuGRVX0NodYVmKUNbE6Zpi4z8=",
                    "valid_from": "2026-01-05T08:00:00Z"}]])
    left_on: dt.date | None = Field(
        default=None, description="last day they worked here, YYYY-MM-DD; the entry stays so "
                                  "their records stay checkable and the id is not reused",
        examples=["2026-06-30"])
    note: str | None = Field(default=None, min_length=1, description="anything else, in words",
                             examples=["on leave from 2026-12-20"])


class CrewHeader(Strict):
    """What the register is and whose scheme decides the qualifications in it."""

    name: str = Field(min_length=1, description="what this register is",
                      examples=["MV Skerry Lantern electrical crew"])
    plants: tuple[str, ...] = Field(
        default=(), description="names of the plants it serves, as their inventories name "
                                "them (plant.name); empty: any plant",
        examples=[["MV Skerry Lantern"]])
    scheme: str = Field(
        min_length=1, description="the employer's competence scheme that decides who holds "
                                  "which qualification (its name or document reference)",
        examples=["Lantern Coastal Shipping electrical safety rules, part 3"])


class CrewRegister(Strict):
    """The crew register of a plant or fleet."""

    crew: CrewHeader = Field(description="what the register is",
                             examples=[{"name": "MV Skerry Lantern electrical crew",
                                        "scheme": "electrical safety rules, part 3"}])
    people: tuple[Person, ...] = Field(
        min_length=1, description="everyone who does, supervises or signs electrical work, "
                                  "past and present",
        examples=[[{"id": "LCS-0107", "name": "S. Quayle", "role": "electrical_officer",
                    "hours_per_day": 8}]])

    def person(self, person_id: str) -> Person | None:
        return next((p for p in self.people if p.id == person_id), None)

    def key(self, key_id: str) -> tuple[Person, SigningKey] | None:
        """The first person holding key ``key_id``, and the key (ids are checked unique)."""
        for person in self.people:
            for key in person.keys:
                if key.id == key_id:
                    return person, key
        return None
