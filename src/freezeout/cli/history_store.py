"""Storing results in the history database from the commands."""

from __future__ import annotations


def store_fit(result, db_url: str | None, path):
    """Record a fit; the same input and options are stored once. Returns the SaveOutcome."""
    from freezeout.storage.db import open_store

    d = result.to_dict()
    prov = d["provenance"]
    store = open_store(db_url)
    try:
        return store.save_fit(d, input_name=prov["input"], input_sha256=prov["sha256"],
                              options=prov["options"], tool_version=prov["tool_version"])
    finally:
        close = getattr(store, "close", None)
        if close is not None:
            close()
