"""Open a records store from a path or a URL: the one place that knows every backend."""

from __future__ import annotations

import os
from collections.abc import Sequence
from typing import Any

from workpack.errors import did_you_mean
from workpack.store._base import RecordStore, StoreURLError, redact
from workpack.store._sqlite import SQLiteStore

_SCHEMES = ("sqlite", "postgresql")


def is_server_url(location: str | os.PathLike[str]) -> bool:
    """Whether ``location`` names a database server (``postgresql://…``), not a file."""
    return isinstance(location, str) and \
        location.partition("://")[0].lower() in ("postgresql", "postgres")


def open_store(location: str | os.PathLike[str], *, plant: str | None = None,
               create: bool = True, busy_timeout_s: float = 30.0) -> RecordStore:
    """The records store at ``location``: a file path, ``sqlite:///path`` or a server URL.

    ``sqlite:///relative/path`` and ``sqlite:////absolute/path`` follow the common
    database-URL convention (the path is everything after the third slash);
    ``postgresql://`` (or ``postgres://``) URLs are passed to libpq as they are. Any other
    scheme is a StoreURLError. ``plant`` names the plant whose chain to read and extend:
    an SQLite file holds one (and refuses another's name), a PostgreSQL store many.
    ``create=False`` refuses a location (or a plant) with no records store yet, which is
    what an audit wants.
    """
    if not isinstance(location, str):
        return SQLiteStore(location, plant=plant, create=create, busy_timeout_s=busy_timeout_s)
    scheme, sep, rest = location.partition("://")
    if not sep or len(scheme) == 1:  # a plain path (a Windows drive letter is not a scheme)
        return SQLiteStore(location, plant=plant, create=create,
                           busy_timeout_s=busy_timeout_s)
    shown = redact(location)
    scheme = scheme.lower()
    if scheme == "sqlite":
        if not rest.startswith("/") or rest == "/":
            raise StoreURLError(f"{shown}: an SQLite store URL needs a file path: "
                                "sqlite:///relative/path or sqlite:////absolute/path (an "
                                "in-memory store would lose every record)")
        path = rest[1:]
        if "?" in path or "#" in path:
            raise StoreURLError(f"{shown}: options in an SQLite store URL are not supported; "
                                "give only the path")
        return SQLiteStore(path, plant=plant, create=create, busy_timeout_s=busy_timeout_s)
    if scheme in ("postgresql", "postgres"):
        return _postgres_module(shown).PostgresStore(location, plant=plant, create=create,
                                                     busy_timeout_s=busy_timeout_s)
    raise StoreURLError(f"{shown}: unknown store URL scheme {scheme!r}; expected a file path, "
                        f"sqlite:///path or postgresql://…{did_you_mean(scheme, _SCHEMES)}")


def _postgres_module(shown: str) -> Any:
    """The PostgreSQL backend, imported only when a server URL is opened."""
    try:
        from workpack.store import _postgres
    except ImportError:
        raise StoreURLError(f"{shown}: a PostgreSQL store needs the psycopg driver, which is "
                            "not installed; install workpack with its office extra "
                            "(pip install 'workpack[office]')") from None
    return _postgres


def set_up_store(location: str, *, plant: str | None = None,
                 crew: Sequence[tuple[str, str]] = (), auditors: Sequence[str] = ()) -> list[str]:
    """The one-time set-up of a records store; idempotent; one line per thing done.

    A PostgreSQL URL gets its schema, append-only triggers, roles, grants and row-level
    security (see ``workpack.store._postgres``), and ``crew`` (role, plant) pairs and
    ``auditors`` roles are given their access. An SQLite path is created for ``plant``
    (records create it too; roles mean nothing to a file).
    """
    shown = redact(location)
    if is_server_url(location):
        if plant is not None:
            raise StoreURLError(f"{shown}: a PostgreSQL store holds many plants; its chains "
                                "begin with their first record (give --crew ROLE=PLANT to "
                                "let a crew write one)")
        done: list[str] = _postgres_module(shown).set_up(location, crew=crew,
                                                          auditors=auditors)
        return done
    if crew or auditors:
        raise StoreURLError(f"{shown}: roles belong to a PostgreSQL store; an SQLite file is "
                            "guarded by who may write the file")
    with open_store(location, plant=plant) as store:
        named = f"plant {store.plant}" if store.plant else "an unnamed plant"
        return [f"{store.location}: records store of {named}"]
