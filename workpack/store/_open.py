"""Open a records store from a path or a URL: the one place that knows every backend."""

from __future__ import annotations

import os
from urllib.parse import urlsplit, urlunsplit

from workpack.errors import did_you_mean
from workpack.store._base import RecordStore, StoreURLError
from workpack.store._sqlite import SQLiteStore

_SCHEMES = ("sqlite", "postgresql")


def redact(url: str) -> str:
    """``url`` with any password replaced by ``***``, fit for a message."""
    try:
        parts = urlsplit(url)
        if parts.password is None:
            return url
        netloc = parts.netloc.rsplit("@", 1)
        user = netloc[0].split(":", 1)[0]
        return urlunsplit(parts._replace(netloc=f"{user}:***@{netloc[1]}"))
    except ValueError:
        return "<unreadable store URL>"


def open_store(location: str | os.PathLike[str], *, create: bool = True,
               busy_timeout_s: float = 30.0) -> RecordStore:
    """The records store at ``location``: a file path, ``sqlite:///path`` or a server URL.

    ``sqlite:///relative/path`` and ``sqlite:////absolute/path`` follow the common
    database-URL convention (the path is everything after the third slash). A
    ``postgresql://`` URL is recognised and refused with a StoreURLError saying what is
    missing; any other scheme is a StoreURLError too. ``create=False`` refuses a location
    where no store exists yet (what an audit wants).
    """
    if not isinstance(location, str):
        return SQLiteStore(location, create=create, busy_timeout_s=busy_timeout_s)
    scheme, sep, rest = location.partition("://")
    if not sep or len(scheme) == 1:  # a plain path (a Windows drive letter is not a scheme)
        return SQLiteStore(location, create=create, busy_timeout_s=busy_timeout_s)
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
        return SQLiteStore(path, create=create, busy_timeout_s=busy_timeout_s)
    if scheme.startswith(("postgresql", "postgres")):
        raise StoreURLError(f"{shown}: PostgreSQL stores are not available yet: this workpack "
                            "has no PostgreSQL backend (it needs a PostgreSQL driver such as "
                            "psycopg and a store class implementing RecordStore); use an "
                            "SQLite file path or sqlite:///path for now")
    raise StoreURLError(f"{shown}: unknown store URL scheme {scheme!r}; expected a file path, "
                        f"sqlite:///path or postgresql://…{did_you_mean(scheme, _SCHEMES)}")
