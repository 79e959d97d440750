"""No command writes over one of its own inputs: the one check, made before any work.

Two spellings name the same file when the operating system says so
(:func:`os.path.samefile`: same device and inode), which covers a relative against an
absolute path, ``..`` and ``.`` parts, symbolic links and hard links.
"""

from __future__ import annotations

import os
from collections.abc import Iterable
from pathlib import Path

from freezeout.errors import InputError

PathLike = str | os.PathLike


def same_file(a: PathLike, b: PathLike) -> bool:
    """Whether ``a`` and ``b`` are one existing file (False when either does not exist)."""
    try:
        return os.path.samefile(a, b)
    except (OSError, ValueError):
        return False


def refuse_overwrite(outputs: Iterable[PathLike | None], inputs: Iterable[PathLike | None],
                     *, option: str = "--out") -> None:
    """Refuse, before anything is written, an output that is one of the inputs.

    Parameters
    ----------
    outputs
        Every path the command would write or create, folders included (None entries are
        skipped).
    inputs
        Every file the command reads (None entries are skipped).
    option
        The option the outputs come from, for the message.

    Raises
    ------
    InputError
        Naming the output and the input it would replace (``file`` is the input).
    """
    ins = [Path(p) for p in inputs if p is not None]
    for out in outputs:
        if out is None:
            continue
        for inp in ins:
            if same_file(out, inp):
                where = "" if str(out) == str(inp) else f" (the same file as {inp})"
                raise InputError(f"{option} {out}{where} would write over an input of this "
                                 f"command; nothing was written: choose another {option}",
                                 file=str(inp))


def sqlite_file(db: str | None) -> Path | None:
    """The SQLite file a ``--db`` URL (or the default database) names, or None.

    None for PostgreSQL, an in-memory database, or a URL that cannot be read (opening it
    reports that).
    """
    from freezeout.storage.engine import default_url, normalize_url

    try:
        from sqlalchemy.engine import make_url

        url = make_url(normalize_url(db) if db is not None else default_url())
    except Exception:  # noqa: BLE001 - a bad URL is reported when the database is opened
        return None
    if not url.get_backend_name() == "sqlite" or not url.database or url.database == ":memory:":
        return None
    return Path(url.database)
