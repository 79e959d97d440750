"""History of fits and lot qualifications (SQLite by default, PostgreSQL by URL)."""

from __future__ import annotations

from freezeout.storage.db import (
    LATEST_VERSION,
    MIGRATIONS,
    Migration,
    Record,
    SaveOutcome,
    StorageError,
    Store,
    TrendPoint,
    default_url,
    make_engine,
    migrate,
    open_store,
    options_hash,
)

__all__ = [
    "LATEST_VERSION",
    "MIGRATIONS",
    "Migration",
    "Record",
    "SaveOutcome",
    "StorageError",
    "Store",
    "TrendPoint",
    "default_url",
    "make_engine",
    "migrate",
    "open_store",
    "options_hash",
]
