"""pytest fixtures for a real PostgreSQL server, started once per session (see pgserver).

Tests that take them are skipped, with the reason, only where no server binaries exist;
under CI (``CI`` set) a missing server fails instead, so the tests cannot silently stop
running there.
"""

from __future__ import annotations

import itertools
import os
from collections.abc import Iterator

import pytest
from pgserver import PgServer, find_bindir, running_server

from workpack.store import set_up_store

_databases = itertools.count(1)


@pytest.fixture(scope="session")
def pg_server() -> Iterator[PgServer]:
    bindir = find_bindir()
    if bindir is None:
        reason = ("no PostgreSQL server binaries (initdb, pg_ctl, postgres) on this machine; "
                  "install Debian's postgresql-15 (or set WORKPACK_PG_BIN) to run the "
                  "PostgreSQL store tests")
        if os.environ.get("CI"):
            pytest.fail(reason)
        pytest.skip(reason)
    with running_server(bindir) as server:
        yield server


@pytest.fixture(scope="session")
def pg_template(pg_server: PgServer) -> str:
    """A database set up as a records store, to copy for tests that need their own."""
    url = pg_server.create_database("wp_template")
    set_up_store(url)
    return "wp_template"


@pytest.fixture(scope="session")
def pg_store_url(pg_server: PgServer, pg_template: str) -> str:
    """One shared records store; tests keep apart by each using plants of their own."""
    return pg_server.create_database("wp_shared", template=pg_template)


@pytest.fixture
def pg_fresh_url(pg_server: PgServer, pg_template: str) -> str:
    """A records store of this test's own (its admin URL), for tests that touch the tables."""
    return pg_server.create_database(f"wp_test_{next(_databases)}", template=pg_template)
