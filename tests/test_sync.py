"""`workpack sync export|import`: a vessel's new records in one signed file, taken into the
office's store. Every test that imports runs into both backends: an SQLite file, and a
plant of its own in a records store on the real PostgreSQL server the suite starts
(tests/pgfixtures.py). People, plants and readings are invented.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import itertools
import json
import shutil
from pathlib import Path
from typing import Any

import pytest
from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

from workpack.cli import main
from workpack.crew_shell import key_file_bytes, write_key_file
from workpack.signing import public_key_text
from workpack.store import RecordStore, open_store
from workpack.sync import BundleError, read_bundle

PASSPHRASE = "several words make a passphrase"
T0 = dt.datetime(2026, 12, 2, 8, 0, tzinfo=dt.UTC)
_plants = itertools.count(1)


def private_key(seed: str) -> Ed25519PrivateKey:
    return Ed25519PrivateKey.from_private_bytes(hashlib.sha256(seed.encode()).digest())


EXPORTER = private_key("exporter")
STRANGER = private_key("not in the register")
REGISTER = f"""\
crew:
  name: test fleet
  scheme: test scheme
people:
  - id: P-7
    name: C. Seven
    role: electrical_officer
    hours_per_day: 8
    keys:
      - id: P-7-K1
        public_key: "{public_key_text(EXPORTER)}"
        valid_from: 2026-01-01T00:00:00Z
"""


@pytest.fixture
def crew(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> dict[str, Path]:
    """The crew register, the exporter's key file, and a stranger's key file."""
    monkeypatch.setenv("WORKPACK_KEY_PASSPHRASE", PASSPHRASE)
    register = tmp_path / "crew.yaml"
    register.write_text(REGISTER, encoding="utf-8")
    files = {"register": register, "key": tmp_path / "p7.key",
             "stranger": tmp_path / "stranger.key"}
    write_key_file(files["key"], key_file_bytes(EXPORTER, PASSPHRASE.encode()))
    write_key_file(files["stranger"], key_file_bytes(STRANGER, PASSPHRASE.encode()))
    return files


@pytest.fixture(params=["sqlite", "postgresql"])
def office(request: pytest.FixtureRequest, tmp_path: Path) -> str:
    """The office's store: an SQLite file, or the shared PostgreSQL store (plants apart)."""
    if request.param == "sqlite":
        return str(tmp_path / "office.sqlite")
    return str(request.getfixturevalue("pg_store_url"))


@pytest.fixture
def plant() -> str:
    return f"MV Sync Test {next(_plants):04d}"


def add(store: RecordStore, count: int, *, start: int = 0, note: str = "") -> None:
    for i in range(start, start + count):
        store.append(package_id=f"WP-{i // 3:03d}", package_sha256=f"{i % 16:x}" * 64,
                     results={"readings": {"S2.R1": {"value_ohm": 1.5e8 + i}},
                              "remarks": f"entry {i}{note}"},
                     recorded_by="C. Seven", recorded_at=T0 + dt.timedelta(hours=i),
                     verdict="pass")


def run(argv: list[str], capsys: pytest.CaptureFixture[str]) -> tuple[int, str, str]:
    code = main(argv)
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def export(vessel: Path, out: Path, crew: dict[str, Path], capsys: Any,
           since: Path | None = None, key: str = "key") -> str:
    argv = ["sync", "export", "--db", str(vessel), "--out", str(out), "--sign-as",
            str(crew[key]), "--crew", str(crew["register"]), "--at", "2026-12-20T12:00Z"]
    code, out_text, err = run(argv + (["--since", str(since)] if since else []), capsys)
    assert (code, err) == (0, ""), err
    return out_text


def take(office: str, crew: dict[str, Path], capsys: Any, *bundles: Path
         ) -> tuple[int, str, str]:
    return run(["sync", "import", *map(str, bundles), "--db", office, "--crew",
                str(crew["register"])], capsys)


def rows(location: str, plant: str) -> list[tuple[int, str]]:
    """The plant's records as (number, chain hash); none where it has none yet ("": the
    unnamed store's)."""
    with open_store(location, plant=plant or None) as store:
        return [(r.sequence, r.chain_sha256) for r in store.records()]


def verified(location: str, plant: str) -> str:
    with open_store(location, plant=plant, create=False) as store:
        result = store.verify()
    assert result.ok and result.guards_intact, result.message
    return result.message


# --- export and import -----------------------------------------------------------------


def test_a_bundle_brings_the_vessels_chain_ashore_unchanged(
        tmp_path: Path, office: str, plant: str, crew: dict[str, Path], capsys) -> None:
    """The office holds the same records under the same chain hashes, and verifies."""
    vessel = tmp_path / "vessel.sqlite"
    with open_store(vessel, plant=plant) as store:
        add(store, 7)
    said = export(vessel, tmp_path / "b1.wpb", crew, capsys)
    assert said.startswith(f"{vessel}: records 1 to 7 of plant {plant} written to ")
    assert said.rstrip().endswith("signed by C. Seven (P-7)")
    code, out, err = take(office, crew, capsys, tmp_path / "b1.wpb")
    assert (code, err) == (0, "")
    assert out == (f"{tmp_path / 'b1.wpb'}: plant {plant}: records 1 to 7, exported "
                   f"2026-12-20T12:00:00Z by P-7: 7 added; the chain of {plant} now ends "
                   "at record 7\n")
    assert rows(office, plant) == rows(str(vessel), plant)
    assert "OK, 7 records" in verified(office, plant)


def test_the_same_bundle_twice_adds_nothing(
        tmp_path: Path, office: str, plant: str, crew: dict[str, Path], capsys) -> None:
    vessel = tmp_path / "vessel.sqlite"
    with open_store(vessel, plant=plant) as store:
        add(store, 4)
    export(vessel, tmp_path / "b1.wpb", crew, capsys)
    assert take(office, crew, capsys, tmp_path / "b1.wpb")[0] == 0
    before = rows(office, plant)
    code, out, err = take(office, crew, capsys, tmp_path / "b1.wpb")
    assert (code, err) == (0, "")
    assert ": 0 added, 4 held already; " in out
    assert rows(office, plant) == before


def test_later_bundles_continue_and_a_gap_is_refused_naming_what_is_missing(
        tmp_path: Path, office: str, plant: str, crew: dict[str, Path], capsys) -> None:
    """The second export starts after the first; imported before it, it leaves a gap."""
    vessel = tmp_path / "vessel.sqlite"
    with open_store(vessel, plant=plant) as store:
        add(store, 3)
    export(vessel, tmp_path / "b1.wpb", crew, capsys)
    with open_store(vessel, plant=plant) as store:
        add(store, 4, start=3)
    said = export(vessel, tmp_path / "b2.wpb", crew, capsys, since=tmp_path / "b1.wpb")
    assert f": records 4 to 7 of plant {plant} written" in said
    code, out, err = take(office, crew, capsys, tmp_path / "b2.wpb")
    assert (code, out) == (2, "")
    assert err.startswith(f"{tmp_path / 'b2.wpb'}: refused, nothing imported from it: ")
    assert ("gap: the store holds no records yet, and these records begin after record 3: "
            "records 1 to 3 have not arrived") in err
    assert rows(office, plant) == []
    code, out, err = take(office, crew, capsys, tmp_path / "b1.wpb")
    code, out, err = take(office, crew, capsys, tmp_path / "b2.wpb")
    assert (code, err) == (0, "")
    assert rows(office, plant) == rows(str(vessel), plant)
    verified(office, plant)


def test_bundles_given_together_go_in_chain_order(
        tmp_path: Path, office: str, plant: str, crew: dict[str, Path], capsys) -> None:
    vessel = tmp_path / "vessel.sqlite"
    with open_store(vessel, plant=plant) as store:
        add(store, 2)
    export(vessel, tmp_path / "b1.wpb", crew, capsys)
    with open_store(vessel, plant=plant) as store:
        add(store, 2, start=2)
    export(vessel, tmp_path / "b2.wpb", crew, capsys, since=tmp_path / "b1.wpb")
    code, out, err = take(office, crew, capsys, tmp_path / "b2.wpb", tmp_path / "b1.wpb")
    assert (code, err) == (0, "")
    assert [line.split(":")[0] for line in out.splitlines()] == [
        str(tmp_path / "b1.wpb"), str(tmp_path / "b2.wpb")]
    assert rows(office, plant) == rows(str(vessel), plant)


def test_a_fork_is_refused_at_the_first_record_that_differs(
        tmp_path: Path, office: str, plant: str, crew: dict[str, Path], capsys) -> None:
    """Two copies of one vessel's store that went on differently: the second is refused."""
    vessel, other = tmp_path / "vessel.sqlite", tmp_path / "copy.sqlite"
    with open_store(vessel, plant=plant) as store:
        add(store, 3)
    export(vessel, tmp_path / "b1.wpb", crew, capsys)
    shutil.copy(vessel, other)
    with open_store(vessel, plant=plant) as store:
        add(store, 2, start=3)
    with open_store(other, plant=plant) as store:
        add(store, 2, start=3, note=" (written on the copy)")
    export(vessel, tmp_path / "b2.wpb", crew, capsys, since=tmp_path / "b1.wpb")
    export(other, tmp_path / "fork.wpb", crew, capsys, since=tmp_path / "b1.wpb")
    assert take(office, crew, capsys, tmp_path / "b1.wpb", tmp_path / "b2.wpb")[0] == 0
    before = rows(office, plant)
    code, out, err = take(office, crew, capsys, tmp_path / "fork.wpb")
    assert (code, out) == (2, "")
    assert ("fork at record 4: the store holds a different record 4 (the chain was "
            "rewritten on one side)") in err
    assert rows(office, plant) == before


def test_bundles_of_several_vessels_in_any_order(
        tmp_path: Path, pg_store_url: str, crew: dict[str, Path], capsys) -> None:
    """PostgreSQL only: an SQLite file holds one plant. Each chain stays its own."""
    bundles = []
    names = [f"MV Sync Fleet {next(_plants):04d}" for _ in range(3)]
    for n, name in enumerate(names):
        vessel = tmp_path / f"vessel-{n}.sqlite"
        with open_store(vessel, plant=name) as store:
            add(store, 2 + n)
        export(vessel, tmp_path / f"first-{n}.wpb", crew, capsys)
        with open_store(vessel, plant=name) as store:
            add(store, 2, start=2 + n)
        export(vessel, tmp_path / f"second-{n}.wpb", crew, capsys,
               since=tmp_path / f"first-{n}.wpb")
        bundles += [tmp_path / f"first-{n}.wpb", tmp_path / f"second-{n}.wpb"]
    for bundle in reversed(bundles):  # one at a time, each vessel's second first
        take(pg_store_url, crew, capsys, bundle)
    code, out, err = take(pg_store_url, crew, capsys, *reversed(bundles))
    assert (code, err) == (0, "")
    for n, name in enumerate(names):
        assert rows(pg_store_url, name) == rows(str(tmp_path / f"vessel-{n}.sqlite"), name)
        verified(pg_store_url, name)


# --- signatures and damaged bundles ----------------------------------------------------


@pytest.fixture
def bundle(tmp_path: Path, plant: str, crew: dict[str, Path], capsys) -> Path:
    vessel = tmp_path / "vessel.sqlite"
    with open_store(vessel, plant=plant) as store:
        add(store, 3)
    export(vessel, tmp_path / "b1.wpb", crew, capsys)
    return tmp_path / "b1.wpb"


def edited_header(path: Path, change: Any) -> None:
    lines = path.read_bytes().split(b"\n")
    header = json.loads(lines[0])
    change(header)
    lines[0] = json.dumps(header, separators=(",", ":")).encode()
    path.write_bytes(b"\n".join(lines))


def test_a_bundle_whose_manifest_was_changed_fails_its_signature(
        bundle: Path, office: str, plant: str, crew: dict[str, Path], capsys) -> None:
    edited_header(bundle, lambda h: h["manifest"].update(exported_at="2026-12-21T12:00:00Z"))
    code, out, err = take(office, crew, capsys, bundle)
    assert (code, out) == (2, "")
    assert err.startswith(f"{bundle}: refused, nothing imported from it: its signature: "
                          "the signature of C. Seven (P-7) with key P-7-K1 does not match")


def test_a_record_changed_and_rehashed_in_the_bundle_fails_its_signature(
        bundle: Path, office: str, plant: str, crew: dict[str, Path], capsys) -> None:
    """Changing a record and every hash after it still leaves the signed manifest wrong."""
    lines = bundle.read_bytes().split(b"\n")
    assert read_bundle(bundle.read_bytes(), "b").rows[1].verdict == "pass"
    lines[2] = lines[2].replace(b'"verdict":"pass"', b'"verdict":"fail"')
    edited = b"\n".join(lines)
    bundle.write_bytes(edited)
    with pytest.raises(BundleError, match="record lines do not match the hash in the manif"):
        read_bundle(edited, "b")
    # Now rehash as an editor with the project's own code would: the signature still fails.
    from workpack.store._chain import chain_hash

    header = json.loads(lines[0])
    rows_ = [json.loads(line) for line in lines[1:-1]]
    prev = rows_[0]["prev_sha256"]
    for row in rows_:
        row["prev_sha256"] = prev
        row["chain_sha256"] = prev = chain_hash(
            prev, row["sequence"], row["package_id"], row["package_sha256"],
            row["results_sha256"], row["recorded_by"], row["recorded_at"], row["supersedes"],
            row["verdict"])
    body = b"".join(json.dumps(r, separators=(",", ":"), sort_keys=True).encode() + b"\n"
                    for r in rows_)
    header["manifest"]["records_sha256"] = hashlib.sha256(body).hexdigest()
    header["manifest"]["through"]["chain_sha256"] = prev
    bundle.write_bytes(json.dumps(header, separators=(",", ":")).encode() + b"\n" + body)
    assert read_bundle(bundle.read_bytes(), "b").rows[1].verdict == "fail"  # holds together
    code, out, err = take(office, crew, capsys, bundle)
    assert (code, out) == (2, "")
    assert "its signature: the signature of C. Seven (P-7) with key P-7-K1 does not match" \
        in err
    assert rows(office, plant) == []


def test_a_bundle_signed_with_a_key_not_in_the_register_is_refused(
        tmp_path: Path, office: str, plant: str, crew: dict[str, Path], capsys) -> None:
    vessel = tmp_path / "vessel.sqlite"
    with open_store(vessel, plant=plant) as store:
        add(store, 2)
    # The stranger's key cannot even sign an export: the register does not know it.
    code, out, err = run(["sync", "export", "--db", str(vessel), "--out",
                          str(tmp_path / "x.wpb"), "--sign-as", str(crew["stranger"]),
                          "--crew", str(crew["register"])], capsys)
    assert code == 2 and "this key is not in the crew register" in err
    assert not (tmp_path / "x.wpb").exists()
    # A bundle signed by a person the office's register does not hold is refused.
    export(vessel, tmp_path / "b1.wpb", crew, capsys)
    other = tmp_path / "office-crew.yaml"
    other.write_text(REGISTER.replace(public_key_text(EXPORTER), public_key_text(STRANGER)),
                     encoding="utf-8")
    code, out, err = run(["sync", "import", str(tmp_path / "b1.wpb"), "--db", office,
                          "--crew", str(other)], capsys)
    assert (code, out) == (2, "")
    assert "its signature: the signature of C. Seven (P-7) with key P-7-K1 does not match" \
        in err


@pytest.mark.parametrize(("damage", "message"), [
    (lambda data: data[:-40], "the bundle is cut short"),
    (lambda data: data[:data.rindex(b"\n", 0, -1) + 1],
     "the manifest lists 3 records but 2 follow it"),
    (lambda data: data.replace(b"entry 1", b"entry 9"),
     "the record lines do not match the hash in the manifest"),
    (lambda data: b"not json\n", ":1: not JSON"),
    (lambda data: data.replace(b'"workpack_bundle":1', b'"workpack_bundle":"1"'),
     ":1: manifest.workpack_bundle: Input should be a valid integer"),
])
def test_a_damaged_bundle_is_refused_in_one_line(bundle: Path, damage: Any,
                                                  message: str) -> None:
    with pytest.raises(BundleError, match=message):
        read_bundle(damage(bundle.read_bytes()), str(bundle))


def test_export_refuses_a_store_that_no_longer_holds_the_last_bundles_head(
        tmp_path: Path, bundle: Path, plant: str, crew: dict[str, Path], capsys) -> None:
    """A vessel store rebuilt since the last export would ship a fork: refused at source."""
    rebuilt = tmp_path / "rebuilt.sqlite"
    with open_store(rebuilt, plant=plant) as store:
        add(store, 4, note=" (again)")
    code, out, err = run(["sync", "export", "--db", str(rebuilt), "--out",
                          str(tmp_path / "b2.wpb"), "--sign-as", str(crew["key"]),
                          "--crew", str(crew["register"]), "--since", str(bundle)], capsys)
    assert code == 2 and err.startswith("nothing exported: ")
    assert "no longer ends in the anchor" in err
    assert not (tmp_path / "b2.wpb").exists()


def test_the_same_export_gives_the_same_bytes(tmp_path: Path, bundle: Path,
                                              crew: dict[str, Path], capsys) -> None:
    """Ed25519 is deterministic, the records are as stored, the time is the one given."""
    export(tmp_path / "vessel.sqlite", tmp_path / "again.wpb", crew, capsys)
    assert (tmp_path / "again.wpb").read_bytes() == bundle.read_bytes()


def test_export_since_an_anchor_ships_the_records_after_it(
        tmp_path: Path, office: str, plant: str, crew: dict[str, Path], capsys) -> None:
    """The office took records 1-3 in the first bundle; the vessel anchored its chain
    then (workpack anchor): the next export, since that anchor, continues the chain."""
    vessel = tmp_path / "vessel.sqlite"
    with open_store(vessel, plant=plant) as store:
        add(store, 3)
    export(vessel, tmp_path / "b1.wpb", crew, capsys)
    code, _, err = run(["anchor", "--db", str(vessel), "--crew", str(crew["register"]),
                        "--key", str(crew["key"]), "--at", "2026-12-20T12:00Z",
                        "--out", str(tmp_path / "anchor.json")], capsys)
    assert (code, err) == (0, "")
    with open_store(vessel, plant=plant) as store:
        add(store, 2, start=3)
    said = export(vessel, tmp_path / "b2.wpb", crew, capsys, since=tmp_path / "anchor.json")
    assert f": records 4 to 5 of plant {plant} written" in said
    assert take(office, crew, capsys, tmp_path / "b1.wpb", tmp_path / "b2.wpb")[0] == 0
    assert rows(office, plant) == rows(str(vessel), plant)
    # A head typed from the day sheet does as well as the file.
    with open_store(vessel, plant=plant) as store:
        head = store.get(3).chain_sha256
    export(vessel, tmp_path / "b2-typed.wpb", crew, capsys, since=Path(f"3:{head}"))
    assert read_bundle((tmp_path / "b2-typed.wpb").read_bytes(), "b").rows == \
        read_bundle((tmp_path / "b2.wpb").read_bytes(), "b").rows


def test_export_since_an_anchor_the_store_no_longer_holds_is_refused(
        tmp_path: Path, plant: str, crew: dict[str, Path], capsys) -> None:
    vessel = tmp_path / "vessel.sqlite"
    with open_store(vessel, plant=plant) as store:
        add(store, 3)
    assert run(["anchor", "--db", str(vessel), "--crew", str(crew["register"]), "--key",
                str(crew["key"]), "--out", str(tmp_path / "anchor.json")], capsys)[0] == 0
    rebuilt = tmp_path / "rebuilt.sqlite"
    with open_store(rebuilt, plant=plant) as store:
        add(store, 1)
        add(store, 3, start=1, note=" (rewritten)")
    code, out, err = run(["sync", "export", "--db", str(rebuilt), "--out",
                          str(tmp_path / "b.wpb"), "--sign-as", str(crew["key"]), "--crew",
                          str(crew["register"]), "--since", str(tmp_path / "anchor.json")],
                         capsys)
    assert (code, out) == (2, "")
    assert err.startswith("nothing exported: ")
    assert "record 2 differs from the anchor taken" in err
    assert not (tmp_path / "b.wpb").exists()


def test_a_crew_role_imports_its_own_plant_only_and_an_auditor_none(
        tmp_path: Path, pg_server: Any, pg_fresh_url: str, crew: dict[str, Path],
        capsys) -> None:
    """The office may run imports as each vessel's crew role: row-level security keeps a
    bundle of one plant out of another's role, and an auditor role writes nothing."""
    from workpack.store import set_up_store

    for role in ("crew_linnet", "office_reader"):
        pg_server.create_login_role(role)
    set_up_store(pg_fresh_url, crew=[("crew_linnet", "MV Linnet")], auditors=["office_reader"])
    for name in ("MV Linnet", "MV Petrel"):
        vessel = tmp_path / f"{name}.sqlite"
        with open_store(vessel, plant=name) as store:
            add(store, 2)
        export(vessel, tmp_path / f"{name}.wpb", crew, capsys)

    def as_role(role: str) -> str:
        return pg_fresh_url.replace("workpack_admin@", f"{role}@", 1)

    code, out, err = take(as_role("crew_linnet"), crew, capsys, tmp_path / "MV Linnet.wpb",
                          tmp_path / "MV Petrel.wpb")
    assert code == 2
    assert out.startswith(f"{tmp_path / 'MV Linnet.wpb'}: plant MV Linnet: records 1 to 2")
    assert err.startswith(f"{tmp_path / 'MV Petrel.wpb'}: refused, nothing imported from it:")
    assert "this database role may not write the records of plant 'MV Petrel'" in err
    code, out, err = take(as_role("office_reader"), crew, capsys, tmp_path / "MV Petrel.wpb")
    assert code == 2 and "may not" in err
    assert rows(pg_fresh_url, "MV Petrel") == []
    assert len(rows(pg_fresh_url, "MV Linnet")) == 2


def rebuilt(data: bytes, change: Any) -> bytes:
    """The bundle with ``change(records)`` applied and its record hash made to match, as a
    careful forger would (the signature is left as it was)."""
    lines = data.split(b"\n")[:-1]
    records = [json.loads(line) for line in lines[1:]]
    change(records)
    body = b"".join(json.dumps(r, sort_keys=True, separators=(",", ":")).encode() + b"\n"
                    for r in records)
    header = json.loads(lines[0])
    header["manifest"]["records_sha256"] = hashlib.sha256(body).hexdigest()
    header["manifest"]["count"] = len(records)
    return json.dumps(header, separators=(",", ":")).encode() + b"\n" + body


@pytest.mark.parametrize(("change", "message"), [
    (lambda rs: rs[1].update(recorded_by="someone else"),
     ":3: record 2: a field no longer matches its chain hash"),
    (lambda rs: rs[1].update(results_json=rs[1]["results_json"].replace("entry", "Entry")),
     ":3: record 2: its results no longer match their SHA-256"),
    (lambda rs: rs.__setitem__(slice(1, 3), [rs[2], rs[1]]),
     ":3: record 3: expected record 2 here"),
    (lambda rs: rs.pop(), "manifest.through: the records end at record 2, not at the head"),
    (lambda rs: rs[0].update(prev_sha256="0" * 64), ":2: record 1: does not chain to record 0"),
    (lambda rs: rs[0].update(sequence="1"), ":2: record.sequence: Input should be a valid "
                                            "integer"),
])
def test_a_bundle_that_does_not_hold_together_is_refused_by_line(
        bundle: Path, change: Any, message: str) -> None:
    with pytest.raises(BundleError, match=message.replace("(", r"\(")):
        read_bundle(rebuilt(bundle.read_bytes(), change), "b.wpb")


def test_signed_records_judged_on_board_stand_the_same_ashore(
        tmp_path: Path, office: str, demo_plan: Path, monkeypatch: pytest.MonkeyPatch,
        request: pytest.FixtureRequest, capsys) -> None:
    """The whole way: the demo windlass job recorded and signed by technician and
    supervisor on board, shipped, imported; the office's verify and audit find the chain
    intact, both signatures valid and the verdict the same when judged again."""
    if office.startswith("postgresql"):  # the demo plant's name: a store of its own
        office = request.getfixturevalue("pg_fresh_url")
    from test_record import filled_sheet, windlass
    from trustdata import PASSPHRASE as TRUST_PASSPHRASE
    from trustdata import key_file, write_crew

    monkeypatch.setenv("WORKPACK_KEY_PASSPHRASE", TRUST_PASSPHRASE)
    issued = tmp_path / "issued"
    shutil.copytree(demo_plan, issued)
    register = write_crew(tmp_path / "crew")
    quayle, tamsin = key_file(tmp_path, "quayle"), key_file(tmp_path, "penhallow")
    package = windlass(issued)
    vessel = tmp_path / "vessel.sqlite"
    code, _, err = run(["record", str(package), str(filled_sheet(package, tmp_path)), "--db",
                        str(vessel), "--at", "2026-12-02T16:00Z", "--crew", str(register),
                        "--sign", f"technician={quayle}", "--sign", f"supervisor={tamsin}"],
                       capsys)
    assert code == 0, err
    code, _, err = run(["sync", "export", "--db", str(vessel), "--out",
                        str(tmp_path / "b.wpb"), "--sign-as", str(quayle), "--crew",
                        str(register)], capsys)
    assert code == 0, err
    code, out, err = run(["sync", "import", str(tmp_path / "b.wpb"), "--db", office, "--crew",
                          str(register)], capsys)
    assert (code, err) == (0, ""), err
    plant = "MV Skerry Lantern"
    where = ["--db", office, "--plant", plant, "--crew", str(register)]
    code, out, err = run(["verify", *where, "--packages", str(issued)], capsys)
    assert code == 0, out + err
    assert "OK, 1 record" in out
    assert "all signed by the technician and the supervisor with valid keys" in out
    assert "verdicts judged again from results and packages: 1 record, all agree" in out
    code, out, err = run(["audit", *where, "--packages", str(issued), "--as-of",
                          "2026-12-03", "--out", str(tmp_path / "audit")], capsys)
    assert code == 0, out + err
    assert "RECORDS INTACT" in (tmp_path / "audit" / "audit.html").read_text(encoding="utf-8")


def test_a_store_made_before_stores_knew_their_plant_ships_under_a_name_given(
        tmp_path: Path, office: str, crew: dict[str, Path], capsys) -> None:
    """A schema-1 vessel file (its chain begun from the unnamed genesis) is exported with
    --plant-name; PostgreSQL keeps such a chain as begun, and an SQLite file made for the
    named plant refuses it as another chain."""
    old = tmp_path / "old.sqlite"
    shutil.copy(Path(__file__).parent / "fixtures" / "store-v1.sqlite", old)
    code, _, err = run(["sync", "export", "--db", str(old), "--out", str(tmp_path / "o.wpb"),
                        "--sign-as", str(crew["key"]), "--crew", str(crew["register"])],
                       capsys)
    assert code == 2 and "does not know its plant's name; give it with --plant-name" in err
    plant = f"MV Old Store {next(_plants):04d}"
    code, out, err = run(["sync", "export", "--db", str(old), "--out", str(tmp_path / "o.wpb"),
                          "--sign-as", str(crew["key"]), "--crew", str(crew["register"]),
                          "--plant-name", plant], capsys)
    assert (code, err) == (0, "")
    code, out, err = take(office, crew, capsys, tmp_path / "o.wpb")
    if office.startswith("postgresql"):
        assert (code, err) == (0, "")
        assert rows(office, plant) == rows(str(old), "")
        verified(office, plant)
    else:
        assert code == 2 and "fork at record 1: the records brought here begin a " \
            "different chain" in err


def test_plant_name_cannot_rename_a_named_store(tmp_path: Path, plant: str,
                                                crew: dict[str, Path], capsys) -> None:
    with open_store(tmp_path / "v.sqlite", plant=plant) as store:
        add(store, 1)
    code, _, err = run(["sync", "export", "--db", str(tmp_path / "v.sqlite"), "--out",
                        str(tmp_path / "b.wpb"), "--sign-as", str(crew["key"]), "--crew",
                        str(crew["register"]), "--plant-name", "MV Other"], capsys)
    assert code == 2 and f"holds the records of plant {plant!r}" in err


def test_sync_json_reports_follow_their_shipped_schemas(
        tmp_path: Path, plant: str, crew: dict[str, Path], capsys) -> None:
    from test_cli_conventions import printed_json, valid

    vessel = tmp_path / "vessel.sqlite"
    with open_store(vessel, plant=plant) as store:
        add(store, 3)
    base = ["--sign-as", str(crew["key"]), "--crew", str(crew["register"]), "--json"]
    first = valid("sync export", printed_json(["sync", "export", "--db", str(vessel),
                                               "--out", str(tmp_path / "b1.wpb"), *base],
                                              capsys))
    assert (first["after"], first["through"], first["records"], first["signed_by"]) == \
        (0, 3, 3, "P-7")
    with open_store(vessel, plant=plant) as store:
        add(store, 1, start=3)
    second = valid("sync export", printed_json(
        ["sync", "export", "--db", str(vessel), "--out", str(tmp_path / "b2.wpb"),
         "--since", str(tmp_path / "b1.wpb"), *base], capsys))
    assert (second["after"], second["through"], second["records"]) == (3, 4, 1)
    office = str(tmp_path / "office.sqlite")
    report = valid("sync import", printed_json(
        ["sync", "import", str(tmp_path / "b2.wpb"), str(tmp_path / "missing.wpb"), "--db",
         office, "--crew", str(crew["register"]), "--json"], capsys, status=2))
    assert not report["ok"]
    assert [(b["file"], b["imported"]) for b in report["bundles"]] == [
        (str(tmp_path / "missing.wpb"), False), (str(tmp_path / "b2.wpb"), False)]
    assert "gap" in report["bundles"][1]["refused"]
    report = valid("sync import", printed_json(
        ["sync", "import", str(tmp_path / "b2.wpb"), str(tmp_path / "b1.wpb"), "--db",
         office, "--crew", str(crew["register"]), "--json"], capsys))
    assert report["ok"] and [b["added"] for b in report["bundles"]] == [3, 1]
    assert report["bundles"][1]["head"]["sequence"] == 4
