"""`workpack anchor` and `workpack verify --anchor` on both store backends: a chain
rewritten whole with recomputed hashes (and its triggers put back) passes the chain's own
check and is caught by an anchor taken before, naming the first record changed."""

from __future__ import annotations

import datetime as dt
import itertools
import json
from pathlib import Path
from typing import Any

import pytest
from trustdata import PASSPHRASE, key_file, rewrite_postgres, rewrite_sqlite, write_crew

from workpack.cli import main
from workpack.store import open_store

T0 = dt.datetime(2026, 12, 2, 8, 0, tzinfo=dt.UTC)
_plants = itertools.count(1)


@pytest.fixture(params=["sqlite", "postgresql"])
def filled(request: pytest.FixtureRequest, tmp_path: Path,
           monkeypatch: pytest.MonkeyPatch) -> dict[str, Any]:
    """Five records of a plant of this test's own; the store's location and kind."""
    monkeypatch.setenv("WORKPACK_KEY_PASSPHRASE", PASSPHRASE)
    if request.param == "sqlite":
        location = str(tmp_path / "records.sqlite")
    else:
        location = request.getfixturevalue("pg_fresh_url")
    plant = f"MV Anchor Test {next(_plants):03d}"
    with open_store(location, plant=plant) as store:
        for i in range(1, 6):
            store.append(package_id=f"WP-{i}", package_sha256=f"{i:x}" * 64,
                         results={"reading": 1.0e8 + i}, recorded_by="S. Quayle",
                         recorded_at=T0 + dt.timedelta(minutes=i),
                         verdict="failed" if i == 3 else "passed")
    return {"db": location, "plant": plant, "kind": request.param, "folder": tmp_path}


def run(argv: list[str], capsys: pytest.CaptureFixture[str]) -> tuple[int, str, str]:
    code = main(argv)
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def take(filled: dict[str, Any], capsys: pytest.CaptureFixture[str]) -> Path:
    crew = write_crew(filled["folder"])
    out = filled["folder"] / "anchor.json"
    code, said, err = run(["anchor", "--db", filled["db"], "--plant", filled["plant"],
                           "--crew", str(crew), "--key",
                           str(key_file(filled["folder"], "penhallow")),
                           "--at", "2026-12-02T09:00Z", "--out", str(out)], capsys)
    assert code == 0, err
    assert said == f"anchor written to {out}\n"
    return out


def rewrite(filled: dict[str, Any], sequence: int, edit: dict[str, Any]) -> None:
    if filled["kind"] == "sqlite":
        rewrite_sqlite(Path(filled["db"]), filled["plant"], sequence, edit)
    else:
        rewrite_postgres(filled["db"], filled["plant"], sequence, edit)


def verify(filled: dict[str, Any], anchor: str, capsys: pytest.CaptureFixture[str],
           *more: str) -> tuple[int, list[str]]:
    code, out, err = run(["verify", "--db", filled["db"], "--plant", filled["plant"],
                          "--anchor", anchor, *more], capsys)
    assert err == ""
    return code, out.splitlines()


def test_the_anchor_states_the_head_and_is_signed(filled: dict[str, Any], capsys) -> None:
    anchor = json.loads(take(filled, capsys).read_text(encoding="utf-8"))
    with open_store(filled["db"], plant=filled["plant"]) as store:
        head = store.head()
    assert head is not None
    statement = anchor["anchor"]
    assert (statement["plant"], statement["count"], statement["head_sha256"],
            statement["taken_at"]) == (filled["plant"], 5, head.chain_sha256,
                                       "2026-12-02T09:00:00Z")
    assert anchor["signature"]["person"] == "LCS-0098"
    assert anchor["signature"]["signed_as"] == "anchor"


def test_an_untouched_store_holds_its_anchor_and_more_records(filled: dict[str, Any],
                                                              capsys) -> None:
    path = take(filled, capsys)
    with open_store(filled["db"], plant=filled["plant"]) as store:
        store.append(package_id="WP-6", package_sha256="6" * 64, results={}, recorded_by="x",
                     recorded_at=T0 + dt.timedelta(hours=2), verdict="passed")
    code, lines = verify(filled, str(path), capsys, "--crew",
                         str(write_crew(filled["folder"])))
    assert "OK, 6 records" in lines[0]
    assert "signed by R. Tamsin (LCS-0098) as anchor" in lines[1]
    assert lines[2].endswith("its first 5 records are unchanged")
    # --crew checks the records' own signatures too: these were written unsigned
    assert code == 1 and lines[3].endswith("6 records, 6 refused (6 unsigned)")


def test_a_whole_chain_rewrite_passes_the_chain_check_and_fails_the_anchor(
        filled: dict[str, Any], capsys) -> None:
    path = take(filled, capsys)
    rewrite(filled, 3, {"verdict": "passed"})
    with open_store(filled["db"], plant=filled["plant"]) as store:
        alone = store.verify()
    assert alone.ok and alone.guards_intact, alone.message  # the rewrite is clean in itself
    code, lines = verify(filled, str(path), capsys)
    assert code == 1
    assert "OK, 5 records" in lines[0]
    assert "its signature is not checked (give --crew" in lines[1]
    assert "record 3 differs from the anchor taken 2026-12-02T09:00:00Z" in lines[2]
    assert "the store no longer contains that head" in lines[2]


def test_a_head_typed_from_the_day_sheet_catches_the_rewrite(filled: dict[str, Any],
                                                            capsys) -> None:
    with open_store(filled["db"], plant=filled["plant"]) as store:
        head = store.head()
    assert verify(filled, str(head), capsys)[0] == 0
    rewrite(filled, 1, {"verdict": "failed"})
    code, lines = verify(filled, str(head), capsys)
    assert code == 1 and "the store no longer contains the anchor 5:" in lines[1]


def test_an_edited_anchor_is_refused_by_its_signature(filled: dict[str, Any], capsys) -> None:
    path = take(filled, capsys)
    rewrite(filled, 3, {"verdict": "passed"})
    with open_store(filled["db"], plant=filled["plant"]) as store:
        rewritten = [r.chain_sha256 for r in store.records()]
    data = json.loads(path.read_text(encoding="utf-8"))  # the tamperer fixes the anchor too
    data["anchor"]["head_sha256"] = rewritten[-1]
    data["anchor"]["trail"] = [h[:16] for h in rewritten]
    path.write_text(json.dumps(data), encoding="utf-8")
    code, lines = verify(filled, str(path), capsys, "--crew", str(write_crew(filled["folder"])))
    assert code == 1
    assert "its signature is refused: the signature of R. Tamsin (LCS-0098)" in lines[1]


def test_a_broken_chain_is_not_anchored_and_a_bad_anchor_file_is_one_line(
        filled: dict[str, Any], capsys) -> None:
    bad = filled["folder"] / "bad.json"
    bad.write_text('{"anchor": {"workpack_anchor": 1}, "signature": {}}\n', encoding="utf-8")
    code, out, err = run(["verify", "--db", filled["db"], "--plant", filled["plant"],
                          "--anchor", str(bad)], capsys)
    assert code == 2 and out == ""
    assert err.startswith(f"{bad}:1:") and "Traceback" not in err


def test_the_day_sheet_prints_the_stores_head_to_keep(tmp_path: Path, capsys) -> None:
    """Planned with a store, the day sheet carries its count and head, typed back as is."""
    from pypdf import PdfReader

    root = Path(__file__).resolve().parent.parent / "plants"
    db = tmp_path / "records.sqlite"
    with open_store(str(db), plant="MV Skerry Lantern") as store:
        store.append(package_id="WP-20261201-01", package_sha256="1" * 64, results={},
                     recorded_by="S. Quayle", recorded_at=T0, verdict="passed")
        head = store.head()
    assert head is not None
    out = tmp_path / "plan"
    assert main(["plan", str(root / "demo-vessel.yaml"), str(root / "demo-vessel-findings.yaml"),
                 "--out", str(out), "--crew-hours", "40", "--db", str(db)]) == 0
    capsys.readouterr()
    sheet = next(out.glob("day-*.pdf"))
    text = "".join(page.extract_text() for page in PdfReader(sheet).pages)
    flat = "".join(text.split())
    assert "Recordschainanchor" in flat
    assert f"workpackverify--anchor{head}" in flat
    assert verify({"db": str(db), "plant": "MV Skerry Lantern"}, str(head), capsys)[0] == 0


def test_an_anchor_file_chooses_its_plants_chain_in_an_office_store(
        filled: dict[str, Any], capsys) -> None:
    path = take(filled, capsys)
    if filled["kind"] == "postgresql":  # another plant's chain beside it is not read
        with open_store(filled["db"], plant="MV Other") as other:
            other.append(package_id="WP-1", package_sha256="1" * 64, results={},
                         recorded_by="x", recorded_at=T0, verdict="passed")
    code, out, err = run(["verify", "--db", filled["db"], "--anchor", str(path)], capsys)
    assert code == 0 and err == "", err
    assert len(out.splitlines()) == 3 and "OK, 5 records" in out.splitlines()[0]
