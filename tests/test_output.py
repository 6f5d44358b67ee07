"""Output folders: a plan replaces only its own day's set, never an issued package, and a
set is swapped whole even when the writer is killed in the middle of it."""

from __future__ import annotations

import datetime as dt
import json
import shutil
import signal
import subprocess
import sys
import threading
import time
from pathlib import Path

import pytest
from conftest import ROOT

from workpack import output
from workpack.cli import main
from workpack.loading import load_package
from workpack.store import open_store

VESSEL = str(ROOT / "plants" / "demo-vessel.yaml")
SITE = str(ROOT / "plants" / "demo-site.yaml")
FINDINGS = str(ROOT / "plants" / "demo-vessel-findings.yaml")


def contents(folder: Path) -> dict[str, bytes]:
    return {p.name: p.read_bytes() for p in sorted(folder.iterdir()) if p.is_file()}


def plan(out: Path, *options: str, plant: str = VESSEL, findings: str = FINDINGS) -> int:
    return main(["plan", plant, findings, "--out", str(out), "--crew-hours", "40", *options])


@pytest.fixture(scope="module")
def two_days(tmp_path_factory, demo_plan: Path) -> Path:
    out = tmp_path_factory.mktemp("plans") / "out"
    shutil.copytree(demo_plan, out)  # the plan of 2026-12-02, the findings' next day
    assert plan(out, "--date", "2026-12-03") == 0
    return out


def test_a_second_days_plan_keeps_the_first_days_packages(two_days) -> None:
    """Issue 10.1: the second plan deleted all 23 files of the first day."""
    for day in ("20261202", "20261203"):
        names = [p.name for p in two_days.glob(f"WP-SKL-{day}-*")]
        assert len(names) >= 2 and len(names) % 2 == 0, names  # PDF and JSON twin each
    assert (two_days / "day-2026-12-02.pdf").exists()
    assert (two_days / "day-2026-12-03.pdf").exists()


def test_planning_a_day_again_replaces_that_day_only(two_days, tmp_path) -> None:
    out = tmp_path / "out"
    out.mkdir()
    for name, data in contents(two_days).items():
        (out / name).write_bytes(data)
    first_day = {n: b for n, b in contents(out).items() if "20261202" in n or "12-02" in n}
    quiet = tmp_path / "quiet.yaml"
    quiet.write_text("date: 2026-12-02\nfindings: []\n", encoding="utf-8")
    assert plan(out, findings=str(quiet)) == 0  # plans 2026-12-03 again, with less work
    after = contents(out)
    assert {n: b for n, b in after.items() if n in first_day} == first_day
    assert len([n for n in after if "20261203" in n]) < len(
        [n for n in contents(two_days) if "20261203" in n])


def test_another_plants_set_for_the_same_day_is_never_replaced(two_days, tmp_path,
                                                                capsys) -> None:
    before = contents(two_days)
    site_findings = tmp_path / "site.yaml"
    site_findings.write_text("date: 2026-12-01\nfindings: []\n", encoding="utf-8")
    capsys.readouterr()
    assert plan(two_days, "--date", "2026-12-02", plant=SITE, findings=str(site_findings)) == 2
    err = capsys.readouterr().err
    assert err.startswith(f"{two_days}: holds the 2026-12-02 packages of ") and (
        "into another folder" in err)
    assert contents(two_days) == before


def test_an_issued_package_with_a_record_is_never_replaced(demo_plan, tmp_path,
                                                           capsys) -> None:
    out = tmp_path / "out"
    shutil.copytree(demo_plan, out)  # as `plan(out)` leaves it
    twin = sorted(out.glob("WP-*.json"))[0]
    package, digest = load_package(twin)
    db = tmp_path / "records.sqlite"
    with open_store(db) as store:
        store.append(package_id=package.id, package_sha256=digest,
                     results={"results": {}}, recorded_by="x",
                     recorded_at=dt.datetime(2026, 12, 2, 16, tzinfo=dt.UTC), verdict="passed")
    before = contents(out)
    capsys.readouterr()
    assert plan(out, "--db", str(db), "--crew-hours", "2") == 2
    err = capsys.readouterr().err
    assert err == (f"{twin}: package {package.id} was issued and has record 1 in {db}; "
                   "planning 2026-12-02 again would replace it. Plan into another folder\n")
    assert contents(out) == before


# --- the swap itself, killed at each stage ------------------------------------------------------

WRITER = """
import os, sys, time
from pathlib import Path
import workpack.output as output

folder, stage, after = Path(sys.argv[1]), sys.argv[2], int(sys.argv[3])
count = 0

def pause():
    global count
    count += 1
    if count == after:
        print("ready", flush=True)
        time.sleep(60)

real_replace, real_fsync = os.replace, os.fsync
def replace(src, dst):
    real_replace(src, dst)
    if stage == "swap":
        pause()
def fsync(fd):
    real_fsync(fd)
    if stage == "staging":
        pause()
os.replace, os.fsync = replace, fsync
files = {f"WP-20261202-{i:02}.json": f"new {i}".encode() for i in range(1, 6)}
output.write_all(folder, files, replaces=lambda f: [p.name for p in f.iterdir()
                                                   if p.name.startswith("WP-")])
print("finished", flush=True)
"""

OLD = {f"WP-20261202-{i:02}.json": f"old {i}".encode() for i in range(1, 8)}
NEW = {f"WP-20261202-{i:02}.json": f"new {i}".encode() for i in range(1, 6)}


def killed_writer(folder: Path, stage: str, after: int) -> None:
    """Run a writer in a child process and kill -9 it at the ``after``-th step of ``stage``."""
    child = subprocess.Popen([sys.executable, "-c", WRITER, str(folder), stage, str(after)],
                             stdout=subprocess.PIPE, text=True)
    assert child.stdout is not None
    assert child.stdout.readline().strip() == "ready"
    child.send_signal(signal.SIGKILL)
    child.wait(timeout=30)
    assert child.returncode == -signal.SIGKILL


def old_folder(tmp_path: Path) -> Path:
    folder = tmp_path / "out"
    folder.mkdir()
    for name, data in OLD.items():
        (folder / name).write_bytes(data)
    (folder / "notes.txt").write_bytes(b"mine")
    return folder


def seen(folder: Path) -> dict[str, bytes]:
    with output.reading(folder):
        return {n: b for n, b in contents(folder).items() if n.startswith("WP-")}


@pytest.mark.parametrize("after", [1, 2, 4, 6])
def test_killed_after_the_commit_the_next_reader_sees_the_whole_new_set(tmp_path,
                                                                        after) -> None:
    """The journal is the first replace; files move after it. Any kill from then on:
    the new set, all of it (the two old packages it drops are gone too)."""
    folder = old_folder(tmp_path)
    killed_writer(folder, "swap", after)
    assert (folder / output.JOURNAL).exists()
    assert seen(folder) == NEW
    assert not (folder / output.JOURNAL).exists()
    assert not [p for p in folder.iterdir() if p.name.startswith(output.STAGING_PREFIX)]
    assert (folder / "notes.txt").read_bytes() == b"mine"


@pytest.mark.parametrize("after", [1, 3, 5])
def test_killed_while_staging_the_old_set_stands_and_the_staging_folder_goes(tmp_path,
                                                                            after) -> None:
    folder = old_folder(tmp_path)
    killed_writer(folder, "staging", after)
    assert not (folder / output.JOURNAL).exists()
    leftover = [p for p in folder.iterdir() if p.name.startswith(output.STAGING_PREFIX)]
    assert len(leftover) == 1 and leftover[0].is_dir()
    assert seen(folder) == OLD  # the reader ignores the staging folder
    output.write_all(folder, {"other.txt": b"x"})
    assert not [p for p in folder.iterdir() if p.name.startswith(output.STAGING_PREFIX)]
    assert seen(folder) == OLD


def test_a_reader_waits_while_a_set_is_swapped(tmp_path) -> None:
    folder = old_folder(tmp_path)
    order: list[str] = []
    with output._locked(folder, exclusive=True) as locked:
        if not locked:
            pytest.skip("no flock on this platform")

        def read() -> None:
            with output.reading(folder):
                order.append("read")

        reader = threading.Thread(target=read)
        reader.start()
        time.sleep(0.2)
        order.append("swapped")
    reader.join(timeout=10)
    assert order == ["swapped", "read"]


def test_an_unreadable_journal_is_reported_not_guessed(tmp_path, capsys) -> None:
    folder = old_folder(tmp_path)
    (folder / output.JOURNAL).write_text("{not json", encoding="utf-8")
    with pytest.raises(output.OutputError, match="cannot be read"):
        output.write_all(folder, {"x.txt": b"x"})
    assert {n: b for n, b in contents(folder).items() if n.startswith("WP-")} == OLD


def test_the_journal_names_what_it_moves_and_removes(tmp_path, monkeypatch) -> None:
    """What a killed writer leaves is enough to finish: the staged files and the list."""
    folder = old_folder(tmp_path)
    journals: list[dict[str, object]] = []
    real = output._finish

    def spy(target: Path, locked: bool) -> None:
        if (target / output.JOURNAL).exists():
            journals.append(json.loads((target / output.JOURNAL).read_text(encoding="utf-8")))
        real(target, locked)

    monkeypatch.setattr(output, "_finish", spy)
    output.write_all(folder, NEW, replaces=lambda f: [p.name for p in f.iterdir()
                                                      if p.name.startswith("WP-")])
    assert journals[0]["moves"] == sorted(NEW)
    assert journals[0]["removes"] == ["WP-20261202-06.json", "WP-20261202-07.json"]
    assert seen(folder) == NEW
