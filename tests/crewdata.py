"""Small crew registers built in code for the crew and signing tests (invented people)."""

from __future__ import annotations

import datetime as dt
from typing import Any

from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

from workpack.model.crew import CrewRegister
from workpack.signing import public_key_text

UTC = dt.UTC


def at(text: str) -> dt.datetime:
    """An aware time from ISO text (Z or an offset)."""
    return dt.datetime.fromisoformat(text)


def person(person_id: str, name: str, *, role: str = "electrician", hours: float = 8,
           qualifications: list[dict[str, Any]] | None = None,
           keys: list[dict[str, Any]] | None = None, **more: Any) -> dict[str, Any]:
    return {"id": person_id, "name": name, "role": role, "hours_per_day": hours,
            "qualifications": qualifications or [], "keys": keys or [], **more}


def key(key_id: str, private: Ed25519PrivateKey, valid_from: str,
        revoked_at: str | None = None, reason: str | None = None) -> dict[str, Any]:
    entry: dict[str, Any] = {"id": key_id, "public_key": public_key_text(private),
                             "valid_from": valid_from}
    if revoked_at is not None:
        entry |= {"revoked_at": revoked_at, "revoked_reason": reason or "test"}
    return entry


def register(*people: dict[str, Any]) -> CrewRegister:
    return CrewRegister.model_validate({"crew": {"name": "test crew", "scheme": "test scheme"},
                                        "people": list(people)})
