"""Writing files so that a reader never sees half of one: temporary file, then rename."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path


def atomic_write_bytes(path: str | Path, data: bytes) -> Path:
    """Write ``data`` to ``path`` through a temporary file in the same folder and a rename.

    The folder is created if needed. If anything fails, the previous file (if any) is intact
    and no temporary file is left behind.
    """
    p = Path(path)
    p.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{p.name}.", suffix=".tmp", dir=p.parent)
    try:
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, p)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise
    return p


def atomic_write_text(path: str | Path, text: str) -> Path:
    """Text (UTF-8) version of :func:`atomic_write_bytes`."""
    return atomic_write_bytes(path, text.encode("utf-8"))
