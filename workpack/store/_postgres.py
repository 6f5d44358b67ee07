"""The PostgreSQL records store: one database for a fleet office, one chain per plant.

The same records, the same chain hashes as the SQLite store (``_chain`` computes and
verifies both), with what an office needs on top:

One chain per plant
    ``records`` is keyed by (plant, sequence); each plant's numbers run 1, 2, 3… and its
    record 1 chains from ``plant_genesis(plant)`` (kept in ``plants``). Writers of one
    plant queue on a per-plant transaction-level advisory lock; the last chain hash is
    read after the lock is taken, so two writers never chain from the same record, and
    writers of different plants never wait for each other.

Append-only in the database, not only in Python
    No role is granted UPDATE, DELETE or TRUNCATE on ``records`` or ``plants``; triggers
    refuse them even to the owner; a BEFORE INSERT trigger takes the same plant lock and
    refuses any row that is not the next record of its plant's chain, recomputing the
    results hash and the chain hash in SQL. So a bad row cannot poison a chain that
    can never be cleaned. A superuser can still switch triggers off: ``verify`` is what
    catches an attacker, and it reports guards that are missing, changed or disabled.

Roles and row-level security
    ``workpack_auditor`` reads every plant and writes nothing; ``workpack_crew`` reads
    and appends only the plants mapped to its login role in ``crew_plants``. The owner
    (who ran ``set_up``) is not bound by row-level security and is meant for set-up only.

Set-up is one explicit step, ``set_up(url, ...)`` (``workpack store init``), run once
by a superuser (or the database owner with CREATEROLE); it is idempotent. Opening a store
never creates anything, because a crew or auditor role could not.

What this backend does not know: the highest number ever handed out (SQLite's
``sqlite_sequence``), so records cut from the end of a chain by someone who could switch
the triggers off are found only against an anchor written down earlier.
"""

from __future__ import annotations

import contextlib
import datetime as dt
from collections.abc import Callable, Iterator, Mapping, Sequence
from typing import Any

import psycopg
from psycopg import errors, sql

from workpack.errors import did_you_mean
from workpack.store._base import (
    BATCH,
    STORED_COLUMNS,
    ClosedOnExit,
    Imported,
    JobStateQuery,
    NoSuchRecordError,
    NotAStoreError,
    PlanningRow,
    ReadOnlyError,
    Record,
    RecordRefusedError,
    StoreError,
    check_supersedes,
    in_batches,
    job_state_version,
    kept_columns,
    kept_job_rows,
    last_correction,
    planning_batches,
    planning_summaries,
    planning_version,
    prepare,
    record_filters,
    redact,
    rows_to_add,
)
from workpack.store._chain import (
    GENESIS,
    ChainHead,
    StoredRow,
    Verification,
    next_row,
    plant_genesis,
    verify_rows,
)
from workpack.store._events import (
    EVENT_COLUMNS,
    Encoded,
    EventRefusedError,
    JobEvent,
    NewEvent,
    StoredEvent,
    as_tuple,
    encode,
    next_events,
    verify_events,
    with_record,
)

SCHEMA_VERSION = 1  # workpack.store_info 'schema_version'
LOCK_CLASS = 0x77706B72  # first key of every advisory lock this store takes ("wpkr")
AUDITOR_ROLE = "workpack_auditor"
CREW_ROLE = "workpack_crew"
_COLUMNS = STORED_COLUMNS

# --- the schema ----------------------------------------------------------------------
# Function bodies are compared on verify (prosrc): a guard of the same name that does
# nothing is as good as none.

_CHAIN_TEXT = ("SELECT int4send(octet_length(convert_to(t, 'UTF8'))) "
               "|| convert_to(t, 'UTF8')")

_PLANT_GENESIS = ("SELECT encode(sha256(convert_to('workpack-plant-genesis-v1', 'UTF8') "
                  "|| '\\x00'::bytea || workpack.chain_text(plant)), 'hex')")

# The version-1 encoding of _chain.chain_hash, in SQL, for the insert guard.
_CHAIN_SHA256 = """SELECT encode(sha256(
    convert_to('workpack-record-chain-v1', 'UTF8') || '\\x00'::bytea
    || workpack.chain_text(prev) || int8send(seq) || workpack.chain_text(package_id)
    || workpack.chain_text(package_sha256) || workpack.chain_text(results_sha256)
    || workpack.chain_text(recorded_by) || workpack.chain_text(recorded_at)
    || CASE WHEN supersedes IS NULL THEN '\\x00'::bytea
            ELSE '\\x01'::bytea || int8send(supersedes) END
    || workpack.chain_text(verdict)), 'hex')"""

_REFUSE_CHANGE = """
BEGIN
    RAISE EXCEPTION 'workpack records are append-only: % on % refused', TG_OP, TG_TABLE_NAME;
END"""

_APPEND_IN_ORDER = f"""
DECLARE
    last_sequence bigint;
    last_chain text;
BEGIN
    PERFORM pg_advisory_xact_lock({LOCK_CLASS}, hashtext(NEW.plant));
    SELECT r.sequence, r.chain_sha256 INTO last_sequence, last_chain
        FROM workpack.records AS r WHERE r.plant = NEW.plant
        ORDER BY r.sequence DESC LIMIT 1;
    IF NOT FOUND THEN
        last_sequence := 0;
        SELECT p.genesis INTO last_chain FROM workpack.plants AS p WHERE p.plant = NEW.plant;
    END IF;
    IF NEW.sequence IS DISTINCT FROM last_sequence + 1
            OR NEW.prev_sha256 IS DISTINCT FROM last_chain THEN
        RAISE EXCEPTION 'workpack records: only the next record of the chain of plant % '
            'may be inserted (record %)', NEW.plant, last_sequence + 1;
    END IF;
    IF NEW.results_sha256 IS DISTINCT FROM
            encode(sha256(convert_to(NEW.results_json, 'UTF8')), 'hex') THEN
        RAISE EXCEPTION 'workpack records: the results of record % of plant % do not '
            'match their SHA-256', NEW.sequence, NEW.plant;
    END IF;
    IF NEW.chain_sha256 IS DISTINCT FROM workpack.chain_sha256(NEW.prev_sha256,
            NEW.sequence, NEW.package_id, NEW.package_sha256, NEW.results_sha256,
            NEW.recorded_by, NEW.recorded_at, NEW.supersedes, NEW.verdict) THEN
        RAISE EXCEPTION 'workpack records: record % of plant % does not carry its chain '
            'hash', NEW.sequence, NEW.plant;
    END IF;
    RETURN NEW;
END"""

# Job events (see _events): chained like the records; the guard checks the number and
# the link, the hashes are checked by verify_events.
_EVENTS_IN_ORDER = f"""
DECLARE
    last_sequence bigint;
    last_chain text;
BEGIN
    PERFORM pg_advisory_xact_lock({LOCK_CLASS}, hashtext('events ' || NEW.plant));
    SELECT e.sequence, e.chain_sha256 INTO last_sequence, last_chain
        FROM workpack.job_events AS e WHERE e.plant = NEW.plant
        ORDER BY e.sequence DESC LIMIT 1;
    IF NOT FOUND THEN
        last_sequence := 0;
        SELECT p.genesis INTO last_chain FROM workpack.plants AS p WHERE p.plant = NEW.plant;
    END IF;
    IF NEW.sequence IS DISTINCT FROM last_sequence + 1
            OR NEW.prev_sha256 IS DISTINCT FROM last_chain THEN
        RAISE EXCEPTION 'workpack job events: only the next event of the chain of plant % '
            'may be inserted (event %)', NEW.plant, last_sequence + 1;
    END IF;
    RETURN NEW;
END"""

# (name, arguments, returns, language and attributes, body)
_FUNCTIONS = (
    ("chain_text", "t text", "bytea", "sql IMMUTABLE STRICT PARALLEL SAFE", _CHAIN_TEXT),
    ("plant_genesis", "plant text", "text", "sql IMMUTABLE STRICT PARALLEL SAFE",
     _PLANT_GENESIS),
    ("chain_sha256", "prev text, seq bigint, package_id text, package_sha256 text, "
     "results_sha256 text, recorded_by text, recorded_at text, supersedes bigint, "
     "verdict text", "text", "sql IMMUTABLE PARALLEL SAFE", _CHAIN_SHA256),
    ("refuse_change", "", "trigger", "plpgsql", _REFUSE_CHANGE),
    ("append_in_order", "", "trigger",
     "plpgsql SECURITY DEFINER SET search_path = pg_catalog, pg_temp", _APPEND_IN_ORDER),
    ("events_in_order", "", "trigger",
     "plpgsql SECURITY DEFINER SET search_path = pg_catalog, pg_temp", _EVENTS_IN_ORDER),
)

# (table, trigger, timing and events, level, function); verify expects exactly these.
_TRIGGERS = (
    ("records", "records_append_in_order", "BEFORE INSERT", "ROW", "append_in_order"),
    ("records", "records_no_change", "BEFORE UPDATE OR DELETE", "ROW", "refuse_change"),
    ("records", "records_no_truncate", "BEFORE TRUNCATE", "STATEMENT", "refuse_change"),
    ("plants", "plants_no_change", "BEFORE UPDATE OR DELETE", "ROW", "refuse_change"),
    ("plants", "plants_no_truncate", "BEFORE TRUNCATE", "STATEMENT", "refuse_change"),
    ("job_events", "job_events_in_order", "BEFORE INSERT", "ROW", "events_in_order"),
    ("job_events", "job_events_no_change", "BEFORE UPDATE OR DELETE", "ROW", "refuse_change"),
    ("job_events", "job_events_no_truncate", "BEFORE TRUNCATE", "STATEMENT", "refuse_change"),
)

_TABLES = (
    """CREATE TABLE IF NOT EXISTS workpack.store_info (
        key    text PRIMARY KEY,
        value  text NOT NULL)""",
    f"""CREATE TABLE IF NOT EXISTS workpack.plants (
        plant    text PRIMARY KEY CHECK (plant <> ''),
        -- GENESIS starts a chain begun in an unnamed vessel store, shipped ashore.
        genesis  text NOT NULL
                 CHECK (genesis = workpack.plant_genesis(plant) OR genesis = '{GENESIS}'))""",
    """CREATE TABLE IF NOT EXISTS workpack.records (
        plant           text NOT NULL REFERENCES workpack.plants (plant),
        sequence        bigint NOT NULL CHECK (sequence >= 1),
        package_id      text NOT NULL,
        package_sha256  text NOT NULL CHECK (length(package_sha256) = 64),
        results_json    text NOT NULL,
        results_sha256  text NOT NULL CHECK (length(results_sha256) = 64),
        recorded_by     text NOT NULL,
        recorded_at     text NOT NULL,
        supersedes      bigint CHECK (supersedes IS NULL OR supersedes < sequence),
        verdict         text NOT NULL,
        prev_sha256     text NOT NULL CHECK (length(prev_sha256) = 64),
        chain_sha256    text NOT NULL CHECK (length(chain_sha256) = 64),
        PRIMARY KEY (plant, sequence),
        FOREIGN KEY (plant, supersedes) REFERENCES workpack.records (plant, sequence))""",
    "CREATE INDEX IF NOT EXISTS records_by_package "
    "ON workpack.records (plant, package_id, sequence)",
    "CREATE INDEX IF NOT EXISTS records_by_time ON workpack.records (plant, recorded_at)",
    # One correction per record: corrections form a line, never a fork.
    "CREATE UNIQUE INDEX IF NOT EXISTS records_by_supersedes "
    "ON workpack.records (plant, supersedes) WHERE supersedes IS NOT NULL",
    """CREATE TABLE IF NOT EXISTS workpack.job_events (
        plant         text NOT NULL REFERENCES workpack.plants (plant),
        sequence      bigint NOT NULL CHECK (sequence >= 1),
        package_id    text NOT NULL,
        job_key       text NOT NULL,
        kind          text NOT NULL,
        day           text NOT NULL,
        at            text NOT NULL,
        by            text NOT NULL,
        detail_json   text NOT NULL,
        prev_sha256   text NOT NULL CHECK (length(prev_sha256) = 64),
        chain_sha256  text NOT NULL CHECK (length(chain_sha256) = 64),
        PRIMARY KEY (plant, sequence))""",
    "CREATE INDEX IF NOT EXISTS job_events_by_package "
    "ON workpack.job_events (plant, package_id, sequence)",
    # What planning reads of each record (workpack.records.planning_summary), written in
    # the record's transaction; a derived copy outside the chain, used only while its
    # version and payload hash match the record. A store set up before it existed has
    # none until set-up is run again; its records are then read whole, as before. No
    # foreign key: the records' guards, not this copy, decide what happens to a record.
    """CREATE TABLE IF NOT EXISTS workpack.record_planning (
        plant           text NOT NULL,
        sequence        bigint NOT NULL,
        version         integer NOT NULL,
        results_sha256  text NOT NULL,
        summary_json    text NOT NULL,
        PRIMARY KEY (plant, sequence, version))""",
    # Each job's state as its events leave it (workpack.joblog.kept_job), kept in the
    # transaction of every write of events; a derived copy outside the chain of events,
    # replaced as the job moves on, read only while job_states_through says it was kept
    # up to the plant's last event in today's version (else the events are folded). A
    # store set up before it existed folds the events until set-up is run again.
    """CREATE TABLE IF NOT EXISTS workpack.job_states (
        plant            text NOT NULL,
        package_id       text NOT NULL,
        version          integer NOT NULL,
        open             boolean NOT NULL,
        state            text NOT NULL,
        item             text NOT NULL,
        routine_test     text,
        routine_element  text,
        finished_on      text,
        own_pass_on      text,
        answers_passed   boolean NOT NULL,
        summary_json     text NOT NULL,
        PRIMARY KEY (plant, package_id))""",
    "CREATE INDEX IF NOT EXISTS job_states_open ON workpack.job_states (plant) WHERE open",
    "CREATE INDEX IF NOT EXISTS job_states_by_routine ON workpack.job_states "
    "(plant, routine_test, routine_element, own_pass_on)",
    "CREATE INDEX IF NOT EXISTS job_states_by_item ON workpack.job_states "
    "(plant, item, finished_on)",
    """CREATE TABLE IF NOT EXISTS workpack.job_states_through (
        plant         text PRIMARY KEY,
        version       integer NOT NULL,
        sequence      bigint NOT NULL,
        chain_sha256  text NOT NULL)""",
    """CREATE TABLE IF NOT EXISTS workpack.crew_plants (
        member  name NOT NULL,
        plant   text NOT NULL CHECK (plant <> ''),
        PRIMARY KEY (member, plant))""",
)

_OWN_PLANT = ("plant IN (SELECT c.plant FROM workpack.crew_plants AS c "
              "WHERE c.member = current_user)")

# (table, policy, command, role, USING, WITH CHECK)
_POLICIES = (
    ("records", "auditor_reads", "SELECT", AUDITOR_ROLE, "true", None),
    ("records", "crew_reads_own", "SELECT", CREW_ROLE, _OWN_PLANT, None),
    ("records", "crew_appends_own", "INSERT", CREW_ROLE, None, _OWN_PLANT),
    ("plants", "auditor_reads", "SELECT", AUDITOR_ROLE, "true", None),
    ("plants", "crew_reads_own", "SELECT", CREW_ROLE, _OWN_PLANT, None),
    ("plants", "crew_appends_own", "INSERT", CREW_ROLE, None, _OWN_PLANT),
    ("job_events", "auditor_reads", "SELECT", AUDITOR_ROLE, "true", None),
    ("job_events", "crew_reads_own", "SELECT", CREW_ROLE, _OWN_PLANT, None),
    ("job_events", "crew_appends_own", "INSERT", CREW_ROLE, None, _OWN_PLANT),
    ("record_planning", "auditor_reads", "SELECT", AUDITOR_ROLE, "true", None),
    ("record_planning", "crew_reads_own", "SELECT", CREW_ROLE, _OWN_PLANT, None),
    ("record_planning", "crew_appends_own", "INSERT", CREW_ROLE, None, _OWN_PLANT),
    ("job_states", "auditor_reads", "SELECT", AUDITOR_ROLE, "true", None),
    ("job_states", "crew_reads_own", "SELECT", CREW_ROLE, _OWN_PLANT, None),
    ("job_states", "crew_appends_own", "INSERT", CREW_ROLE, None, _OWN_PLANT),
    ("job_states", "crew_keeps_own", "UPDATE", CREW_ROLE, _OWN_PLANT, _OWN_PLANT),
    ("job_states_through", "auditor_reads", "SELECT", AUDITOR_ROLE, "true", None),
    ("job_states_through", "crew_reads_own", "SELECT", CREW_ROLE, _OWN_PLANT, None),
    ("job_states_through", "crew_appends_own", "INSERT", CREW_ROLE, None, _OWN_PLANT),
    ("job_states_through", "crew_keeps_own", "UPDATE", CREW_ROLE, _OWN_PLANT, _OWN_PLANT),
    ("crew_plants", "auditor_reads", "SELECT", AUDITOR_ROLE, "true", None),
    ("crew_plants", "crew_reads_own", "SELECT", CREW_ROLE, "member = current_user", None),
)

_GRANTS = (
    "REVOKE ALL ON SCHEMA workpack FROM PUBLIC",
    f"GRANT USAGE ON SCHEMA workpack TO {AUDITOR_ROLE}, {CREW_ROLE}",
    "REVOKE ALL ON workpack.store_info, workpack.plants, workpack.records, "
    "workpack.job_events, workpack.record_planning, workpack.crew_plants FROM PUBLIC",
    # Never granted, and taken back should anyone have granted them by hand.
    "REVOKE UPDATE, DELETE, TRUNCATE ON workpack.store_info, workpack.plants, "
    "workpack.records, workpack.job_events, workpack.record_planning, workpack.crew_plants "
    f"FROM {AUDITOR_ROLE}, {CREW_ROLE}",
    "GRANT SELECT ON workpack.store_info, workpack.plants, workpack.records, "
    "workpack.job_events, workpack.record_planning, workpack.crew_plants "
    f"TO {AUDITOR_ROLE}, {CREW_ROLE}",
    "GRANT INSERT ON workpack.plants, workpack.records, workpack.job_events, "
    f"workpack.record_planning TO {CREW_ROLE}",
    # The kept job states are replaced as jobs move on (the events stay append-only).
    "REVOKE ALL ON workpack.job_states, workpack.job_states_through FROM PUBLIC",
    "REVOKE DELETE, TRUNCATE ON workpack.job_states, workpack.job_states_through "
    f"FROM {AUDITOR_ROLE}, {CREW_ROLE}",
    "GRANT SELECT ON workpack.job_states, workpack.job_states_through "
    f"TO {AUDITOR_ROLE}, {CREW_ROLE}",
    "GRANT INSERT, UPDATE ON workpack.job_states, workpack.job_states_through "
    f"TO {CREW_ROLE}",
)


_RLS_TABLES = ("plants", "records", "job_events", "record_planning", "job_states",
               "job_states_through", "crew_plants")


def _schema_statements() -> list[str]:
    """Every statement of the set-up, in order; each one safe to run again."""
    statements = ["CREATE SCHEMA IF NOT EXISTS workpack"]
    for role in (AUDITOR_ROLE, CREW_ROLE):
        statements.append(f"DO $$ BEGIN IF NOT EXISTS (SELECT FROM pg_roles WHERE rolname = "
                          f"'{role}') THEN CREATE ROLE {role} NOLOGIN; END IF; END $$")
    tables = iter(_TABLES)
    statements.append(next(tables))  # store_info
    for name, arguments, returns, attributes, body in _FUNCTIONS[:3]:
        statements.append(_function(name, arguments, returns, attributes, body))
    statements.extend(tables)
    for name, arguments, returns, attributes, body in _FUNCTIONS[3:]:
        statements.append(_function(name, arguments, returns, attributes, body))
    for table, trigger, when, level, function in _TRIGGERS:
        statements.append(f"CREATE OR REPLACE TRIGGER {trigger} {when} ON workpack.{table} "
                          f"FOR EACH {level} EXECUTE FUNCTION workpack.{function}()")
    for table in _RLS_TABLES:
        statements.append(f"ALTER TABLE workpack.{table} ENABLE ROW LEVEL SECURITY")
    for table, policy, command, role, using, check in _POLICIES:
        statements.append(f"DROP POLICY IF EXISTS {policy} ON workpack.{table}")
        statements.append(f"CREATE POLICY {policy} ON workpack.{table} FOR {command} TO {role}"
                          + (f" USING ({using})" if using else "")
                          + (f" WITH CHECK ({check})" if check else ""))
    statements.extend(_GRANTS)
    return statements


def _function(name: str, arguments: str, returns: str, attributes: str, body: str) -> str:
    language, _, rest = attributes.partition(" ")
    return (f"CREATE OR REPLACE FUNCTION workpack.{name}({arguments}) RETURNS {returns} "
            f"LANGUAGE {language} {rest} AS $body${body}$body$")


# --- connecting and errors -------------------------------------------------------------


def _connect(url: str, shown: str) -> psycopg.Connection[Any]:
    try:
        return psycopg.connect(url, autocommit=True, connect_timeout=10,
                               application_name="workpack")
    except psycopg.Error as exc:
        raise StoreError(f"{shown}: cannot connect to the PostgreSQL server: "
                         f"{_first_line(exc)}") from None
    except ValueError:  # an unreadable connection string, caught by psycopg before libpq
        raise StoreError(f"{shown}: not a PostgreSQL connection URL psycopg can read") from None


def _first_line(exc: BaseException) -> str:
    diag = getattr(exc, "diag", None)
    primary = getattr(diag, "message_primary", None)
    text = primary or str(exc).strip() or type(exc).__name__
    return text.splitlines()[0]


class PostgresStore(ClosedOnExit):
    """One plant's chain in a PostgreSQL records store (see the module docstring).

    ``plant`` names the chain; without it, the store's only plant is taken if it holds
    exactly one, and ``plants()`` still answers. ``create=False`` refuses a plant with no
    records yet, so an audit of a mistyped plant fails instead of finding nothing.
    """

    def __init__(self, url: str, *, plant: str | None = None, create: bool = True,
                 busy_timeout_s: float = 30.0):
        self._shown = redact(url)
        self._busy_timeout_s = busy_timeout_s
        self._plant: str | None = None
        self._tables: dict[str, bool] = {}  # optional tables an older set-up lacks
        if plant is not None and not (isinstance(plant, str) and plant.strip()):
            raise StoreError(f"{self._shown}: the plant's name is empty; name the plant "
                             "whose records to read or write")
        self._conn = _connect(url, self._shown)
        try:
            with self._translate("opening"):
                self._open(plant, create)
        except BaseException:
            self._conn.close()
            raise

    def _open(self, plant: str | None, create: bool) -> None:
        c = self._conn
        try:
            found = c.execute("SELECT value FROM workpack.store_info "
                              "WHERE key = 'schema_version'").fetchone()
        except (errors.UndefinedTable, errors.InvalidSchemaName):
            raise NotAStoreError(f"{self._shown}: no workpack records store in this database; "
                                 "set one up once with: workpack store init URL (as its "
                                 "owner)") from None
        if found is None or not found[0].isdigit():
            raise NotAStoreError(f"{self._shown}: the records store's schema version is "
                                 "missing; it was changed outside workpack")
        if int(found[0]) > SCHEMA_VERSION:
            raise NotAStoreError(f"{self._shown}: set up by a newer workpack (store schema "
                                 f"{found[0]}; this one reads schema {SCHEMA_VERSION}); "
                                 "upgrade workpack")
        c.execute("SELECT set_config('lock_timeout', %s, false)",
                  (f"{int(self._busy_timeout_s * 1000)}ms",))
        known = self.plants()
        if plant is None:
            if len(known) == 1:
                self._plant = known[0]
            return
        if not create and plant not in known:
            held = f"it holds {self._listed(known)}" if known else "it holds none yet"
            raise StoreError(f"{self._shown}: no records of plant {plant!r} in this store "
                             f"({held}){did_you_mean(plant, known)}")
        self._plant = plant

    @staticmethod
    def _listed(known: Sequence[str]) -> str:
        return ", ".join(known[:6]) + (f" and {len(known) - 6} more" if len(known) > 6 else "")

    def _error(self, exc: psycopg.Error, doing: str) -> StoreError:
        where, message = self._where(), _first_line(exc)
        if isinstance(exc, errors.InsufficientPrivilege):
            if "row-level security" in message:
                return ReadOnlyError(f"{where}: this database role may not write the records of "
                                  f"plant {self._plant!r}: a crew role writes only the plants "
                                  "it was set up for")
            return ReadOnlyError(f"{where}: this database role may not do that while {doing} "
                              f"(PostgreSQL: {message}); an auditor role only reads")
        if isinstance(exc, errors.LockNotAvailable):
            return StoreError(f"{where}: the plant's chain stayed locked by another writer for "
                              f"{self._busy_timeout_s:g} s while {doing}; try again")
        if isinstance(exc, errors.RaiseException):
            return StoreError(f"{where}: the database refused it: {message}")
        if isinstance(exc, errors.UndefinedTable | errors.UndefinedFunction |
                      errors.InvalidSchemaName | errors.UndefinedColumn):
            return StoreError(f"{where}: the store's tables were changed outside workpack "
                              f"(PostgreSQL: {message})")
        if isinstance(exc, psycopg.OperationalError):
            return StoreError(f"{where}: the connection to the PostgreSQL server failed while "
                              f"{doing} ({message}); a record being written may or may not "
                              "be stored: run verify")
        return StoreError(f"{where}: PostgreSQL error while {doing}: {message}")

    @contextlib.contextmanager
    def _translate(self, doing: str) -> Iterator[None]:
        """Database errors a person can cause become a StoreError naming the store.

        IntegrityError is left alone: the lock and the checks before each write should make
        it impossible, so seeing one is a bug.
        """
        try:
            yield
        except psycopg.IntegrityError:
            raise
        except psycopg.Error as exc:
            raise self._error(exc, doing) from None

    # --- which plant -------------------------------------------------------------------

    def _where(self) -> str:
        return self._shown if self._plant is None else f"{self._shown} (plant {self._plant})"

    @property
    def location(self) -> str:
        return self._where()

    @property
    def plant(self) -> str:
        if self._plant is None:
            known = self.plants()
            if not known:
                raise StoreError(f"{self._shown}: the store holds no records yet; name the "
                                 "plant to record for")
            raise StoreError(f"{self._shown}: the store holds the records of {len(known)} "
                             f"plants ({self._listed(known)}); name one")
        return self._plant

    def plants(self) -> list[str]:
        with self._translate("reading"):
            rows = self._conn.execute("SELECT plant FROM workpack.plants").fetchall()
        return sorted(row[0] for row in rows)  # Python's order, whatever the collation

    # --- writing -----------------------------------------------------------------------

    def append(self, *, package_id: str, package_sha256: str, results: Mapping[str, Any],
               recorded_by: str, recorded_at: dt.datetime, verdict: str,
               supersedes: int | None = None, events: Sequence[NewEvent] = ()) -> Record:
        plant = self.plant
        new = prepare(self.location, package_id=package_id, package_sha256=package_sha256,
                      results=results, recorded_by=recorded_by, recorded_at=recorded_at,
                      verdict=verdict, supersedes=supersedes)
        c = self._conn
        with self._translate("appending a record"), c.transaction():
            c.execute("SELECT pg_advisory_xact_lock(%s::integer, hashtext(%s))",
                      (LOCK_CLASS, plant))
            genesis = self._genesis(plant)
            if genesis is None:
                genesis = plant_genesis(plant)
                c.execute("INSERT INTO workpack.plants (plant, genesis) VALUES (%s, %s)",
                          (plant, genesis))
            prev = self._last_row(plant)
            if new.supersedes is not None:
                check_supersedes(self.location, new, self._row(plant, new.supersedes),
                                 last_correction(new.supersedes,
                                                 lambda n: self._correction_of(plant, n)),
                                 prev.sequence if prev is not None else 0)
            row = next_row(prev, package_id=new.package_id,
                           package_sha256=new.package_sha256, results_json=new.results_json,
                           recorded_by=new.recorded_by, recorded_at=new.recorded_at,
                           supersedes=new.supersedes, verdict=new.verdict, genesis=genesis)
            c.execute(f"INSERT INTO workpack.records (plant, {_COLUMNS}) VALUES "
                      "(%s, %s, %s, %s, %s, %s, %s, %s, %s, %s, %s, %s)",
                      (plant, *row.as_tuple()))
            self._keep_planning(plant, [row])
            if events:
                self._insert_events(plant, genesis, self._encoded(
                    [with_record(event, row.sequence) for event in events]))
        return Record.from_row(row, self.location, plant)

    def import_rows(self, rows: Sequence[StoredRow], *, after: ChainHead | None,
                    genesis: str) -> Imported:
        plant = self.plant
        start = after.sequence if after is not None else 0
        end = rows[-1].sequence if rows else start
        c = self._conn
        with self._translate("importing records"), c.transaction():
            c.execute("SELECT pg_advisory_xact_lock(%s::integer, hashtext(%s))",
                      (LOCK_CLASS, plant))
            stored_genesis = self._genesis(plant)
            prev = self._last_row(plant)
            last = prev.sequence if prev is not None else 0
            stored = dict(c.execute("SELECT sequence, chain_sha256 FROM workpack.records "
                                    "WHERE plant = %s AND sequence BETWEEN %s AND %s",
                                    (plant, start, end)).fetchall())
            new = rows_to_add(self.location, after=after, rows=rows, last=last,
                              stored_chain=stored, stored_genesis=stored_genesis,
                              genesis=genesis)
            if stored_genesis is None and new:
                c.execute("INSERT INTO workpack.plants (plant, genesis) VALUES (%s, %s)",
                          (plant, genesis))
            with c.cursor() as cursor:
                cursor.executemany(f"INSERT INTO workpack.records (plant, {_COLUMNS}) VALUES "
                                   "(%s, %s, %s, %s, %s, %s, %s, %s, %s, %s, %s, %s)",
                                   [(plant, *row.as_tuple()) for row in new])
            self._keep_planning(plant, new)
            head = new[-1] if new else prev
        return Imported(plant, len(new), len(rows) - len(new),
                        ChainHead(head.sequence, head.chain_sha256) if head else None)

    def _has_planning(self) -> bool:
        """Whether the set-up made the planning summaries' table (an older one did not)."""
        return self._has_table("workpack.record_planning")

    def _has_table(self, name: str) -> bool:
        """Whether the set-up made the table ``name``; asked once per connection."""
        if name not in self._tables:
            found = self._conn.execute("SELECT to_regclass(%s)", (name,)).fetchone()
            self._tables[name] = found is not None and found[0] is not None
        return self._tables[name]

    def _keep_planning(self, plant: str, rows: Sequence[StoredRow]) -> None:
        """The planning summaries of ``rows``, inside the transaction writing them."""
        if not rows or not self._has_planning():
            return
        with self._conn.cursor() as cursor:
            cursor.executemany(
                "INSERT INTO workpack.record_planning (plant, sequence, results_sha256, "
                "version, summary_json) VALUES (%s, %s, %s, %s, %s)",
                [(plant, *summary) for summary in planning_summaries(
                    [(r.sequence, r.results_sha256, r.results_json) for r in rows])])

    def kept_summaries(self) -> Iterator[tuple[int, str, str]]:
        plant = self.plant
        with self._translate("reading"):
            if not self._has_planning():
                return
        query = ("SELECT r.sequence, r.results_json, p.summary_json FROM workpack.records AS r "
                 "JOIN workpack.record_planning AS p ON p.plant = r.plant AND p.sequence = "
                 "r.sequence AND p.version = %s AND p.results_sha256 = r.results_sha256 "
                 f"WHERE r.plant = %s AND r.sequence > %s ORDER BY r.sequence LIMIT {BATCH}")
        after = 0
        while True:
            with self._translate("reading"):
                batch = self._conn.execute(query, (planning_version(), plant, after)
                                           ).fetchall()
            yield from ((n, payload, summary) for n, payload, summary in batch)
            if len(batch) < BATCH:
                return
            after = batch[-1][0]

    def fill_planning_summaries(self) -> int:
        plant = self.plant
        c = self._conn
        added = 0
        if not self._has_planning():
            return 0
        while True:
            with self._translate("keeping planning summaries"), c.transaction():
                rows = [StoredRow(*found) for found in c.execute(
                    f"SELECT {_COLUMNS} FROM workpack.records AS r WHERE r.plant = %s AND "
                    "NOT EXISTS (SELECT 1 FROM workpack.record_planning AS p WHERE "
                    "p.plant = r.plant AND p.sequence = r.sequence AND p.version = %s) "
                    f"ORDER BY sequence LIMIT {BATCH}", (plant, planning_version())).fetchall()]
                self._keep_planning(plant, rows)
            added += len(rows)
            if len(rows) < BATCH:
                return added

    def _genesis(self, plant: str) -> str | None:
        found = self._conn.execute("SELECT genesis FROM workpack.plants WHERE plant = %s",
                                   (plant,)).fetchone()
        return found[0] if found is not None else None

    def _last_row(self, plant: str) -> StoredRow | None:
        found = self._conn.execute(f"SELECT {_COLUMNS} FROM workpack.records WHERE plant = %s "
                                   "ORDER BY sequence DESC LIMIT 1", (plant,)).fetchone()
        return StoredRow(*found) if found is not None else None

    def _row(self, plant: str, sequence: int) -> StoredRow | None:
        found = self._conn.execute(f"SELECT {_COLUMNS} FROM workpack.records "
                                   "WHERE plant = %s AND sequence = %s",
                                   (plant, sequence)).fetchone()
        return StoredRow(*found) if found is not None else None

    def _correction_of(self, plant: str, sequence: int) -> int | None:
        found = self._conn.execute("SELECT sequence FROM workpack.records "
                                   "WHERE plant = %s AND supersedes = %s",
                                   (plant, sequence)).fetchone()
        return found[0] if found is not None else None

    # --- reading -----------------------------------------------------------------------

    def get(self, sequence: int) -> Record:
        plant = self.plant
        with self._translate("reading"):
            row = self._row(plant, sequence)
            if row is None:
                last = self._last_row(plant)
                held = (f"the store holds records 1 to {last.sequence}" if last else
                        "the store is empty")
                raise NoSuchRecordError(f"{self.location}: there is no record {sequence} "
                                        f"({held})")
        return Record.from_row(row, self.location, plant)

    def records(self, *, package_id: str | None = None, since: dt.datetime | None = None,
                until: dt.datetime | None = None) -> Iterator[Record]:
        plant = self.plant
        where, params = record_filters("%s", package_id=package_id, since=since, until=until)
        query = (f"SELECT {_COLUMNS} FROM workpack.records WHERE plant = %s AND "
                 f"sequence > %s{where} ORDER BY sequence LIMIT {BATCH}")

        def fetch(after: int) -> list[Any]:
            with self._translate("reading"):
                return self._conn.execute(query, (plant, after, *params)).fetchall()
        for row in in_batches(fetch):
            yield Record.from_row(row, self.location, plant)

    _EFFECTIVE = ("FROM workpack.records AS r WHERE r.plant = %s AND NOT EXISTS (SELECT 1 "
                  "FROM workpack.records AS c WHERE c.plant = r.plant AND "
                  "c.supersedes = r.sequence)")

    def latest(self, package_id: str) -> Record | None:
        plant = self.plant
        with self._translate("reading"):
            found = self._conn.execute(
                f"SELECT {_COLUMNS} {self._EFFECTIVE} AND r.package_id = %s "
                "ORDER BY sequence DESC LIMIT 1", (plant, package_id)).fetchone()
        return Record.from_row(StoredRow(*found), self.location, plant) if found else None

    def latest_per_package(self) -> dict[str, Record]:
        plant = self.plant
        with self._translate("reading"):
            rows = self._conn.execute(
                f"SELECT DISTINCT ON (package_id) {_COLUMNS} {self._EFFECTIVE} "
                "ORDER BY package_id, sequence DESC", (plant,)).fetchall()
        latest = {found[1]: Record.from_row(StoredRow(*found), self.location, plant)
                  for found in rows}
        return dict(sorted(latest.items()))  # Python's order, whatever the collation

    def planning_records(self) -> Iterator[PlanningRow]:
        plant = self.plant
        with self._translate("reading"):
            summaries = self._has_planning()
        if summaries:
            query = ("SELECT r.sequence, r.package_id, r.supersedes, r.recorded_at, "
                     "p.summary_json, CASE WHEN p.summary_json IS NULL THEN r.results_json "
                     "END FROM workpack.records AS r LEFT JOIN workpack.record_planning AS p "
                     "ON p.plant = r.plant AND p.sequence = r.sequence AND p.version = %s "
                     "AND p.results_sha256 = r.results_sha256 WHERE r.plant = %s AND "
                     f"r.sequence > %s ORDER BY r.sequence LIMIT {BATCH}")
            version: tuple[int, ...] = (planning_version(),)
        else:
            query = ("SELECT sequence, package_id, supersedes, recorded_at, NULL, "
                     "results_json FROM workpack.records WHERE plant = %s AND sequence > %s "
                     f"ORDER BY sequence LIMIT {BATCH}")
            version = ()

        def fetch(after: int) -> list[Any]:
            with self._translate("reading"):
                return self._conn.execute(query, (*version, plant, after)).fetchall()
        yield from planning_batches(fetch, self.location)

    def lock_records(self) -> Iterator[Record]:
        plant = self.plant
        with self._translate("reading"):
            summaries = self._has_planning()
        effective = ("NOT EXISTS (SELECT 1 FROM workpack.records AS c WHERE c.plant = "
                     "r.plant AND c.supersedes = r.sequence)")
        if summaries:
            query = (f"SELECT {', '.join('r.' + c for c in _COLUMNS.split(', '))} FROM "
                     "workpack.records AS r LEFT JOIN workpack.record_planning AS p ON "
                     "p.plant = r.plant AND p.sequence = r.sequence AND p.version = %s AND "
                     "p.results_sha256 = r.results_sha256 WHERE r.plant = %s AND "
                     f"r.sequence > %s AND {effective} AND (p.summary_json IS NULL OR "
                     "strpos(p.summary_json, '\"locks_on\":true') > 0) "
                     f"ORDER BY r.sequence LIMIT {BATCH}")
            version: tuple[int, ...] = (planning_version(),)
        else:
            query = (f"SELECT {_COLUMNS} FROM workpack.records AS r WHERE r.plant = %s AND "
                     f"r.sequence > %s AND {effective} ORDER BY r.sequence LIMIT {BATCH}")
            version = ()

        def fetch(after: int) -> list[Any]:
            with self._translate("reading"):
                return self._conn.execute(query, (*version, plant, after)).fetchall()
        for row in in_batches(fetch):
            yield Record.from_row(row, self.location, plant)

    def head(self) -> ChainHead | None:
        plant = self.plant
        with self._translate("reading"):
            last = self._last_row(plant)
        return ChainHead(last.sequence, last.chain_sha256) if last is not None else None

    # --- job events --------------------------------------------------------------------

    def _encoded(self, events: Sequence[NewEvent]) -> list[Encoded]:
        try:
            return [encode(event) for event in events]
        except EventRefusedError as exc:
            raise RecordRefusedError(f"{self.location}: {exc}") from None

    def append_events(self, events: Sequence[NewEvent]) -> list[JobEvent]:
        plant = self.plant
        encoded = self._encoded(events)
        if not encoded:
            return []
        c = self._conn
        with self._translate("appending job events"), c.transaction():
            c.execute("SELECT pg_advisory_xact_lock(%s::integer, hashtext(%s))",
                      (LOCK_CLASS, "events " + plant))
            genesis = self._genesis(plant)
            if genesis is None:
                genesis = plant_genesis(plant)
                c.execute("INSERT INTO workpack.plants (plant, genesis) VALUES (%s, %s)",
                          (plant, genesis))
            rows = self._insert_events(plant, genesis, encoded)
        return [JobEvent.from_row(row) for row in rows]

    def _insert_events(self, plant: str, genesis: str,
                       encoded: Sequence[Encoded]) -> list[StoredEvent]:
        """Chain and insert events, inside the caller's transaction (the plant's row
        already there), under the plant's events lock (taken again here: a lock a
        transaction holds is granted to it again at once)."""
        c = self._conn
        c.execute("SELECT pg_advisory_xact_lock(%s::integer, hashtext(%s))",
                  (LOCK_CLASS, "events " + plant))
        last = c.execute("SELECT sequence, chain_sha256 FROM workpack.job_events "
                         "WHERE plant = %s ORDER BY sequence DESC LIMIT 1",
                         (plant,)).fetchone()
        rows = next_events(tuple(last) if last else None, genesis, encoded)
        with c.cursor() as cursor:
            cursor.executemany(
                f"INSERT INTO workpack.job_events (plant, {EVENT_COLUMNS}) VALUES "
                "(%s, %s, %s, %s, %s, %s, %s, %s, %s, %s, %s)",
                [(plant, *as_tuple(row)) for row in rows])
        self._keep_job_states(plant)
        return rows

    def _has_job_states(self) -> bool:
        """Whether the set-up made the kept job states' tables (an older one did not)."""
        return self._has_table("workpack.job_states_through")

    def _keep_job_states(self, plant: str) -> int:
        """The states of the plant's jobs with events after the last kept (every job
        where none are kept in today's version), inside the caller's transaction, under
        the plant's events lock; how many."""
        c = self._conn
        if not self._has_job_states():
            return 0
        mark = c.execute("SELECT version, sequence FROM workpack.job_states_through "
                         "WHERE plant = %s", (plant,)).fetchone()
        after = mark[1] if mark is not None and mark[0] == job_state_version() else 0
        last = c.execute("SELECT sequence, chain_sha256 FROM workpack.job_events "
                         "WHERE plant = %s ORDER BY sequence DESC LIMIT 1",
                         (plant,)).fetchone()
        if last is None or last[0] == after:
            return 0
        events = [JobEvent.from_row(StoredEvent(*found)) for found in c.execute(
            f"SELECT {EVENT_COLUMNS} FROM workpack.job_events WHERE plant = %s AND "
            "package_id IN (SELECT package_id FROM workpack.job_events WHERE plant = %s "
            "AND sequence > %s) ORDER BY sequence", (plant, plant, after)).fetchall()]
        rows = kept_job_rows(events)
        columns = kept_columns()
        with c.cursor() as cursor:
            cursor.executemany(
                f"INSERT INTO workpack.job_states (plant, {', '.join(columns)}) VALUES "
                f"({', '.join(['%s'] * (len(columns) + 1))}) ON CONFLICT (plant, package_id) "
                "DO UPDATE SET " + ", ".join(f"{name} = excluded.{name}"
                                             for name in columns[1:]),
                [(plant, *row) for row in rows])
        c.execute("INSERT INTO workpack.job_states_through (plant, version, sequence, "
                  "chain_sha256) VALUES (%s, %s, %s, %s) ON CONFLICT (plant) DO UPDATE SET "
                  "version = excluded.version, sequence = excluded.sequence, chain_sha256 = "
                  "excluded.chain_sha256", (plant, job_state_version(), *last))
        return len(rows)

    def _job_states_current(self, plant: str) -> bool:
        """Whether the plant's kept job states were brought up to its last event, in
        today's version (inside the caller's read transaction)."""
        if not self._has_job_states():
            return False
        c = self._conn
        mark = c.execute("SELECT version, sequence, chain_sha256 FROM "
                         "workpack.job_states_through WHERE plant = %s", (plant,)).fetchone()
        last = c.execute("SELECT sequence, chain_sha256 FROM workpack.job_events "
                         "WHERE plant = %s ORDER BY sequence DESC LIMIT 1",
                         (plant,)).fetchone()
        return mark is not None and last is not None and \
            tuple(mark) == (job_state_version(), *last)

    def job_states(self, query: JobStateQuery) -> list[str] | None:
        plant = self.plant
        c = self._conn
        where, params = query.where(
            "%s", "workpack.job_states AS b WHERE b.plant = a.plant AND")
        with self._translate("reading job states"), c.transaction():
            c.execute("SET TRANSACTION ISOLATION LEVEL REPEATABLE READ, READ ONLY")
            if not self._job_states_current(plant):
                return None
            rows = c.execute(f"SELECT a.package_id, a.summary_json FROM workpack.job_states "
                             f"AS a WHERE a.plant = %s AND ({where})",
                             (plant, *params)).fetchall()
        return [text for _, text in sorted(rows)]  # Python's order, whatever the collation

    def kept_job_states(self) -> list[tuple[Any, ...]] | None:
        plant = self.plant
        c = self._conn
        with self._translate("reading job states"), c.transaction():
            c.execute("SET TRANSACTION ISOLATION LEVEL REPEATABLE READ, READ ONLY")
            if not self._job_states_current(plant):
                return None
            rows = c.execute(f"SELECT {', '.join(kept_columns())} FROM workpack.job_states "
                             "WHERE plant = %s", (plant,)).fetchall()
        return sorted(tuple(row) for row in rows)

    def fill_job_states(self) -> int:
        plant = self.plant
        c = self._conn
        with self._translate("keeping job states"), c.transaction():
            c.execute("SELECT pg_advisory_xact_lock(%s::integer, hashtext(%s))",
                      (LOCK_CLASS, "events " + plant))
            return self._keep_job_states(plant)

    def events(self, *, package_id: str | None = None) -> Iterator[JobEvent]:
        plant = self.plant
        where, params = ("AND package_id = %s", (plant, package_id)) if package_id else (
            "", (plant,))
        with self._translate("reading job events"):
            rows = self._conn.execute(f"SELECT {EVENT_COLUMNS} FROM workpack.job_events "
                                      f"WHERE plant = %s {where} ORDER BY sequence",
                                      params).fetchall()
        for found in rows:
            yield JobEvent.from_row(StoredEvent(*found))

    def verify_events(self) -> list[str]:
        plant = self.plant
        c = self._conn
        with self._translate("verifying job events"), c.transaction():
            c.execute("SET TRANSACTION ISOLATION LEVEL REPEATABLE READ, READ ONLY")
            stored = self._genesis(plant)
            genesis = stored if stored == GENESIS else plant_genesis(plant)
            rows = [StoredEvent(*found) for found in c.execute(
                f"SELECT {EVENT_COLUMNS} FROM workpack.job_events WHERE plant = %s "
                "ORDER BY sequence", (plant,))]
            problems = verify_events(self.location, rows, genesis)
            if not self._guards_intact():
                problems.append(f"{self.location}: the store's append-only guards are "
                                "missing, changed or disabled")
        return problems

    # --- verifying ---------------------------------------------------------------------

    def verify(self, *, anchor: ChainHead | None = None) -> Verification:
        plant = self.plant
        c = self._conn
        with self._translate("verifying"), c.transaction():
            # One snapshot: appends by others do not show half-way.
            c.execute("SET TRANSACTION ISOLATION LEVEL REPEATABLE READ, READ ONLY")
            guards_intact = self._guards_intact()
            stored = self._genesis(plant)
            expected = plant_genesis(plant)
            # GENESIS marks a chain begun in an unnamed vessel store; anything else
            # (the check constraint switched off) is held to the plant's own value.
            genesis = stored if stored == GENESIS else expected
            result = verify_rows(self.location, self._stored_rows(plant),
                                 self._rescan(plant), anchor=anchor,
                                 guards_intact=guards_intact, genesis=genesis)
        return result

    def _stored_rows(self, plant: str) -> Iterator[StoredRow]:
        with self._conn.cursor(name="workpack_verify") as cursor:
            cursor.itersize = 2000
            cursor.execute(f"SELECT {_COLUMNS} FROM workpack.records WHERE plant = %s "
                           "ORDER BY sequence", (plant,))
            for found in cursor:
                yield StoredRow(*found)

    def _rescan(self, plant: str) -> Callable[[], Iterator[StoredRow]]:
        def rescan() -> Iterator[StoredRow]:
            rows = self._conn.execute(f"SELECT {_COLUMNS} FROM workpack.records "
                                      "WHERE plant = %s ORDER BY sequence", (plant,)).fetchall()
            return (StoredRow(*found) for found in rows)
        return rescan

    def _guards_intact(self) -> bool:
        """Every trigger and guard function in place, enabled and as written."""
        return _actual_guards(self._conn) == _expected_guards()

    # --- lifetime ----------------------------------------------------------------------

    def close(self) -> None:
        self._conn.close()

    def __repr__(self) -> str:
        return f"PostgresStore({self.location!r})"


def _expected_guards() -> set[tuple[str, ...]]:
    bodies = {name: body for name, _, _, _, body in _FUNCTIONS}
    found: set[tuple[str, ...]] = {("function", name, body) for name, body in bodies.items()}
    found |= {(table, trigger, "enabled", bodies[function])
              for table, trigger, _, _, function in _TRIGGERS}
    found |= {("row level security", table) for table in _RLS_TABLES}
    return found


def _actual_guards(conn: psycopg.Connection[Any]) -> set[tuple[str, ...]]:
    found: set[tuple[str, ...]] = set()
    for name, body in conn.execute(
            "SELECT p.proname, p.prosrc FROM pg_proc AS p JOIN pg_namespace AS n "
            "ON n.oid = p.pronamespace WHERE n.nspname = 'workpack'"):
        found.add(("function", name, body))
    for table, trigger, enabled, body in conn.execute(
            "SELECT c.relname, t.tgname, t.tgenabled, p.prosrc FROM pg_trigger AS t "
            "JOIN pg_class AS c ON c.oid = t.tgrelid "
            "JOIN pg_namespace AS n ON n.oid = c.relnamespace "
            "JOIN pg_proc AS p ON p.oid = t.tgfoid "
            "WHERE n.nspname = 'workpack' AND NOT t.tgisinternal"):
        found.add((table, trigger, "enabled" if enabled == "O" else f"state {enabled}", body))
    for (table,) in conn.execute(
            "SELECT c.relname FROM pg_class AS c JOIN pg_namespace AS n "
            "ON n.oid = c.relnamespace WHERE n.nspname = 'workpack' AND c.relrowsecurity"):
        found.add(("row level security", table))
    return found


# --- set-up ----------------------------------------------------------------------------


def set_up(url: str, *, crew: Sequence[tuple[str, str]] = (),
           auditors: Sequence[str] = ()) -> list[str]:
    """Create or complete the store's schema, roles, grants and policies; idempotent.

    ``crew`` pairs a login role with a plant it may append to (a role may have several);
    ``auditors`` are login roles that read every plant. The roles must exist already
    (passwords and authentication are the database administrator's). Returns one line
    per thing done, for the person running it. Needs a superuser, or the database's owner
    with CREATEROLE.
    """
    shown = redact(url)
    conn = _connect(url, shown)
    done: list[str] = []
    try:
        with conn.transaction():
            conn.execute("SELECT pg_advisory_xact_lock(%s::integer, 0)", (LOCK_CLASS,))
            encoding = conn.execute("SHOW server_encoding").fetchone()
            if encoding is None or encoding[0].upper() not in ("UTF8", "UTF-8"):
                raise StoreError(f"{shown}: the database's encoding is "
                                 f"{encoding[0] if encoding else 'unknown'}, not UTF8; the "
                                 "chain hashes text as UTF-8: create the database with "
                                 "ENCODING 'UTF8'")
            version = _existing_version(conn)
            if version is not None and version > SCHEMA_VERSION:
                raise NotAStoreError(f"{shown}: set up by a newer workpack (store schema "
                                     f"{version}); upgrade workpack")
            for statement in _schema_statements():
                conn.execute(statement.encode())
            conn.execute("INSERT INTO workpack.store_info (key, value) VALUES "
                         "('schema_version', %s) ON CONFLICT (key) DO NOTHING",
                         (str(SCHEMA_VERSION),))
            done.append("schema workpack: tables, append-only triggers, row-level security "
                        f"and grants in place (store schema {SCHEMA_VERSION})")
            for role in auditors:
                _grant_role(conn, shown, role, AUDITOR_ROLE)
                done.append(f"role {role}: reads every plant's records, writes none")
            for role, plant in crew:
                if not plant.strip():
                    raise StoreError(f"{shown}: --crew {role}: the plant's name is empty")
                _grant_role(conn, shown, role, CREW_ROLE)
                conn.execute("INSERT INTO workpack.crew_plants (member, plant) VALUES (%s, %s) "
                             "ON CONFLICT DO NOTHING", (role, plant))
                done.append(f"role {role}: reads and appends the records of plant {plant}")
    except psycopg.Error as exc:
        raise StoreError(f"{shown}: setting up the records store failed: {_first_line(exc)} "
                         "(it needs a superuser, or the database's owner with CREATEROLE); "
                         "nothing was changed") from None
    finally:
        conn.close()
    return done


def _existing_version(conn: psycopg.Connection[Any]) -> int | None:
    found = conn.execute("SELECT to_regclass('workpack.store_info')").fetchone()
    if found is None or found[0] is None:
        return None
    row = conn.execute("SELECT value FROM workpack.store_info "
                       "WHERE key = 'schema_version'").fetchone()
    return int(row[0]) if row is not None and row[0].isdigit() else None


def _grant_role(conn: psycopg.Connection[Any], shown: str, role: str, group: str) -> None:
    found = conn.execute("SELECT rolsuper OR rolbypassrls FROM pg_roles WHERE rolname = %s",
                         (role,)).fetchone()
    if found is None:
        raise StoreError(f"{shown}: there is no database role {role!r}; create it first "
                         f"(CREATE ROLE {role} LOGIN …, with the authentication your site "
                         "uses), then run this again")
    if found[0]:
        raise StoreError(f"{shown}: role {role!r} is a superuser or bypasses row-level "
                         "security, so no policy would bind it; give the crew and auditors "
                         "roles of their own")
    conn.execute(sql.SQL("GRANT {} TO {}").format(sql.Identifier(group), sql.Identifier(role)))
