"""Storing results in the history database from the commands."""

from __future__ import annotations

import importlib.util


def store_fit(result, db_url: str | None, path) -> None:
    """Record a fit (idempotent for the same input and options)."""
    if importlib.util.find_spec("freezeout.storage.db") is None:  # pragma: no cover
        return
    from freezeout.storage.db import open_store

    store = open_store(db_url)
    store.save_fit(result.to_dict())
