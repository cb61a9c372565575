"""Saved scenarios: the one store interface and its two implementations.

``PRESSCYCLE_DB`` chooses: a file path is an SQLite file (:mod:`.sqlite`, the default, nothing
to install); a ``postgresql://`` URL is a PostgreSQL database (:mod:`.postgres`), which several
app instances can share. Both keep the same contract (tests/test_store_contract.py): records
are immutable, ids unguessable, lists paged by keyset, search by substring, the schema
migrated at start-up, and a database that is not ours or is newer refused in words.
"""

from pathlib import Path

from .base import (
    SCHEMA_VERSION,
    SERIES_KEYS,
    Cursor,
    Listed,
    Page,
    Scenario,
    ScenarioStore,
    StorageError,
    compact,
    pack,
    unpack,
)
from .sqlite import APPLICATION_ID, SqliteStore

__all__ = ["APPLICATION_ID", "SCHEMA_VERSION", "SERIES_KEYS", "Cursor", "Listed", "Page", "Scenario",
           "ScenarioStore", "SqliteStore", "StorageError", "compact", "open_store", "pack", "unpack", "is_url"]


def is_url(db) -> bool:
    return isinstance(db, str) and db.startswith(("postgresql://", "postgres://"))


def open_store(db: str | Path) -> ScenarioStore:
    """The store ``db`` names: a ``postgresql://`` URL or an SQLite file path."""
    if is_url(db):
        from .postgres import PostgresStore  # psycopg is imported only when asked for

        return PostgresStore(db)
    return SqliteStore(db)
