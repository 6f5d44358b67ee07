"""The shell of the records' trust checks: anchors taken and read, and what ``verify``
checks beyond the chain (an anchor, the verdicts judged again). Files, the store and the
clock are read here; the judging is in the pure modules (``workpack.anchors``,
``workpack.rejudge``).
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path

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
from workpack.store import ChainHead, RecordStore


@dataclass(frozen=True)
class Finding:
    """One line ``verify`` prints beside the chain's verdict, and whether it is a failure."""

    ok: bool
    line: str


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
