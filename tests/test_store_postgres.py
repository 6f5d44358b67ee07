"""What only the PostgreSQL store does: many plants' chains, guards in the database,
roles and row-level security, the one-time set-up, and tampering as a superuser would.

All against a real server the suite starts (tests/pgfixtures.py); each test that touches
the tables gets a database of its own. The interface itself is tested on both backends
in test_store.py. Plants, people and results are invented.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import json
from pathlib import Path
from typing import Any

import psycopg
import pytest
from pgserver import PgServer
from test_record import FINDINGS, VESSEL, filled_sheet, windlass
from test_store_chain import reference_chain_hash

from workpack.cli import main
from workpack.store import (
    GENESIS,
    NewEvent,
    NotAStoreError,
    RecordStore,
    StoreError,
    chain_hash,
    open_store,
    plant_genesis,
    set_up_store,
)

T0 = dt.datetime(2026, 12, 2, 8, 0, tzinfo=dt.UTC)
PKG = "5e" * 32


def add(store: RecordStore, i: int = 0, **fields: Any) -> Any:
    values: dict[str, Any] = {"package_id": f"WP-{i % 3}", "package_sha256": PKG,
                              "results": {"i": i, "S2.R1": {"value_ohm": 1.0e8 + i}},
                              "recorded_by": "F. Moreau",
                              "recorded_at": T0 + dt.timedelta(minutes=i), "verdict": "pass"}
    return store.append(**{**values, **fields})


def as_role(url: str, role: str) -> str:
    """The same database, connected as another login role (the test server trusts local)."""
    return url.replace("workpack_admin@", f"{role}@", 1)


def sql(url: str, *statements: str, params: tuple = ()) -> list[tuple]:
    with psycopg.connect(url, autocommit=True) as conn:
        rows: list[tuple] = []
        for statement in statements:
            cursor = conn.execute(statement.encode(), params or None)
            if cursor.description is not None:
                rows = cursor.fetchall()
        return rows


# --- one chain per plant ---------------------------------------------------------------


def test_each_plant_has_its_own_chain_numbered_from_one(pg_fresh_url: str) -> None:
    """Appends to four plants interleaved: each numbered 1..n, each verifying on its own."""
    plants = ["MV Aster", "MV Birch", "Quarry C", "Plant D"]
    stores = {plant: open_store(pg_fresh_url, plant=plant) for plant in plants}
    try:
        for i in range(20):
            add(stores[plants[i % 4]], i)
        for plant, store in stores.items():
            assert [r.sequence for r in store.records()] == [1, 2, 3, 4, 5]
            assert {r.plant for r in store.records()} == {plant}
            assert store.get(1).recorded_at == T0 + dt.timedelta(minutes=plants.index(plant))
            result = store.verify()
            assert result.ok and result.count == 5 and result.guards_intact, result.message
            assert result.message.startswith(f"{pg_fresh_url} (plant {plant}): OK, 5 records")
        rows = sql(pg_fresh_url, "SELECT plant, prev_sha256 FROM workpack.records "
                                 "WHERE sequence = 1 ORDER BY plant")
        assert rows == sorted((plant, plant_genesis(plant)) for plant in plants)
    finally:
        for store in stores.values():
            store.close()


def test_without_a_plant_name_the_only_plant_is_taken_or_one_must_be_named(
        pg_fresh_url: str) -> None:
    """One plant: it is taken. Several: a one-line error listing them. A typo: a suggestion."""
    with open_store(pg_fresh_url) as empty, pytest.raises(StoreError,
                                                          match="holds no records yet"):
        add(empty)
    with open_store(pg_fresh_url, plant="MV Aster") as store:
        add(store)
    with open_store(pg_fresh_url) as store:
        assert store.plant == "MV Aster" and store.verify().count == 1
    with open_store(pg_fresh_url, plant="MV Birch") as store:
        add(store)
    with open_store(pg_fresh_url) as store:
        assert store.plants() == ["MV Aster", "MV Birch"]
        with pytest.raises(StoreError) as caught:
            store.verify()
        assert str(caught.value) == (f"{pg_fresh_url}: the store holds the records of 2 plants "
                                     "(MV Aster, MV Birch); name one")
    with pytest.raises(StoreError, match=r"no records of plant 'MV Astor' in this store \(it "
                                         r"holds MV Aster, MV Birch\) \(did you mean "
                                         r"'MV Aster'"):
        open_store(pg_fresh_url, plant="MV Astor", create=False)


def test_the_database_computes_the_same_chain_hash_as_the_python_code(
        pg_store_url: str) -> None:
    """The insert guard's SQL encoding agrees with _chain and with the reference encoding
    re-implemented from its docstring (test_store_chain.py), on awkward text."""
    cases = [
        (GENESIS, 1, "WP-2026-12-02-01", "a" * 64, "b" * 64, "J. Tern",
         "2026-12-02T09:15:00.000000Z", None, "pass"),
        ("c" * 64, 7, "WP-Ω", "a" * 64, "b" * 64, "Ægir Ø. 🚢", "2026-12-02T09:15:00.000000Z",
         3, "fail"),
        ("d" * 64, 2**40, "", "e" * 64, "f" * 64, "x" * 5000, "t", 2**40 - 1, ""),
    ]
    for case in cases:
        found = sql(pg_store_url, "SELECT workpack.chain_sha256(%s, %s, %s, %s, %s, %s, %s, "
                                  "%s, %s)", params=case)[0][0]
        assert found == chain_hash(*case) == reference_chain_hash(*case)
    for plant in ("MV Skerry Lantern", "Ω-7", "p"):
        assert sql(pg_store_url, "SELECT workpack.plant_genesis(%s)",
                   params=(plant,))[0][0] == plant_genesis(plant)


# --- append-only in the database -------------------------------------------------------


@pytest.mark.parametrize(("statement", "words"), [
    ("UPDATE workpack.records SET verdict = 'fail' WHERE sequence = 2",
     "append-only: UPDATE on records refused"),
    ("DELETE FROM workpack.records WHERE sequence = 3",
     "append-only: DELETE on records refused"),
    ("TRUNCATE workpack.records", "append-only: TRUNCATE on records refused"),
    ("UPDATE workpack.plants SET plant = plant", "append-only: UPDATE on plants refused"),
    ("DELETE FROM workpack.plants", "append-only: DELETE on plants refused"),
    ("TRUNCATE workpack.plants CASCADE", "append-only: TRUNCATE on plants refused"),
])
def test_triggers_refuse_changes_even_to_the_owner(pg_fresh_url: str, statement: str,
                                                   words: str) -> None:
    """UPDATE, DELETE and TRUNCATE are refused by triggers, whoever asks."""
    with open_store(pg_fresh_url, plant="MV Aster") as store:
        for i in range(3):
            add(store, i)
    with pytest.raises(psycopg.errors.RaiseException, match=words):
        sql(pg_fresh_url, statement)
    with open_store(pg_fresh_url, plant="MV Aster") as store:
        assert store.verify().ok and store.verify().count == 3


def _insert(url: str, **changes: Any) -> None:
    """Insert the next record of MV Aster by hand (as the owner), some fields changed."""
    with open_store(url, plant="MV Aster") as store:
        head = store.head()
    assert head is not None
    results_json = '{"i":99}'
    row: dict[str, Any] = {
        "plant": "MV Aster", "sequence": head.sequence + 1, "package_id": "WP-9",
        "package_sha256": PKG, "results_json": results_json,
        "results_sha256": hashlib.sha256(results_json.encode()).hexdigest(),
        "recorded_by": "by hand", "recorded_at": "2026-12-02T09:00:00.000000Z",
        "supersedes": None, "verdict": "pass", "prev_sha256": head.chain_sha256}
    row.update(changes)
    row.setdefault("chain_sha256", chain_hash(
        row["prev_sha256"], row["sequence"], row["package_id"], row["package_sha256"],
        row["results_sha256"], row["recorded_by"], row["recorded_at"], row["supersedes"],
        row["verdict"]))
    sql(url, f"INSERT INTO workpack.records ({', '.join(row)}) VALUES "
             f"({', '.join(['%s'] * len(row))})", params=tuple(row.values()))


@pytest.mark.parametrize(("changes", "words"), [
    ({"sequence": 5}, "only the next record of the chain of plant MV Aster may be inserted "
                      r"\(record 4\)"),
    ({"prev_sha256": GENESIS}, "only the next record of the chain of plant MV Aster"),
    ({"results_json": '{"i":4}'}, "the results of record 4 of plant MV Aster do not match"),
    ({"chain_sha256": "c" * 64}, "record 4 of plant MV Aster does not carry its chain hash"),
])
def test_a_hand_made_row_that_does_not_continue_the_chain_is_refused(
        pg_fresh_url: str, changes: dict, words: str) -> None:
    """The insert guard recomputes the link and both hashes: no bad row can get in."""
    with open_store(pg_fresh_url, plant="MV Aster") as store:
        add(store, 0)
        add(store, 1)
    _insert(pg_fresh_url)  # a correct row made by hand goes in
    with pytest.raises(psycopg.errors.RaiseException, match=words):
        _insert(pg_fresh_url, **changes)
    result = _verify(pg_fresh_url)
    assert result.ok and result.count == 3, result.message


def test_no_role_is_granted_update_delete_or_truncate(pg_server: PgServer,
                                                     pg_fresh_url: str) -> None:
    """Grants, read from the catalogue: select for both roles, insert for the crew only."""
    for role in ("workpack_auditor", "workpack_crew", "public"):
        for table in ("records", "plants"):
            for privilege, crew_has in (("SELECT", True), ("INSERT", True), ("UPDATE", False),
                                        ("DELETE", False), ("TRUNCATE", False)):
                (held,), = sql(pg_fresh_url, "SELECT has_table_privilege(%s, %s, %s)",
                               params=(role, f"workpack.{table}", privilege))
                expected = {"workpack_crew": crew_has,
                            "workpack_auditor": privilege == "SELECT"}.get(role, False)
                assert held is expected, (role, table, privilege)


# --- roles and row-level security ------------------------------------------------------


@pytest.fixture
def fleet(pg_server: PgServer, pg_fresh_url: str) -> str:
    """A store with two plants, a crew role for each, and an auditor role."""
    for role in ("crew_aster", "crew_birch", "office_auditor"):
        pg_server.create_login_role(role)
    done = set_up_store(pg_fresh_url, crew=[("crew_aster", "MV Aster"),
                                            ("crew_birch", "MV Birch")],
                        auditors=["office_auditor"])
    assert done[1:] == ["role office_auditor: reads every plant's records, writes none",
                        "role crew_aster: reads and appends the records of plant MV Aster",
                        "role crew_birch: reads and appends the records of plant MV Birch"]
    return pg_fresh_url


def test_a_crew_appends_and_reads_only_its_own_plant(fleet: str) -> None:
    """crew_aster writes MV Aster; MV Birch is invisible to it and refused for writing."""
    with open_store(as_role(fleet, "crew_birch"), plant="MV Birch") as birch:
        add(birch, 0)
    with open_store(as_role(fleet, "crew_aster"), plant="MV Aster") as aster:
        for i in range(3):
            add(aster, i)
        assert aster.plants() == ["MV Aster"] and aster.verify().ok
    with open_store(as_role(fleet, "crew_aster"), plant="MV Birch") as wrong:
        assert list(wrong.records()) == [] and wrong.head() is None
        with pytest.raises(StoreError) as caught:
            add(wrong, 9)
        assert str(caught.value) == (
            f"{as_role(fleet, 'crew_aster')} (plant MV Birch): this database role may not "
            "write the records of plant 'MV Birch': a crew role writes only the plants it "
            "was set up for")
    with open_store(fleet, plant="MV Birch") as birch:
        assert birch.verify().count == 1  # nothing was added to Birch's chain


def test_a_crew_cannot_change_its_own_records(fleet: str) -> None:
    """Not granted, so refused before any trigger: permission denied."""
    with open_store(as_role(fleet, "crew_aster"), plant="MV Aster") as aster:
        add(aster, 0)
    for statement in ("UPDATE workpack.records SET verdict = 'fail'",
                      "DELETE FROM workpack.records", "TRUNCATE workpack.records",
                      "INSERT INTO workpack.crew_plants VALUES ('crew_aster', 'MV Birch')"):
        with pytest.raises(psycopg.errors.InsufficientPrivilege):
            sql(as_role(fleet, "crew_aster"), statement)


def test_an_auditor_reads_every_plant_and_writes_nothing(fleet: str) -> None:
    """The auditor verifies both chains and is refused an append, with a one-line reason."""
    for role, plant in (("crew_aster", "MV Aster"), ("crew_birch", "MV Birch")):
        with open_store(as_role(fleet, role), plant=plant) as store:
            for i in range(4):
                add(store, i)
    auditor = as_role(fleet, "office_auditor")
    with open_store(auditor) as office:
        assert office.plants() == ["MV Aster", "MV Birch"]
    for plant in ("MV Aster", "MV Birch"):
        with open_store(auditor, plant=plant, create=False) as store:
            result = store.verify()
            assert result.ok and result.count == 4 and result.guards_intact
            with pytest.raises(StoreError, match="this database role may not do that while "
                                                 "appending a record .*an auditor role only "
                                                 "reads"):
                add(store, 5)
    with pytest.raises(psycopg.errors.InsufficientPrivilege):
        sql(auditor, "DELETE FROM workpack.records")


# --- set-up ----------------------------------------------------------------------------


def test_set_up_is_needed_once_and_may_be_run_again(pg_server: PgServer) -> None:
    """A database without the schema is named as such; set-up twice changes nothing."""
    url = pg_server.create_database("wp_setup")
    with pytest.raises(NotAStoreError, match="no workpack records store in this database; "
                                             "set one up once with: workpack store init URL"):
        open_store(url, plant="MV Aster")
    set_up_store(url)
    with open_store(url, plant="MV Aster") as store:
        add(store, 0)
    set_up_store(url)
    with open_store(url, plant="MV Aster") as store:
        assert store.verify().ok and store.verify().guards_intact and store.verify().count == 1


def test_set_up_refuses_a_missing_role_or_a_superuser(pg_server: PgServer,
                                                     pg_fresh_url: str) -> None:
    """Nothing is granted to a role that does not exist, or that no policy would bind."""
    with pytest.raises(StoreError, match="there is no database role 'nobody_here'; create "
                                         "it first"):
        set_up_store(pg_fresh_url, crew=[("nobody_here", "MV Aster")])
    with pytest.raises(StoreError, match="'workpack_admin' is a superuser or bypasses "
                                         "row-level security"):
        set_up_store(pg_fresh_url, auditors=["workpack_admin"])
    assert sql(pg_fresh_url, "SELECT count(*) FROM workpack.crew_plants") == [(0,)]


def test_a_store_of_a_newer_workpack_is_refused(pg_fresh_url: str) -> None:
    """A higher schema version asks for an upgrade instead of misreading."""
    sql(pg_fresh_url, "UPDATE workpack.store_info SET value = '9' "
                      "WHERE key = 'schema_version'")
    with pytest.raises(NotAStoreError, match="set up by a newer workpack .*schema 9"):
        open_store(pg_fresh_url, plant="MV Aster")


# --- tampering as a superuser ------------------------------------------------------------


def _filled(url: str, count: int = 6) -> None:
    with open_store(url, plant="MV Aster") as store:
        for i in range(count):
            add(store, i, supersedes=2 if i == 4 else None, package_id="WP-1" if i in (1, 4)
                else f"WP-{i}")


def _verify(url: str, plant: str = "MV Aster") -> Any:
    with open_store(url, plant=plant) as store:
        return store.verify()


def test_an_edit_with_the_triggers_bypassed_is_named(pg_fresh_url: str) -> None:
    """A superuser's session with triggers off edits a verdict: verify names the record."""
    _filled(pg_fresh_url)
    sql(pg_fresh_url, "SET session_replication_role = replica",
        "UPDATE workpack.records SET verdict = 'fail' WHERE plant = 'MV Aster' "
        "AND sequence = 4")
    result = _verify(pg_fresh_url)
    assert not result.ok and result.first_break is not None
    assert (result.first_break.kind, result.first_break.sequence) == ("altered", 4)
    assert result.message.startswith(f"{pg_fresh_url} (plant MV Aster): record 4 was altered: "
                                     "a stored field no longer matches its chain hash")


def test_a_disabled_or_replaced_guard_is_reported(pg_fresh_url: str) -> None:
    """Triggers switched off, or a guard function replaced by a harmless one, are named."""
    _filled(pg_fresh_url)
    sql(pg_fresh_url, "ALTER TABLE workpack.records DISABLE TRIGGER records_no_change")
    result = _verify(pg_fresh_url)
    assert result.ok and not result.guards_intact
    assert result.message.endswith("the append-only triggers are missing or changed (the "
                                   "file was edited outside workpack)")
    sql(pg_fresh_url, "ALTER TABLE workpack.records ENABLE TRIGGER records_no_change")
    assert _verify(pg_fresh_url).guards_intact
    sql(pg_fresh_url, "CREATE OR REPLACE FUNCTION workpack.refuse_change() RETURNS trigger "
                      "LANGUAGE plpgsql AS $$ BEGIN RETURN NEW; END $$")
    assert not _verify(pg_fresh_url).guards_intact


def test_a_deleted_record_is_named(pg_fresh_url: str) -> None:
    """DELETE with the triggers off leaves a gap; the first missing number is named."""
    _filled(pg_fresh_url)
    sql(pg_fresh_url, "ALTER TABLE workpack.records DISABLE TRIGGER USER",
        "ALTER TABLE workpack.records DROP CONSTRAINT records_plant_supersedes_fkey",
        "DELETE FROM workpack.records WHERE sequence = 2")
    result = _verify(pg_fresh_url)
    assert result.first_break is not None
    assert (result.first_break.kind, result.first_break.sequence) == ("removed", 2)


def test_a_chain_relabelled_as_another_plant_breaks_at_record_one(pg_fresh_url: str) -> None:
    """Moving MV Aster's whole chain to a new plant name fails that plant's genesis."""
    _filled(pg_fresh_url)
    sql(pg_fresh_url, "ALTER TABLE workpack.records DISABLE TRIGGER USER",
        "INSERT INTO workpack.plants VALUES ('MV Cedar', workpack.plant_genesis('MV Cedar'))",
        "ALTER TABLE workpack.records DROP CONSTRAINT records_plant_supersedes_fkey",
        "UPDATE workpack.records SET plant = 'MV Cedar'")
    result = _verify(pg_fresh_url, "MV Cedar")
    assert result.first_break is not None and result.count == 6
    assert (result.first_break.kind, result.first_break.sequence) == ("altered", 1)
    assert "does not chain from its plant's genesis value" in result.message
    assert _verify(pg_fresh_url).count == 0  # and MV Aster's chain is gone


def test_writers_wait_for_their_own_plant_only(pg_fresh_url: str) -> None:
    """With MV Aster's chain lock held elsewhere, MV Birch appends at once and MV Aster
    gives up after its timeout with a one-line reason."""
    with open_store(pg_fresh_url, plant="MV Aster") as aster:
        add(aster, 0)
    with psycopg.connect(pg_fresh_url) as holder:  # a transaction left open
        holder.execute("SELECT pg_advisory_xact_lock(%s::integer, hashtext(%s))",
                       (0x77706B72, "MV Aster"))
        with open_store(pg_fresh_url, plant="MV Birch", busy_timeout_s=0.3) as birch:
            assert add(birch, 1).sequence == 1
        with open_store(pg_fresh_url, plant="MV Aster", busy_timeout_s=0.3) as aster, \
                pytest.raises(StoreError, match=r"\(plant MV Aster\): the plant's chain stayed "
                                                "locked by another writer for 0.3 s while "
                                                "appending a record; try again"):
            add(aster, 2)
        holder.rollback()
    with open_store(pg_fresh_url, plant="MV Aster") as aster:
        assert add(aster, 3).sequence == 2


# --- the command line ------------------------------------------------------------------


@pytest.fixture(scope="module")
def packages(demo_plan: Path) -> Path:
    """The demo vessel's packages, issued as test_record.py issues them (only read here)."""
    return demo_plan


def test_the_commands_work_with_an_office_store(pg_server: PgServer, pg_fresh_url: str,
                                                packages: Path, tmp_path: Path,
                                                capsys: pytest.CaptureFixture[str]) -> None:
    """store init, then record as the vessel's crew role, verify / audit / closeout / plan
    as the office auditor, each plant's chain chosen with --plant (a name or a plant file)."""
    for role in ("crew_skerry", "office_auditor"):
        pg_server.create_login_role(role)
    assert main(["store", "init", pg_fresh_url, "--crew", "crew_skerry=MV Skerry Lantern",
                 "--auditor", "office_auditor"]) == 0
    assert capsys.readouterr().out.splitlines()[1:] == [
        "role office_auditor: reads every plant's records, writes none",
        "role crew_skerry: reads and appends the records of plant MV Skerry Lantern"]
    crew, auditor = as_role(pg_fresh_url, "crew_skerry"), as_role(pg_fresh_url,
                                                                  "office_auditor")
    package = windlass(packages)
    assert main(["record", str(package), str(filled_sheet(package, tmp_path)), "--db", crew,
                 "--at", "2026-12-02T16:00+00:00"]) == 0
    assert capsys.readouterr().out.endswith(
        f"recorded as record 1 in {crew} (plant MV Skerry Lantern)\n")
    with open_store(pg_fresh_url, plant="Quarry Cedar") as quarry:
        add(quarry, 0)
        add(quarry, 1)

    assert main(["verify", "--db", auditor]) == 0
    lines = capsys.readouterr().out.splitlines()
    assert [line.split(": ")[1].rsplit(":", 1)[0] for line in lines] == [
        "OK, 1 record, chain intact to 1", "OK, 2 records, chain intact to 2"]
    assert lines[0].startswith(f"{auditor} (plant MV Skerry Lantern): OK")
    for chosen in ("MV Skerry Lantern", VESSEL):
        assert main(["verify", "--db", auditor, "--plant", chosen]) == 0
        assert capsys.readouterr().out.startswith(f"{auditor} (plant MV Skerry Lantern): OK, "
                                                  "1 record")

    out = tmp_path / "audit"
    assert main(["audit", "--db", auditor, "--plant", "MV Skerry Lantern", "--packages",
                 str(packages), "--as-of", "2026-12-03", "--out", str(out)]) == 0
    assert json.loads(package.read_text(encoding="utf-8"))["id"] in \
        (out / "audit.html").read_text(encoding="utf-8")
    assert main(["closeout", str(package), "--db", auditor, "--out",
                 str(tmp_path / "closeout.pdf")]) == 0
    assert main(["plan", VESSEL, FINDINGS, "--out", str(tmp_path / "next"), "--db", auditor,
                 "--crew-hours", "40"]) == 0
    capsys.readouterr()

    assert main(["audit", "--db", auditor, "--packages", str(packages), "--out",
                 str(out)]) == 2
    assert capsys.readouterr().err == (f"{auditor}: the store holds the records of 2 plants "
                                       "(MV Skerry Lantern, Quarry Cedar); name one\n")
    assert main(["record", str(package), str(filled_sheet(package, tmp_path)), "--db",
                 auditor, "--supersedes", "1"]) == 2
    assert "this database role may not do that" in capsys.readouterr().err
    assert main(["store", "init", pg_fresh_url, "--crew", "ghost=MV Skerry Lantern"]) == 2
    err = capsys.readouterr().err
    assert "there is no database role 'ghost'" in err and err.count("\n") == 1


@pytest.mark.parametrize(("statement", "words"), [
    ("UPDATE workpack.job_events SET kind = 'cancelled'",
     "append-only: UPDATE on job_events refused"),
    ("DELETE FROM workpack.job_events", "append-only: DELETE on job_events refused"),
    ("TRUNCATE workpack.job_events", "append-only: TRUNCATE on job_events refused"),
    ("INSERT INTO workpack.job_events SELECT plant, sequence + 5, package_id, job_key, kind, "
     "day, at, by, detail_json, prev_sha256, chain_sha256 FROM workpack.job_events",
     "only the next event of the chain"),
])
def test_job_events_are_append_only_even_to_the_owner(pg_fresh_url: str, statement: str,
                                                      words: str) -> None:
    with open_store(pg_fresh_url, plant="MV Aster") as store:
        store.append_events([NewEvent("WP-AST-20261202-01", "k", "planned",
                                      dt.date(2026, 12, 2),
                                      dt.datetime(2026, 12, 2, 8, tzinfo=dt.UTC), "A", {})])
    with pytest.raises(psycopg.errors.RaiseException, match=words):
        sql(pg_fresh_url, statement)
    with open_store(pg_fresh_url, plant="MV Aster") as store:
        assert store.verify_events() == [] and len(list(store.events())) == 1
