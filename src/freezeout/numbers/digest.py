"""File fingerprints and file-name slugs: one way each."""

from __future__ import annotations

import hashlib
import re
from pathlib import Path

_CHUNK = 1 << 20


def sha256_file(path: str | Path) -> str:
    """SHA-256 (hex) of a file's bytes, read in chunks. Raises OSError as ``open`` does."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(_CHUNK), b""):
            h.update(chunk)
    return h.hexdigest()


def sha256_bytes(data: bytes) -> str:
    """SHA-256 (hex) of bytes already in memory."""
    return hashlib.sha256(data).hexdigest()


def slug(text: str, default: str = "item", *, joiner: str = "_") -> str:
    """A file-name-safe form of ``text``.

    Runs of characters other than letters, digits and ``._-`` become ``joiner``; leading and
    trailing dots and underscores go, so the result is one path component that is not hidden.
    ``default`` stands in for an empty result.
    """
    return re.sub(r"[^A-Za-z0-9._-]+", joiner, str(text)).strip("._") or default
