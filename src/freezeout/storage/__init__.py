"""History of fits and lot qualifications (SQLite by default, PostgreSQL by URL)."""

from __future__ import annotations

from freezeout.records.history import QualificationSaved, Record, SaveOutcome, TrendPoint
from freezeout.storage.engine import ENV_VAR, StorageError, default_url, make_engine, normalize_url
from freezeout.storage.migrations import (
    LATEST_VERSION,
    MIGRATIONS,
    Migration,
    migrate,
    schema_version_of,
)
from freezeout.storage.rows import canonical_json, options_hash
from freezeout.storage.store import Store, open_history, open_store

__all__ = [
    "ENV_VAR",
    "LATEST_VERSION",
    "MIGRATIONS",
    "Migration",
    "QualificationSaved",
    "Record",
    "SaveOutcome",
    "StorageError",
    "Store",
    "TrendPoint",
    "canonical_json",
    "default_url",
    "make_engine",
    "migrate",
    "normalize_url",
    "open_history",
    "open_store",
    "options_hash",
    "schema_version_of",
]
