"""`workpack verify` and `workpack audit` against a store whose records were rewritten by
someone with write access, on both backends: the demo vessel's windlass package recorded
through the command line, then its verdict rewritten with the whole chain rehashed and
the triggers put back."""

from __future__ import annotations

import shutil
from pathlib import Path
from typing import Any

import pytest
from test_record import filled_sheet, windlass
from trustdata import rewrite_postgres, rewrite_sqlite

from workpack.cli import main

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
    assert code == 0, err
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
