"""The records store: completed results kept append-only, hash-chained, verifiable.

Open one with ``open_store(path_or_url, plant=...)`` and pass it as an object to whatever
records or audits (a ``RecordStore``); tests pass a temporary SQLite file or a PostgreSQL
database alike. Each plant has its own chain: an SQLite file holds one plant, a
PostgreSQL store (``postgresql://…``, set up once with ``set_up_store``) holds a fleet.
Corrections are new records that supersede old ones; nothing is ever updated or deleted.
``verify`` recomputes a plant's chain and names the first record that was altered,
removed or reordered.

The error tree (all ``WorkpackError``, exit status 2)::

    StoreError               the store cannot do what was asked; names the file or URL
     ├── NotAStoreError      the file is not a workpack records store (or a newer one)
     ├── StoreURLError       a URL this workpack cannot open (or no PostgreSQL driver)
     ├── ReadOnlyError       this database role may read the store but not write it
     ├── RecordRefusedError  a new record refused before anything was written
     └── NoSuchRecordError   a record number not in the store

The chain's byte encoding is documented in ``workpack/store/_chain.py``; the PostgreSQL
backend (``_postgres.py``, imported only when a server URL is opened) documents its roles,
triggers and locks.
"""

from typing import TYPE_CHECKING, Any

from workpack.store._base import (
    NoSuchRecordError,
    NotAStoreError,
    ReadOnlyError,
    Record,
    RecordRefusedError,
    RecordStore,
    StoreError,
    StoreURLError,
)
from workpack.store._chain import (
    GENESIS,
    ChainBreak,
    ChainHead,
    Verification,
    canonical_json,
    chain_hash,
    package_sha256,
    plant_genesis,
)
from workpack.store._events import EVENT_KINDS, JobEvent, NewEvent

if TYPE_CHECKING:
    from workpack.store._open import is_server_url, open_store, set_up_store
    from workpack.store._sqlite import SQLiteStore

# The backends load on first use, so the pure parts (the record, the chain, the errors)
# can be imported without loading sqlite3: the audit hashes packages with package_sha256.
_BACKENDS = {"SQLiteStore": "_sqlite", "is_server_url": "_open", "open_store": "_open",
             "set_up_store": "_open"}


def __getattr__(name: str) -> Any:
    if name in _BACKENDS:
        from importlib import import_module

        return getattr(import_module(f"workpack.store.{_BACKENDS[name]}"), name)
    raise AttributeError(f"module 'workpack.store' has no attribute {name!r}")

__all__ = [
    "ChainBreak",
    "ChainHead",
    "EVENT_KINDS",
    "GENESIS",
    "JobEvent",
    "NewEvent",
    "NoSuchRecordError",
    "NotAStoreError",
    "ReadOnlyError",
    "Record",
    "RecordRefusedError",
    "RecordStore",
    "SQLiteStore",
    "StoreError",
    "StoreURLError",
    "Verification",
    "canonical_json",
    "chain_hash",
    "is_server_url",
    "open_store",
    "package_sha256",
    "plant_genesis",
    "set_up_store",
]
