"""Signers with real key files and a crew register file naming them, and a whole-chain
rewrite as someone with write access to the store would do it, on either backend (names
and keys are invented)."""

from __future__ import annotations

import sqlite3
from pathlib import Path
from typing import Any

from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

from workpack.crew_shell import key_file_bytes, write_key_file
from workpack.signing import public_key_text
from workpack.store import plant_genesis
from workpack.store._chain import chain_hash, format_timestamp, sha256_hex

PASSPHRASE = "a passphrase of several words"
# Deterministic keys: the same test gives the same signatures.
KEYS = {name: Ed25519PrivateKey.from_private_bytes(bytes([seed]) * 32)
        for name, seed in (("quayle", 7), ("penhallow", 11), ("marrow", 13),
                           ("stranger", 17))}


def crew_text(*, revoked: dict[str, str] | None = None) -> str:
    """A register with S. Quayle (technician), R. Tamsin (supervisor) and T. Marrow;
    ``revoked`` maps a person's short name to the time their key was revoked."""
    revoked = revoked or {}
    people = [("LCS-0107", "S. Quayle", "electrical_officer", "quayle"),
              ("LCS-0098", "R. Tamsin", "supervisor", "penhallow"),
              ("LCS-0112", "T. Marrow", "engineer", "marrow")]
    lines = ["crew:", "  name: test crew", "  scheme: test scheme", "people:"]
    for person_id, name, role, short in people:
        lines += [f"  - id: {person_id}", f"    name: {name}", f"    role: {role}",
                  "    hours_per_day: 8", "    qualifications:",
                  "      - {kind: authorised_person, up_to_volts: 1000 V}",
                  "      - {kind: supervisor, up_to_volts: 1000 V}", "    keys:",
                  f"      - id: {person_id}-K1",
                  f"        public_key: \"{public_key_text(KEYS[short])}\"",
                  "        valid_from: 2026-01-01T00:00:00Z"]
        if short in revoked:
            lines += [f"        revoked_at: {revoked[short]}",
                      "        revoked_reason: key file lost"]
    return "\n".join(lines) + "\n"


def write_crew(folder: Path, **options: Any) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / "crew.yaml"
    path.write_text(crew_text(**options), encoding="utf-8")
    return path


def key_file(folder: Path, short: str) -> Path:
    path = folder / f"{short}.key"
    if not path.exists():
        write_key_file(path, key_file_bytes(KEYS[short], PASSPHRASE.encode()))
    return path


# --- a whole-chain rewrite with recomputed hashes ------------------------------------------

_HASHED = ("sequence", "package_id", "package_sha256", "results_sha256", "recorded_by",
           "recorded_at", "supersedes", "verdict")
# What a rewrite may change: the hashed fields and the results they hash.
_WRITTEN = ("package_id", "package_sha256", "results_json", "results_sha256", "recorded_by",
            "verdict", "prev_sha256", "chain_sha256")


def _rehashed(rows: list[tuple[Any, ...]], plant: str, edit: dict[str, Any],
              sequence: int) -> list[dict[str, Any]]:
    """Every row's new fields, ``edit`` applied to record ``sequence`` and the whole chain
    hashed again from the plant's genesis (``results_json`` in ``edit`` is hashed too)."""
    prev = plant_genesis(plant)
    out = []
    for row in rows:
        fields = dict(zip(("results_json", *_HASHED), row, strict=True))
        if fields["sequence"] == sequence:
            fields.update(edit)
            fields["results_sha256"] = sha256_hex(fields["results_json"])
        text_at = fields["recorded_at"]
        if not isinstance(text_at, str):  # PostgreSQL hands back its own type
            text_at = format_timestamp(text_at)
        fields["prev_sha256"] = prev
        fields["chain_sha256"] = prev = chain_hash(
            prev, fields["sequence"], fields["package_id"], fields["package_sha256"],
            fields["results_sha256"], fields["recorded_by"], text_at, fields["supersedes"],
            fields["verdict"])
        out.append(fields)
    return out


def rewrite_sqlite(path: Path, plant: str, sequence: int, edit: dict[str, Any]) -> None:
    """Drop the triggers, edit one record, rehash the whole chain, put the triggers back."""
    raw = sqlite3.connect(path, isolation_level=None)
    try:
        triggers = raw.execute("SELECT name, sql FROM sqlite_master WHERE type = 'trigger' "
                               "AND tbl_name = 'records'").fetchall()
        raw.execute("BEGIN")
        for name, _ in triggers:
            raw.execute(f"DROP TRIGGER {name}")
        rows = raw.execute(f"SELECT results_json, {', '.join(_HASHED)} FROM records "
                           "ORDER BY sequence").fetchall()
        for fields in _rehashed(rows, plant, edit, sequence):
            raw.execute(f"UPDATE records SET {', '.join(f'{c} = ?' for c in _WRITTEN)} "
                        "WHERE sequence = ?",
                        (*(fields[c] for c in _WRITTEN), fields["sequence"]))
        for _, sql in triggers:
            raw.execute(sql)
        raw.execute("COMMIT")
    finally:
        raw.close()


def rewrite_postgres(url: str, plant: str, sequence: int, edit: dict[str, Any]) -> None:
    """The same as the store's owner: triggers bypassed for the session, then on again."""
    import psycopg

    with psycopg.connect(url, autocommit=False) as conn:
        conn.execute("SET LOCAL session_replication_role = replica")
        rows = conn.execute(f"SELECT results_json, {', '.join(_HASHED)} FROM "
                            "workpack.records WHERE plant = %s ORDER BY sequence",
                            (plant,)).fetchall()
        for fields in _rehashed(rows, plant, edit, sequence):
            conn.execute(f"UPDATE workpack.records SET "
                         f"{', '.join(f'{c} = %s' for c in _WRITTEN)} "
                         "WHERE plant = %s AND sequence = %s",
                         (*(fields[c] for c in _WRITTEN), plant, fields["sequence"]))
        conn.commit()
