"""The records store: completed results kept append-only, hash-chained, verifiable.

Open one with ``open_store(path_or_url)`` and pass it as an object to whatever records
or audits (a ``RecordStore``); tests pass a temporary SQLite file. Corrections are new
records that supersede old ones; nothing is ever updated or deleted. ``verify`` recomputes
the chain and names the first record that was altered, removed or reordered.

The error tree (all ``WorkpackError``, exit status 2)::

    StoreError               the store cannot do what was asked; names the file or URL
     ├── NotAStoreError      the file is not a workpack records store (or a newer one)
     ├── StoreURLError       a URL scheme this workpack cannot open (PostgreSQL: not yet)
     ├── RecordRefusedError  a new record refused before anything was written
     └── NoSuchRecordError   a record number not in the store

The chain's byte encoding is documented in ``workpack/store/_chain.py``.
"""

from workpack.store._base import (
    NoSuchRecordError,
    NotAStoreError,
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
)
from workpack.store._open import open_store
from workpack.store._sqlite import SQLiteStore

__all__ = [
    "ChainBreak",
    "ChainHead",
    "GENESIS",
    "NoSuchRecordError",
    "NotAStoreError",
    "Record",
    "RecordRefusedError",
    "RecordStore",
    "SQLiteStore",
    "StoreError",
    "StoreURLError",
    "Verification",
    "canonical_json",
    "chain_hash",
    "open_store",
    "package_sha256",
]
