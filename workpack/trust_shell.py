"""The shell of the records' trust checks: anchors taken and read, and what ``verify``
checks beyond the chain (an anchor, the verdicts judged again). Files, the store and the
clock are read here; the judging is in the pure modules (``workpack.anchors``,
``workpack.rejudge``).
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

from workpack.anchors import (
    anchor_text,
    check_anchor_signature,
    compare_with_chain,
    parse_typed_head,
    sign_anchor,
    take_anchor,
)
from workpack.electrical.standards import CodeSet
from workpack.errors import UsageError
from workpack.model.anchor import AnchorFile
from workpack.model.crew import CrewRegister
from workpack.model.package import WorkPackage
from workpack.reports import CheckFinding as Finding
from workpack.store import ChainHead, RecordStore

# --- anchors -------------------------------------------------------------------------------


def anchor_of_store(store: RecordStore, *, register: CrewRegister, key_file: Path,
                    at: dt.datetime, passphrase: bytes | None = None) -> str:
    """The signed anchor file text of ``store``'s chain as it stands, signed at ``at`` with
    ``key_file``'s key (its holder as the register says). A broken chain is not anchored:
    an anchor vouches for what the store holds."""
    from workpack.crew_shell import open_signing_key

    verification = store.verify()
    if not verification.ok:
        raise UsageError(f"{verification.message}; a broken chain is not anchored: find "
                         "out what happened first")
    hashes = [record.chain_sha256 for record in store.records()]
    if len(hashes) != verification.count:  # appended meanwhile: anchor what was verified
        hashes = hashes[:verification.count]
    identity = open_signing_key(register, key_file, at, passphrase)
    statement = take_anchor(store.plant, hashes, at)
    return anchor_text(sign_anchor(statement, identity.private_key, person=identity.person.id,
                                   key=identity.key.id))


def read_anchor(text: str) -> AnchorFile | ChainHead:
    """``--anchor``'s value: a head typed from paper (``COUNT:HEAD``) or an anchor file."""
    from workpack.loading import load_model

    typed = parse_typed_head(text)
    if typed is not None and not Path(text).exists():
        return typed
    return load_model(Path(text), AnchorFile, "workpack anchor file")


def anchor_plant(anchor: AnchorFile | ChainHead) -> str | None:
    """The plant an anchor is of (None for a typed head, which does not say)."""
    return anchor.anchor.plant if isinstance(anchor, AnchorFile) else None


def check_anchor(store: RecordStore, anchor: AnchorFile | ChainHead, shown: str,
                 register: CrewRegister | None) -> list[Finding]:
    """Whether ``store`` still holds the anchored chain, and who signed the anchor."""
    findings: list[Finding] = []
    if isinstance(anchor, AnchorFile):
        if register is None:
            findings.append(Finding(True, f"{shown}: its signature is not checked (give "
                                          "--crew, the register of who may sign)"))
        else:
            signed = check_anchor_signature(register, anchor)
            findings.append(Finding(signed.ok, f"{shown}: {signed.message}" if signed.ok else
                                    f"{shown}: its signature is refused: {signed.message}"))
    compared = compare_with_chain(anchor.anchor if isinstance(anchor, AnchorFile) else anchor,
                                  ((r.sequence, r.chain_sha256) for r in store.records()),
                                  plant=store.plant)
    findings.append(Finding(compared.ok, f"{store.location}: {compared.message}"))
    return findings


# --- verdicts judged again -------------------------------------------------------------------


def check_verdicts(store: RecordStore, packages: Mapping[str, WorkPackage],
                   standards: Mapping[str, CodeSet]) -> list[Finding]:
    """Every record of ``store`` judged again against the issued ``packages``: one line
    saying how many, then one per stored verdict that disagrees."""
    from workpack.rejudge import rejudge

    judged = rejudge(store.records(), packages, standards)
    return [Finding(judged.ok, f"{store.location}: {judged.summary}"),
            *[Finding(False, f"{store.location}: {d.message}") for d in judged.disagreements]]


def check_planning_summaries(store: RecordStore) -> list[Finding]:
    """Each planning summary kept beside a record recomputed from the record's payload:
    one line per summary that differs (changed outside workpack; the planner would read
    it instead of the record), none when all agree."""
    from workpack.records import planning_summary

    return [Finding(False, f"{store.location}: record {sequence}'s planning summary does "
                           "not match the record (changed outside workpack); planning reads "
                           "it instead of the record: restore the store from a copy")
            for sequence, payload, summary in store.kept_summaries()
            if planning_summary(payload) != summary]


def check_job_states(store: RecordStore) -> list[Finding]:
    """Each job state kept beside the job events compared with the state folded from
    the events: one line per job whose kept state differs, is missing or names no job
    (changed outside workpack; the status would read it instead of the events), none
    when all agree or when the status does not read them (not brought up to the last
    event: it folds the events then)."""
    from workpack.store._base import kept_job_rows

    kept = store.kept_job_states()
    if kept is None:
        return []
    found = {row[0]: tuple(row) for row in kept}
    expected = {row[0]: row for row in kept_job_rows(store.events())}
    return [Finding(False, f"{store.location}: job {package_id}'s kept state does not match "
                           "its job events (changed outside workpack); the status reads it "
                           "instead of the events: restore the store from a copy")
            for package_id in sorted(found.keys() | expected.keys())
            if found.get(package_id) != expected.get(package_id)]


# --- records signed by the technician and the supervisor ---------------------------------------

ROLE_PASSPHRASE = "WORKPACK_KEY_PASSPHRASE_{role}"  # per role, before WORKPACK_KEY_PASSPHRASE


def role_key_file(text: str) -> tuple[str, Path]:
    """``--sign``'s value: ROLE=KEYFILE, the role technician or supervisor."""
    from workpack.errors import did_you_mean
    from workpack.record_signatures import ROLES

    role, sep, path = text.partition("=")
    role = role.strip()
    if not sep or not path.strip():
        raise ValueError(f"{text!r}: expected ROLE=KEYFILE, e.g. technician=quayle.key")
    if role not in ROLES:
        raise ValueError(f"{role!r}: a record is signed as {' or '.join(ROLES)}"
                         f"{did_you_mean(role, ROLES)}")
    return role, Path(path.strip())


def _passphrase(role: str, key_file: Path) -> bytes:
    """The role's passphrase: its own variable, else the common one, else asked (naming the
    role and file, since two people sign one record)."""
    import os

    from workpack.crew_shell import PASSPHRASE_VARIABLE, read_passphrase

    environ = dict(os.environ)
    own = environ.get(ROLE_PASSPHRASE.format(role=role.upper()))
    if own is not None:
        environ[PASSPHRASE_VARIABLE] = own

    def ask(_: str) -> str:
        import getpass

        return getpass.getpass(f"passphrase of the {role}'s key file {key_file}: ")

    return read_passphrase(confirm=False, environ=environ, prompt=ask)


def sign_payload(register: CrewRegister, signs: Sequence[tuple[str, Path]],
                 payload: dict[str, Any], *, named: Mapping[str, str | None],
                 package_id: str, package_sha256: str, recorded_by: str,
                 recorded_at: dt.datetime, supersedes: int | None, verdict: str,
                 now: dt.datetime) -> dict[str, Any]:
    """``payload`` with the signatures of the ``signs`` (role, key file) over the record's
    content. Refused (nothing signed) where a key is not in the register, was not valid at
    the record's time or is revoked now, is not the person the results name in that role,
    or one person would sign as both."""
    from workpack.crew import KeyRefusal, key_valid_at
    from workpack.crew_shell import KeyFileError, open_signing_key
    from workpack.record_signatures import named_person, record_content, sign_record

    roles = [role for role, _ in signs]
    twice = sorted({role for role in roles if roles.count(role) > 1})
    if twice:
        raise UsageError(f"--sign {twice[0]}=…: given twice; each role signs once")
    at = recorded_at.astimezone(dt.UTC).replace(microsecond=0)
    signers = []
    for role, key_file in signs:
        identity = open_signing_key(register, key_file, at, _passphrase(role, key_file))
        still = key_valid_at(register, identity.key.id, now)
        if isinstance(still, KeyRefusal):
            raise KeyFileError(f"{key_file}: {still.message}: a revoked key signs nothing "
                               "after its revocation")
        expected = named_person(register, named.get(role))
        if expected is not None and expected.id != identity.person.id:
            raise UsageError(f"--sign {role}={key_file}: the key is {identity.person.name}'s "
                             f"({identity.person.id}), but the results name "
                             f"{expected.name} ({expected.id}) as {role}")
        signers.append((role, identity.private_key, identity.person.id, identity.key.id))
    people = [person for _, _, person, _ in signers]
    if len(set(people)) < len(people):
        raise UsageError(f"--sign: {people[0]} would sign as technician and as supervisor: "
                         "a record needs two people")
    content = record_content(package_id=package_id, package_sha256=package_sha256,
                             recorded_by=recorded_by, recorded_at=recorded_at,
                             supersedes=supersedes, verdict=verdict, payload=payload)
    signatures = sign_record(content, signers, at)
    return {**payload, "signatures": [s.model_dump(mode="json") for s in signatures]}


def check_signatures(store: RecordStore, register: CrewRegister) -> list[Finding]:
    """Every record's signatures checked: one summary line, then one per record refused."""
    from workpack.record_signatures import check_records

    report = check_records(register, store.records())
    return [Finding(report.ok, f"{store.location}: {report.summary}"),
            *[Finding(False, f"{store.location}: {r.message}") for r in report.failing]]
