"""`workpack key create|rotate|revoke`: a private key file for the person, and the register
lines to add, printed where they go; the register with them added loads and says what the
command said."""

from __future__ import annotations

import stat
from pathlib import Path

import pytest
from crewdata import at

from workpack.cli import main
from workpack.crew import KeyRefusal, key_valid_at
from workpack.crew_shell import load_crew, open_signing_key

PASSPHRASE = "a passphrase of several words"
REGISTER = """\
# a register as people write it: comments and layout are theirs
crew:
  name: test crew
  scheme: test scheme
people:
  - id: P-1
    name: A. One
    role: supervisor
    hours_per_day: 4
    left_on: 2026-06-30
  # the person the keys are made for comes last, so printed lines can be appended
  - id: P-2
    name: B. Two
    role: electrician
    hours_per_day: 8
"""


@pytest.fixture
def crew_file(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    monkeypatch.setenv("WORKPACK_KEY_PASSPHRASE", PASSPHRASE)
    path = tmp_path / "crew.yaml"
    path.write_text(REGISTER, encoding="utf-8")
    return path


def run(argv: list[str], capsys: pytest.CaptureFixture[str]) -> tuple[int, str, str]:
    code = main(argv)
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def add_printed_lines(path: Path, out: str) -> None:
    """Do what the output says: its indented lines go in, in order (here: at the end)."""
    lines = [line for line in out.splitlines() if line.startswith(" ")]
    path.write_text(path.read_text(encoding="utf-8") + "\n".join(lines) + "\n",
                    encoding="utf-8")


def test_create_writes_the_key_and_prints_the_entry_that_makes_it_sign(
        crew_file: Path, tmp_path: Path, capsys) -> None:
    key_file = tmp_path / "b-two.key"
    code, out, err = run(["key", "create", "--register", str(crew_file), "--person", "P-2",
                          "--out", str(key_file), "--from", "2026-12-02T08:00+01:00"], capsys)
    assert (code, err) == (0, "")
    lines = out.splitlines()
    assert lines[0] == (f"private key written to {key_file} (readable by you only; keep it "
                        "and its passphrase to yourself)")
    assert lines[1] == f"add to {crew_file}, to B. Two (P-2) (line 12), which has no keys yet:"
    assert lines[2:4] == ["    keys:", "      - id: P-2-K1"]
    assert lines[4].startswith('        public_key: "') and lines[4].endswith('="')
    assert lines[5] == "        valid_from: 2026-12-02T07:00:00Z"
    assert stat.S_IMODE(key_file.stat().st_mode) == 0o600
    add_printed_lines(crew_file, out)
    register, _ = load_crew(crew_file)
    assert register.people[1].keys[0].id == "P-2-K1"
    assert crew_file.read_text(encoding="utf-8").startswith(REGISTER)  # comments kept
    identity = open_signing_key(register, key_file, at("2026-12-02T07:00:00Z"),
                                passphrase=PASSPHRASE.encode())
    assert identity.person.id == "P-2"


def test_rotate_revokes_the_old_key_when_the_new_one_starts(crew_file: Path, tmp_path: Path,
                                                            capsys) -> None:
    first, second = tmp_path / "k1.key", tmp_path / "k2.key"
    code, out, _ = run(["key", "create", "--register", str(crew_file), "--person", "P-2",
                        "--out", str(first), "--from", "2026-01-05T08:00Z"], capsys)
    add_printed_lines(crew_file, out)
    code, out, err = run(["key", "rotate", "--register", str(crew_file), "--person", "P-2",
                          "--out", str(second), "--at", "2026-09-14T07:00Z"], capsys)
    assert (code, err) == (0, "")
    assert (f"add to key P-2-K1 of B. Two (P-2) in {crew_file} (line 17):\n"
            "        revoked_at: 2026-09-14T07:00:00Z\n"
            '        revoked_reason: "replaced by P-2-K2"\n'
            f"add to {crew_file}, after key P-2-K1 (line 17) in the keys of B. Two (P-2):\n"
            "      - id: P-2-K2\n") in out
    add_printed_lines(crew_file, out)
    register, _ = load_crew(crew_file)
    old, new = register.people[1].keys
    assert (old.revoked_at, old.revoked_reason) == (at("2026-09-14T07:00:00Z"),
                                                    "replaced by P-2-K2")
    assert new.valid_from == at("2026-09-14T07:00:00Z")
    assert isinstance(key_valid_at(register, "P-2-K1", at("2026-09-14T07:00:00Z")), KeyRefusal)
    assert key_valid_at(register, "P-2-K1", at("2026-09-14T06:59:59Z")) == register.people[1]
    assert key_valid_at(register, "P-2-K2", at("2026-09-14T07:00:00Z")) == register.people[1]


def test_revoke_prints_the_two_lines_and_may_move_earlier_but_not_later(
        crew_file: Path, tmp_path: Path, capsys) -> None:
    _, out, _ = run(["key", "create", "--register", str(crew_file), "--person", "P-2",
                     "--out", str(tmp_path / "k1.key"), "--from", "2026-01-05T08:00Z"], capsys)
    add_printed_lines(crew_file, out)
    code, out, err = run(["key", "revoke", "--register", str(crew_file), "--key", "P-2-K1",
                          "--at", "2026-11-30T18:00Z", "--reason", "key file lost"], capsys)
    assert (code, err) == (0, "")
    assert out == (f"add to key P-2-K1 of B. Two (P-2) in {crew_file} (line 17):\n"
                   "        revoked_at: 2026-11-30T18:00:00Z\n"
                   '        revoked_reason: "key file lost"\n'
                   "signatures made with it from 2026-11-30T18:00:00Z on will be refused; "
                   "those made before stay valid\n")
    add_printed_lines(crew_file, out)
    assert load_crew(crew_file)[0].people[1].keys[0].revoked_reason == "key file lost"
    code, out, err = run(["key", "revoke", "--register", str(crew_file), "--key", "P-2-K1",
                          "--at", "2026-12-01T00:00Z", "--reason", "again"], capsys)
    assert (code, out) == (2, "")
    assert err == ("key P-2-K1 is already revoked at 2026-11-30T18:00:00Z (key file lost); a "
                   "revocation may move earlier, not later\n")
    code, out, err = run(["key", "revoke", "--register", str(crew_file), "--key", "P-2-K1",
                          "--at", "2026-11-01T00:00Z", "--reason", "lost earlier"], capsys)
    assert code == 0 and out.startswith("replace the revocation of key P-2-K1")


@pytest.mark.parametrize(("argv", "message"), [
    (["key", "create", "--person", "P-1", "--out", "{tmp}/a.key"],
     "--person P-1: A. One left on 2026-06-30; a person who has left gets no new key\n"),
    (["key", "create", "--person", "P-3", "--out", "{tmp}/a.key"],
     "--person P-3: no such person in {crew} (did you mean 'P-2' or 'P-1'?)\n"),
    (["key", "create", "--person", "P-2", "--out", "{tmp}/a.key", "--from", "2026-12-02"],
     "--from 2026-12-02: give the time zone too, e.g. 2026-12-02T00:00Z (UTC) or "
     "2026-12-02T00:00+01:00: key times are compared across time zones\n"),
    (["key", "rotate", "--person", "P-2", "--out", "{tmp}/a.key"],
     "--person P-2: B. Two has no key that signs at {now} to rotate; use `workpack key "
     "create`\n"),
    (["key", "revoke", "--key", "P-2-K7", "--reason", "lost"],
     "--key P-2-K7: no such key in {crew}\n"),
])
def test_mistakes_are_one_line_and_nothing_is_written(crew_file: Path, tmp_path: Path,
                                                      argv: list[str], message: str,
                                                      capsys, monkeypatch) -> None:
    import datetime as dt

    import workpack.cli

    now = dt.datetime(2026, 12, 2, 9, 0, tzinfo=dt.UTC)
    monkeypatch.setattr(workpack.cli, "_now", lambda: now)
    argv = [part.format(tmp=tmp_path) for part in argv]
    argv[2:2] = ["--register", str(crew_file)]
    code, out, err = run(argv, capsys)
    assert (code, out) == (2, "")
    assert err == message.format(crew=crew_file, now="2026-12-02T09:00:00Z")
    assert not (tmp_path / "a.key").exists()
    assert crew_file.read_text(encoding="utf-8") == REGISTER


def test_a_key_file_is_never_written_over_and_no_passphrase_is_asked_first(
        crew_file: Path, tmp_path: Path, capsys, monkeypatch) -> None:
    monkeypatch.delenv("WORKPACK_KEY_PASSPHRASE")
    existing = tmp_path / "mine.key"
    existing.write_bytes(b"someone's key")
    code, out, err = run(["key", "create", "--register", str(crew_file), "--person", "P-2",
                          "--out", str(existing)], capsys)
    assert (code, out) == (2, "")
    assert err == (f"{existing}: a file is already there; a key file is never overwritten: "
                   "choose another name\n")
    assert existing.read_bytes() == b"someone's key"


def test_without_a_passphrase_nothing_is_written(crew_file: Path, tmp_path: Path, capsys,
                                                 monkeypatch) -> None:
    monkeypatch.delenv("WORKPACK_KEY_PASSPHRASE")
    monkeypatch.setattr("sys.stdin.isatty", lambda: False)
    code, out, err = run(["key", "create", "--register", str(crew_file), "--person", "P-2",
                          "--out", str(tmp_path / "a.key")], capsys)
    assert (code, out) == (2, "")
    assert err == ("no passphrase: set WORKPACK_KEY_PASSPHRASE, or run this in a terminal to "
                   "be asked for it\n")
    assert list(tmp_path.iterdir()) == [crew_file]


def test_there_is_no_passphrase_option() -> None:
    """A passphrase on the command line is seen by other users and kept in shell history."""
    with pytest.raises(SystemExit) as exited:
        main(["key", "create", "--register", "x", "--person", "P", "--out", "k",
              "--passphrase", "secret"])
    assert exited.value.code == 2
