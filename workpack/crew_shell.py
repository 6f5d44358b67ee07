"""The crew register and signing keys at the edge: files, passphrases, the clock.

- ``load_crew``: a crew register file to a checked ``CrewRegister``; every problem is one
  ``file:line:col: field: message`` line (exit 2).
- Private key files: PKCS#8 PEM, encrypted with the passphrase by the ``cryptography``
  library's best available encryption; written once (never over another file), readable by
  the owner only (0600), atomically. The private key never enters the register.
- The passphrase comes from the environment variable ``WORKPACK_KEY_PASSPHRASE`` or from a
  prompt on the terminal, never from the command line (where other users and the shell's
  history would see it).
- ``create_key``, ``rotate_key``, ``revoke_key``: what the ``workpack key`` commands do.
  The register is written by hand and keeps its comments and layout, so they do not edit
  it: they print the lines to add, with the place to add them, after checking that the
  register with those lines still passes every check.
"""

from __future__ import annotations

import datetime as dt
import json
import os
import sys
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey
from cryptography.hazmat.primitives.serialization import (
    BestAvailableEncryption,
    Encoding,
    PrivateFormat,
    load_pem_private_key,
)

from workpack.crew import KeyRefusal, check_register, key_valid_at, utc_text
from workpack.errors import InputError, UsageError, WorkpackError, did_you_mean
from workpack.loading import located, read_text, validate
from workpack.model.crew import CrewRegister, Person, SigningKey
from workpack.output import fsync_folder
from workpack.signing import (
    keys_to_revoke_on_rotation,
    new_key_entry,
    next_key_id,
    public_key_bytes,
    revoked,
)
from workpack.yamlsource import Marks, parse_yaml

PASSPHRASE_VARIABLE = "WORKPACK_KEY_PASSPHRASE"
# Our own floor for a new key's passphrase; the employer's rules may ask for more.
MIN_PASSPHRASE = 12
KEY_FILE_MODE = 0o600


class KeyFileError(WorkpackError):
    """A key file that cannot be written or read, or a passphrase that does not open it."""


# --- the register ------------------------------------------------------------------------------


def load_crew_text(text: str, file: str) -> tuple[CrewRegister, Marks]:
    """Parse, validate and check a crew register; InputError lists every problem."""
    data, marks = parse_yaml(text, file)
    register = validate(CrewRegister, data, marks, "crew register")
    found = check_register(register)
    if found:
        raise InputError(located(marks, found))
    return register, marks


def load_crew(path: Path) -> tuple[CrewRegister, Marks]:
    return load_crew_text(read_text(path), str(path))


def _person(register: CrewRegister, person_id: str, file: str) -> tuple[int, Person]:
    for index, person in enumerate(register.people):
        if person.id == person_id:
            return index, person
    raise UsageError(f"--person {person_id}: no such person in {file}"
                     f"{did_you_mean(person_id, [p.id for p in register.people])}")


# --- time and passphrase ------------------------------------------------------------------------


def parse_time(option: str, text: str | None, now: Callable[[], dt.datetime]) -> dt.datetime:
    """An option's time (ISO 8601 with a zone, e.g. 2026-12-02T16:30Z), or now; whole
    seconds, in the zone given (its date is the local day the qualifications are read on)."""
    if text is None:
        return now().replace(microsecond=0)
    try:
        when = dt.datetime.fromisoformat(text)
    except ValueError:
        raise UsageError(f"{option} {text}: expected a date and time with its zone, e.g. "
                         "2026-12-02T16:30Z or 2026-12-02T16:30+01:00") from None
    if when.tzinfo is None:
        shown = when.isoformat(timespec="minutes")
        raise UsageError(f"{option} {text}: give the time zone too, e.g. {shown}Z (UTC) or "
                         f"{shown}+01:00: key times are compared across time zones")
    return when.replace(microsecond=0)


def read_passphrase(confirm: bool, environ: dict[str, str] | None = None,
                    prompt: Callable[[str], str] | None = None,
                    interactive: bool | None = None) -> bytes:
    """The key file's passphrase: from WORKPACK_KEY_PASSPHRASE, else asked on the terminal
    (twice with ``confirm``, for a new key). Never from the command line."""
    environ = dict(os.environ) if environ is None else environ
    text = environ.get(PASSPHRASE_VARIABLE)
    if text is None:
        if not (sys.stdin.isatty() if interactive is None else interactive):
            raise UsageError(f"no passphrase: set {PASSPHRASE_VARIABLE}, or run this in a "
                             "terminal to be asked for it")
        if prompt is None:
            import getpass

            prompt = getpass.getpass
        text = prompt("passphrase of the key file: ")
        if confirm and prompt("the same passphrase again: ") != text:
            raise UsageError("the two passphrases differ: nothing written")
    if confirm and len(text) < MIN_PASSPHRASE:
        raise UsageError(f"the passphrase is {len(text)} characters long: give at least "
                         f"{MIN_PASSPHRASE} (a few words are easier to remember than symbols)")
    if not text:
        raise UsageError("the passphrase is empty")
    return text.encode("utf-8")


# --- key files -----------------------------------------------------------------------------------


def key_file_bytes(private_key: Ed25519PrivateKey, passphrase: bytes) -> bytes:
    """PKCS#8 PEM, encrypted with ``passphrase`` (the library's best available encryption)."""
    return private_key.private_bytes(Encoding.PEM, PrivateFormat.PKCS8,
                                     BestAvailableEncryption(passphrase))


def write_key_file(path: Path, data: bytes) -> None:
    """Write ``data`` to ``path`` readable by its owner only, whole or not at all, and never
    over an existing file (a private key overwritten is a key lost)."""
    folder = path.parent if str(path.parent) else Path(".")
    if path.exists() or path.is_symlink():
        raise KeyFileError(f"{path}: a file is already there; a key file is never "
                           "overwritten: choose another name")
    temporary = folder / f".{path.name}.{os.getpid()}.tmp"
    try:
        handle = os.open(temporary, os.O_WRONLY | os.O_CREAT | os.O_EXCL, KEY_FILE_MODE)
        try:
            os.fchmod(handle, KEY_FILE_MODE)  # whatever the umask
            os.write(handle, data)
            os.fsync(handle)
        finally:
            os.close(handle)
        try:
            os.link(temporary, path)  # fails, rather than replaces, if path appeared
        except FileExistsError:
            raise KeyFileError(f"{path}: a file appeared there while the key was written; "
                               "nothing written") from None
        fsync_folder(folder)
    except OSError as error:
        raise KeyFileError(f"{path}: cannot write the key file "
                           f"({error.strerror or error})") from None
    finally:
        temporary.unlink(missing_ok=True)


def read_key_file(path: Path, passphrase: bytes) -> Ed25519PrivateKey:
    """The private key in ``path``, opened with ``passphrase``."""
    try:
        data = path.read_bytes()
    except FileNotFoundError:
        raise KeyFileError(f"{path}: no such key file") from None
    except OSError as error:
        raise KeyFileError(f"{path}: cannot read it ({error.strerror or error})") from None
    if os.name == "posix" and path.stat().st_mode & 0o077:
        raise KeyFileError(f"{path}: others may read this key file (mode "
                           f"{path.stat().st_mode & 0o777:o}): `chmod 600 {path}`, and "
                           "if anyone else could have copied it, revoke the key")
    if b"ENCRYPTED PRIVATE KEY" not in data:
        raise KeyFileError(f"{path}: not a passphrase-protected private key file (PKCS#8 "
                           "PEM, as `workpack key create` writes)")
    try:
        key = load_pem_private_key(data, password=passphrase)
    except (ValueError, TypeError):
        raise KeyFileError(f"{path}: the passphrase does not open this key file") from None
    if not isinstance(key, Ed25519PrivateKey):
        raise KeyFileError(f"{path}: not an Ed25519 key")
    return key


@dataclass(frozen=True)
class SigningIdentity:
    """An opened private key and who it signs for, as the register says at a time."""

    private_key: Ed25519PrivateKey
    person: Person
    key: SigningKey


def signing_identity(register: CrewRegister, private_key: Ed25519PrivateKey, at: dt.datetime,
                     key_file: str) -> SigningIdentity:
    """Whose register entry ``private_key`` is, refused where the key may not sign at ``at``."""
    raw = public_key_bytes(private_key)
    for person in register.people:
        for key in person.keys:
            if key.public_bytes() == raw:
                holder = key_valid_at(register, key.id, at)
                if isinstance(holder, KeyRefusal):
                    raise KeyFileError(f"{key_file}: {holder.message}")
                return SigningIdentity(private_key, person, key)
    raise KeyFileError(f"{key_file}: this key is not in the crew register: add the entry "
                       "`workpack key create` printed for it")


def open_signing_key(register: CrewRegister, key_file: Path, at: dt.datetime,
                     passphrase: bytes | None = None) -> SigningIdentity:
    """Read ``key_file`` (asking for its passphrase where not given) and find its signer."""
    secret = read_passphrase(confirm=False) if passphrase is None else passphrase
    return signing_identity(register, read_key_file(key_file, secret), at, str(key_file))


# --- the key commands -----------------------------------------------------------------------------


def _quoted(text: str) -> str:
    """A YAML double-quoted scalar (JSON's string syntax is a subset of it)."""
    return json.dumps(text, ensure_ascii=False)


def _entry_lines(key: SigningKey, dash_column: int) -> list[str]:
    pad = " " * dash_column
    lines = [f"{pad}- id: {key.id}", f"{pad}  public_key: {_quoted(key.public_key)}",
             f"{pad}  valid_from: {utc_text(key.valid_from)}"]
    return lines


def _revocation_lines(key: SigningKey, column: int) -> list[str]:
    assert key.revoked_at is not None and key.revoked_reason is not None
    pad = " " * column
    return [f"{pad}revoked_at: {utc_text(key.revoked_at)}",
            f"{pad}revoked_reason: {_quoted(key.revoked_reason)}"]


def _where_to_add(marks: Marks, index: int, person: Person) -> tuple[str, int, bool]:
    """(place text, column of the key entries' dash, whether a ``keys:`` line is needed)."""
    if person.keys:
        line, column = marks.locate(("people", index, "keys", len(person.keys) - 1))
        return (f"after key {person.keys[-1].id} (line {line}) in the keys of "
                f"{person.name} ({person.id})"), max(column - 3, 0), False
    line, column = marks.locate(("people", index, "id"), at_key=True)
    return (f"to {person.name} ({person.id}) (line {line}), which has no keys yet"
            ), column - 1 + 2, True


def _still_valid(register: CrewRegister, people: tuple[Person, ...], file: str) -> None:
    changed = register.model_copy(update={"people": people})
    found = check_register(changed)
    if found:
        raise UsageError(f"{file}: with this change the register would not pass its checks: "
                         f"{found[0].message}")


def _replace_person(register: CrewRegister, index: int, person: Person) -> tuple[Person, ...]:
    return tuple(person if i == index else p for i, p in enumerate(register.people))


def _new_key(register: CrewRegister, marks: Marks, file: str, index: int, person: Person,
             key_id: str | None, out: Path, at: dt.datetime,
             passphrase: Callable[[], bytes], revoke: list[SigningKey]) -> str:
    key_id = key_id or next_key_id(register, person)
    private_key = Ed25519PrivateKey.generate()
    entry = new_key_entry(private_key, key_id, at)
    keys = tuple(next((r for r in revoke if r.id == k.id), k) for k in person.keys)
    _still_valid(register, _replace_person(register, index, person.model_copy(
        update={"keys": (*keys, entry)})), file)
    if out.exists() or out.is_symlink():  # say so before asking for a passphrase
        raise KeyFileError(f"{out}: a file is already there; a key file is never "
                           "overwritten: choose another name")
    write_key_file(out, key_file_bytes(private_key, passphrase()))
    place, dash, needs_keys = _where_to_add(marks, index, person)
    lines = [f"private key written to {out} (readable by you only; keep it and its "
             "passphrase to yourself)"]
    for old in revoke:
        lines += [f"add to key {old.id} of {person.name} ({person.id}) in {file} (line "
                  f"{_key_line(marks, index, person, old.id)}):"]
        lines += _revocation_lines(old, dash + 2)
    lines.append(f"add to {file}, {place}:")
    if needs_keys:
        lines.append(" " * (dash - 2) + "keys:")
    lines += _entry_lines(entry, dash)
    return "\n".join(lines) + "\n"


def _key_line(marks: Marks, index: int, person: Person, key_id: str) -> int:
    number = next(i for i, key in enumerate(person.keys) if key.id == key_id)
    return marks.locate(("people", index, "keys", number, "id"))[0]


def create_key(crew_file: Path, person_id: str, out: Path, *, key_id: str | None = None,
               at: dt.datetime, passphrase: Callable[[], bytes]) -> str:
    """A new key pair for ``person_id``: the private key to ``out``; returns the text that
    says which lines to add to the register. ``passphrase()`` is asked once the register
    and the options are found sound."""
    register, marks = load_crew(crew_file)
    index, person = _person(register, person_id, str(crew_file))
    if person.left_on is not None:
        raise UsageError(f"--person {person_id}: {person.name} left on {person.left_on}; a "
                         "person who has left gets no new key")
    return _new_key(register, marks, str(crew_file), index, person, key_id, out, at,
                    passphrase, revoke=[])


def rotate_key(crew_file: Path, person_id: str, out: Path, *, key_id: str | None = None,
               at: dt.datetime, reason: str | None,
               passphrase: Callable[[], bytes]) -> str:
    """A new key for ``person_id`` from ``at``; every key of theirs still signing then is
    revoked from the same time."""
    register, marks = load_crew(crew_file)
    index, person = _person(register, person_id, str(crew_file))
    if person.left_on is not None:
        raise UsageError(f"--person {person_id}: {person.name} left on {person.left_on}; a "
                         "person who has left gets no new key")
    key_id = key_id or next_key_id(register, person)
    old = keys_to_revoke_on_rotation(person, at)
    if not old:
        raise UsageError(f"--person {person_id}: {person.name} has no key that signs at "
                         f"{utc_text(at)} to rotate; use `workpack key create`")
    try:
        revocations = [revoked(k, at, reason or f"replaced by {key_id}") for k in old]
    except ValueError as error:
        raise UsageError(str(error)) from None
    return _new_key(register, marks, str(crew_file), index, person, key_id, out, at,
                    passphrase, revoke=revocations)


def revoke_key(crew_file: Path, key_id: str, *, at: dt.datetime, reason: str) -> str:
    """The lines that revoke ``key_id`` from ``at`` for ``reason``."""
    register, marks = load_crew(crew_file)
    found = register.key(key_id)
    if found is None:
        known = [k.id for p in register.people for k in p.keys]
        raise UsageError(f"--key {key_id}: no such key in {crew_file}"
                         f"{did_you_mean(key_id, known)}")
    person, key = found
    index = register.people.index(person)
    try:
        changed = revoked(key, at, reason)
    except ValueError as error:
        raise UsageError(str(error)) from None
    _still_valid(register, _replace_person(register, index, person.model_copy(
        update={"keys": tuple(changed if k.id == key_id else k for k in person.keys)})),
        str(crew_file))
    number = next(i for i, k in enumerate(person.keys) if k.id == key_id)
    line, column = marks.locate(("people", index, "keys", number, "id"), at_key=True)
    verb = "replace the revocation of" if key.revoked_at is not None else "add to"
    lines = [f"{verb} key {key_id} of {person.name} ({person.id}) in {crew_file} (line "
             f"{line}):", *_revocation_lines(changed, column - 1),
             f"signatures made with it from {utc_text(changed.revoked_at or at)} on will be "
             "refused; those made before stay valid"]
    return "\n".join(lines) + "\n"
