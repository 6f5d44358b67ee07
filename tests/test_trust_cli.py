"""`workpack verify` and `workpack audit` against a store whose records were rewritten by
someone with write access, on both backends: the demo vessel's windlass package recorded
through the command line, then its verdict rewritten with the whole chain rehashed and
the triggers put back."""

from __future__ import annotations

import datetime as dt
import json
import shutil
from pathlib import Path
from typing import Any

import pytest
from test_record import filled_sheet, windlass
from trustdata import KEYS, PASSPHRASE, key_file, rewrite_postgres, rewrite_sqlite, write_crew

from workpack.cli import main
from workpack.record_signatures import record_content, sign_record
from workpack.store import open_store

PLANT = "MV Skerry Lantern"


@pytest.fixture(params=["sqlite", "postgresql"])
def store(request: pytest.FixtureRequest, tmp_path: Path) -> dict[str, Any]:
    db = (str(tmp_path / "records.sqlite") if request.param == "sqlite"
          else request.getfixturevalue("pg_fresh_url"))
    return {"db": db, "kind": request.param}


@pytest.fixture
def issued(demo_plan: Path, tmp_path: Path) -> Path:
    """A copy of the demo plan's packages (the shared folder is only read)."""
    folder = tmp_path / "issued"
    shutil.copytree(demo_plan, folder)
    return folder


def run(argv: list[str], capsys: pytest.CaptureFixture[str]) -> tuple[int, list[str], str]:
    code = main(argv)
    captured = capsys.readouterr()
    return code, captured.out.splitlines(), captured.err


def rewrite(store: dict[str, Any], sequence: int, edit: dict[str, Any]) -> None:
    if store["kind"] == "sqlite":
        rewrite_sqlite(Path(store["db"]), PLANT, sequence, edit)
    else:
        rewrite_postgres(store["db"], PLANT, sequence, edit)


def test_a_failed_job_rewritten_as_passed_is_caught_by_verify_and_audit(
        store: dict[str, Any], issued: Path, tmp_path: Path, capsys) -> None:
    package = windlass(issued)
    sheet = filled_sheet(package, tmp_path, dry_out_mohm="0.5 MΩ")  # below its minimum
    code, out, err = run(["record", str(package), str(sheet), "--db", store["db"],
                          "--at", "2026-12-02T16:00Z"], capsys)
    assert code == 1, err  # recorded, and found wanting
    assert any("FAILED" in line for line in out), out
    where = ["--db", store["db"], "--plant", PLANT]
    code, out, _ = run(["verify", *where, "--packages", str(issued)], capsys)
    assert code == 0 and out[1].endswith("verdicts judged again from results and packages: "
                                         "1 record, all agree")

    rewrite(store, 1, {"verdict": "passed"})
    code, out, _ = run(["verify", *where], capsys)
    assert code == 0  # the chain alone verifies: it was rehashed whole
    code, out, _ = run(["verify", *where, "--packages", str(issued)], capsys)
    assert code == 1
    assert out[1].endswith("1 record, 1 disagree with what is stored")
    assert "record 1 (WP-" in out[2] and "stored verdicts 'passed' (chain) and 'failed' " \
        "(evaluation), but its results judged against its package give 'failed'" in out[2]

    code, out, _ = run(["audit", *where, "--packages", str(issued), "--as-of", "2026-12-03",
                        "--out", str(tmp_path / "audit")], capsys)
    assert code == 1
    assert "record 1 (WP-" in out[1]
    html = (tmp_path / "audit" / "audit.html").read_text(encoding="utf-8")
    assert "VERDICTS DO NOT STAND" in html and "RECORDS INTACT" not in html


# --- signatures bound to people (issue 13.2) ---------------------------------------------


@pytest.fixture
def signing(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> dict[str, Path]:
    monkeypatch.setenv("WORKPACK_KEY_PASSPHRASE", PASSPHRASE)
    return {"crew": write_crew(tmp_path), **{short: key_file(tmp_path, short)
                                            for short in ("quayle", "penhallow", "stranger")}}


def record(store: dict[str, Any], package: Path, sheet: Path, at: str, capsys,
           *more: str) -> tuple[int, list[str], str]:
    return run(["record", str(package), str(sheet), "--db", store["db"], "--at", at, *more],
               capsys)


def signed_by(signing: dict[str, Path], technician: str = "quayle",
              supervisor: str = "penhallow") -> list[str]:
    return ["--crew", str(signing["crew"]), "--sign", f"technician={signing[technician]}",
            "--sign", f"supervisor={signing[supervisor]}"]


def test_a_record_signed_by_both_verifies_against_the_register(
        store: dict[str, Any], issued: Path, tmp_path: Path, signing, capsys) -> None:
    package = windlass(issued)
    sheet = filled_sheet(package, tmp_path)
    code, _, err = record(store, package, sheet, "2026-12-02T16:00Z", capsys,
                          *signed_by(signing))
    assert code == 0, err
    with open_store(store["db"], plant=PLANT) as opened:
        signatures = json.loads(opened.get(1).results_json)["signatures"]
    assert [(s["signed_as"], s["person"], s["key"], s["signed_at"]) for s in signatures] == [
        ("technician", "LCS-0107", "LCS-0107-K1", "2026-12-02T16:00:00Z"),
        ("supervisor", "LCS-0098", "LCS-0098-K1", "2026-12-02T16:00:00Z")]
    code, out, _ = run(["verify", "--db", store["db"], "--plant", PLANT, "--crew",
                        str(signing["crew"])], capsys)
    assert code == 0, out
    assert out[1].endswith("1 record, all signed by the technician and the supervisor with "
                           "valid keys")
    code, out, _ = run(["audit", "--db", store["db"], "--plant", PLANT, "--packages",
                        str(issued), "--as-of", "2026-12-03", "--crew", str(signing["crew"]),
                        "--out", str(tmp_path / "audit")], capsys)
    assert code == 0, out
    html = (tmp_path / "audit" / "audit.html").read_text(encoding="utf-8")
    assert "RECORDS INTACT" in html and "all signed by the technician" in html


@pytest.mark.parametrize(("who", "words"), [
    ({"technician": "stranger"}, "this key is not in the crew register"),
    ({"supervisor": "quayle", "technician": "penhallow"},
     "the key is R. Tamsin's (LCS-0098), but the results name S. Quayle (LCS-0107) as "
     "technician"),
])
def test_a_record_is_not_signed_with_a_key_outside_the_register_or_anothers(
        store: dict[str, Any], issued: Path, tmp_path: Path, signing, capsys,
        who: dict[str, str], words: str) -> None:
    package = windlass(issued)
    sheet = filled_sheet(package, tmp_path)
    capsys.readouterr()
    code, out, err = record(store, package, sheet, "2026-12-02T16:00Z", capsys,
                            *signed_by(signing, **who))
    assert code == 2 and out == [] and err.count("\n") == 1
    assert words in err
    if store["kind"] == "sqlite":
        assert not Path(store["db"]).exists()  # refused before the store was touched


def test_a_revoked_key_signs_nothing_after_its_revocation(
        store: dict[str, Any], issued: Path, tmp_path: Path, signing, capsys) -> None:
    package = windlass(issued)
    revoked = write_crew(tmp_path / "later", revoked={"penhallow": "2026-11-01T00:00:00Z"})
    code, _, err = record(store, package, filled_sheet(package, tmp_path),
                          "2026-12-02T16:00Z", capsys, "--crew", str(revoked), "--sign",
                          f"technician={signing['quayle']}", "--sign",
                          f"supervisor={signing['penhallow']}")
    assert code == 2
    assert "key LCS-0098-K1 of R. Tamsin (LCS-0098) was revoked at 2026-11-01T00:00:00Z" in err


def test_verify_names_unsigned_revoked_unknown_and_copied_signatures(
        store: dict[str, Any], issued: Path, tmp_path: Path, signing, capsys) -> None:
    package = windlass(issued)
    sheet = filled_sheet(package, tmp_path)
    assert record(store, package, sheet, "2026-12-02T16:00Z", capsys,
                  *signed_by(signing))[0] == 0                                    # 1: good
    assert record(store, package, sheet, "2026-12-02T17:00Z", capsys,
                  "--supersedes", "1")[0] == 0                                    # 2: unsigned
    with open_store(store["db"], plant=PLANT) as opened:
        first = opened.get(1)
        copied = json.loads(first.results_json)  # 3: record 1's signatures, pasted
        opened.append(package_id=first.package_id, package_sha256=first.package_sha256,
                      results=copied, recorded_by=first.recorded_by,
                      recorded_at=first.recorded_at + dt.timedelta(hours=2),
                      verdict=first.verdict, supersedes=2)
        # 4: signed by a key the register never held, under a name it knows
        unsigned = {k: v for k, v in copied.items() if k != "signatures"}
        at = first.recorded_at + dt.timedelta(hours=3)
        content = record_content(package_id=first.package_id,
                                 package_sha256=first.package_sha256,
                                 recorded_by=first.recorded_by, recorded_at=at, supersedes=3,
                                 verdict=first.verdict, payload=unsigned)
        forged = sign_record(content, [("technician", KEYS["stranger"], "LCS-0107",
                                        "LCS-0107-K9"),
                                       ("supervisor", KEYS["penhallow"], "LCS-0098",
                                        "LCS-0098-K1")], at)
        opened.append(package_id=first.package_id, package_sha256=first.package_sha256,
                      results={**unsigned, "signatures": [s.model_dump(mode="json")
                                                          for s in forged]},
                      recorded_by=first.recorded_by, recorded_at=at, verdict=first.verdict,
                      supersedes=3)
    # the technician's key found lost before record 1 was made: revoked from then on
    later = write_crew(tmp_path / "later", revoked={"quayle": "2026-12-02T12:00:00Z"})
    code, out, _ = run(["verify", "--db", store["db"], "--plant", PLANT, "--crew",
                        str(later)], capsys)
    assert code == 1
    assert out[0].endswith("OK, 4 records, chain intact to " + out[0].rsplit(" ", 1)[1])
    assert out[1].endswith("4 records, 4 refused (1 bad signature, 2 revoked, 1 unknown key, "
                           "1 unsigned)")
    assert "record 1 (WP-" in out[2] and "technician: revoked: key LCS-0107-K1 of S. Quayle " \
        "(LCS-0107) was revoked at 2026-12-02T12:00:00Z" in out[2]
    assert out[3].endswith("unsigned (no technician's or supervisor's signature)")
    assert "record 3" in out[4] and "bad signature" in out[4]
    assert "record 4" in out[5] and "technician: unknown key: no key 'LCS-0107-K9'" in out[5]


def test_a_signed_record_rewritten_with_the_whole_chain_loses_its_signatures(
        store: dict[str, Any], issued: Path, tmp_path: Path, signing, capsys) -> None:
    """The rewriter can rehash the chain but cannot sign as the crew: the verdict edited
    breaks both signatures, the verdict judged again disagrees."""
    package = windlass(issued)
    sheet = filled_sheet(package, tmp_path, dry_out_mohm="0.5 MΩ")
    assert record(store, package, sheet, "2026-12-02T16:00Z", capsys,
                  *signed_by(signing))[0] == 1  # recorded, and found wanting
    rewrite(store, 1, {"verdict": "passed"})
    code, out, _ = run(["verify", "--db", store["db"], "--plant", PLANT, "--crew",
                        str(signing["crew"]), "--packages", str(issued)], capsys)
    assert code == 1
    assert "OK, 1 record" in out[0]
    assert out[1].endswith("1 record, 1 disagree with what is stored")
    assert any(line.endswith("1 record, 1 refused (1 bad signature)") for line in out), out
    assert any("technician: bad signature" in line and "supervisor: bad signature" in line
               for line in out), out


@pytest.mark.parametrize(("argv", "words"), [
    (["--sign", "boss=x.key"], "--sign boss=x.key: 'boss': a record is signed as technician "
                               "or supervisor"),
    (["--sign", "technician"], "--sign technician: 'technician': expected ROLE=KEYFILE"),
    (["--sign", "technician=x.key"], "--sign: give --crew, the register holding the signers' "
                                     "keys"),
])
def test_signing_options_are_refused_in_one_line(issued: Path, tmp_path: Path, capsys,
                                                 argv: list[str], words: str) -> None:
    package = windlass(issued)
    sheet = filled_sheet(package, tmp_path)
    capsys.readouterr()
    db = tmp_path / "records.sqlite"
    code, out, err = run(["record", str(package), str(sheet), "--db", str(db), *argv], capsys)
    assert (code, out) == (2, []) and err.count("\n") == 1 and words in err, err
    assert not db.exists()


def test_a_typed_head_needs_the_plant_in_an_office_store(pg_fresh_url: str, capsys) -> None:
    code, _, err = run(["verify", "--db", pg_fresh_url, "--anchor", "3:" + "a" * 64], capsys)
    assert code == 2 and "does not say its plant; name it with --plant" in err
