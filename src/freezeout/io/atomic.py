"""Writing files so that a reader never sees half of one: temporary file, then rename.

A folder of files that belong together (a report) is written whole the same way: into a
sibling temporary folder, then renamed into place (:func:`atomic_folder`). Temporaries left
by a killed run (``.<name>.<random>.tmp`` files, ``.<name>.tmp-<random>`` folders) are removed
by the next run in the same folder once they are older than :data:`STALE_AFTER_S`.
"""

from __future__ import annotations

import glob
import os
import re
import secrets
import shutil
import tempfile
import time
from collections.abc import Callable, Iterable, Iterator
from contextlib import contextmanager
from pathlib import Path

#: Age after which a temporary of ours is taken as left by a killed run (project choice). [s]
STALE_AFTER_S = 600.0

# tempfile's names: 8 characters of [a-z0-9_]; the set-aside folder: 12 hex digits
_TMP_FILE = re.compile(r"^\.(?P<name>.+)\.[a-z0-9_]{8}\.tmp$")
_TMP_DIR = re.compile(r"^\.(?P<name>.+)\.tmp-(?:[a-z0-9_]{8}|(?P<old>old-)[0-9a-f]{12})$")


@contextmanager
def _named_as(target: Path) -> Iterator[None]:
    """Re-raise an OSError about one of our temporaries as one about ``target``.

    The user named ``target``; a message naming ``.<name>.<random>.tmp`` would send them
    looking for a file that never existed.
    """
    try:
        yield
    except OSError as exc:
        names = [Path(str(n)).name for n in (exc.filename, exc.filename2) if n is not None]
        if any(_TMP_FILE.match(n) or _TMP_DIR.match(n) for n in names):
            raise OSError(exc.errno, exc.strerror, str(target)) from exc
        raise


def atomic_write_bytes(path: str | Path, data: bytes) -> Path:
    """Write ``data`` to ``path`` through a temporary file in the same folder and a rename.

    The folder is created if needed. If anything fails, the previous file (if any) is intact
    and no temporary file is left behind.
    """
    p = Path(path)
    p.parent.mkdir(parents=True, exist_ok=True)
    _clean_own_stale(p)
    with _named_as(p):
        _write_through_temporary(p, data)
    return p


def _write_through_temporary(p: Path, data: bytes) -> None:
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


def _clean_own_stale(p: Path) -> None:
    """Remove stale temporaries of this very file name (``.<name>.<random>.tmp``)."""
    now = time.time()
    for old in p.parent.glob(f".{glob.escape(p.name)}.*.tmp"):
        try:
            if (_TMP_FILE.match(old.name) and not old.is_symlink()
                    and now - old.stat().st_mtime >= STALE_AFTER_S):
                old.unlink()
        except OSError:
            continue


def atomic_write_text(path: str | Path, text: str) -> Path:
    """Text (UTF-8) version of :func:`atomic_write_bytes`."""
    return atomic_write_bytes(path, text.encode("utf-8"))


def clean_stale(folder: str | Path, max_age: float = STALE_AFTER_S) -> list[Path]:
    """Remove our temporaries older than ``max_age`` seconds from ``folder``; return them.

    Only names of our own patterns are touched: ``.<name>.<random>.tmp`` files (from
    :func:`atomic_write_bytes`) and ``.<name>.tmp-<random>`` folders (from
    :func:`atomic_folder`). A folder set aside while being replaced
    (``.<name>.tmp-old-<random>``) whose ``<name>`` no longer exists is renamed back instead:
    it is the last whole report.
    """
    folder = Path(folder)
    removed: list[Path] = []
    now = time.time()
    try:
        entries = list(os.scandir(folder))
    except OSError:
        return removed
    for entry in entries:
        m_dir = _TMP_DIR.match(entry.name)
        m_file = None if m_dir else _TMP_FILE.match(entry.name)
        if not (m_dir or m_file):
            continue
        try:
            if entry.is_symlink() or now - entry.stat().st_mtime < max_age:
                continue
            path = Path(entry.path)
            if m_dir and entry.is_dir():
                original = folder / m_dir.group("name")
                if m_dir.group("old") and not os.path.lexists(original):
                    os.rename(path, original)
                    continue
                shutil.rmtree(path)
            elif m_file and entry.is_file():
                path.unlink()
            else:
                continue
            removed.append(path)
        except OSError:
            continue  # another run may be cleaning too; the next one retries
    return removed


def _holds_cwd(target: Path) -> bool:
    """Whether the working directory is ``target`` or inside it."""
    try:
        cwd = Path.cwd().resolve()
        return cwd.is_relative_to(target.resolve())
    except OSError:
        return False


def _set_aside_name(target: Path) -> Path:
    return target.parent / f".{target.name}.tmp-old-{secrets.token_hex(6)}"


def _swap_in(tmp: Path, target: Path) -> None:
    """Rename ``tmp`` to ``target``; an existing ``target`` is set aside, then deleted."""
    if not os.path.lexists(target):
        os.rename(tmp, target)
        return
    aside = _set_aside_name(target)
    os.rename(target, aside)
    try:
        os.rename(tmp, target)
    except BaseException:
        os.rename(aside, target)
        raise
    shutil.rmtree(aside, ignore_errors=True)


def _move_files_in(tmp: Path, target: Path, owned: Callable[[str], bool]) -> None:
    """Move each file of ``tmp`` into ``target``, and drop owned names the new set lacks."""
    new = {p.name for p in tmp.iterdir()}
    for name in sorted(new):
        os.replace(tmp / name, target / name)
    for name in os.listdir(target):
        p = target / name
        if name not in new and owned(name) and p.is_file() and not p.is_symlink():
            p.unlink()
    shutil.rmtree(tmp, ignore_errors=True)


@contextmanager
def atomic_folder(target: str | Path,
                  owned: Iterable[str] | Callable[[str], bool] | None = None) -> Iterator[Path]:
    """Write a folder of files as a whole: yield a sibling temporary folder to fill.

    On a normal exit the temporary folder (``.<name>.tmp-<random>``, same parent) replaces
    ``target`` by renames: an existing ``target`` is renamed aside, the new folder renamed in,
    then the old one deleted; a reader (or a kill) sees the old set or the new set, never a
    new file beside an old one. On any error the temporary folder is removed and ``target``
    is left as it was. Stale temporaries of killed runs in the parent are cleaned first
    (:func:`clean_stale`).

    Parameters
    ----------
    target
        The folder to write (created with its parents if needed; a symbolic link to a folder
        is followed, the link kept).
    owned
        The file names this writer may replace, or a test of a name. If ``target`` holds
        anything else (a folder shared with the user's own files), it is not replaced whole:
        the new files are moved in one by one (each by a rename), owned names the new set
        lacks are removed, and every other entry is kept. None: ``target`` is the writer's
        alone. The working directory (or a folder holding it) is filled the same way.

    Yields
    ------
    Path
        The temporary folder; write the files there (with :func:`atomic_write_bytes`).
    """
    target = Path(os.path.abspath(target))
    if target.is_symlink():
        target = Path(os.path.realpath(target))
    parent = target.parent
    parent.mkdir(parents=True, exist_ok=True)
    if os.path.lexists(target) and not target.is_dir():
        raise NotADirectoryError(f"{target} exists and is not a folder")
    # never rename the file-system root or a folder holding the working directory
    in_place = target == parent or _holds_cwd(target)
    tmp = None
    if not in_place:
        clean_stale(parent)
        try:
            with _named_as(target):
                tmp = Path(tempfile.mkdtemp(prefix=f".{target.name}.tmp-", dir=parent))
        except PermissionError:  # a folder we may write in, in a parent we may not
            in_place = True
    if tmp is None:
        target.mkdir(exist_ok=True)
        clean_stale(target)
        tmp = Path(tempfile.mkdtemp(prefix=f".{target.name or 'root'}.tmp-", dir=target))
    try:
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o777 & ~umask)
        yield tmp
        if owned is None:
            mine: Callable[[str], bool] = lambda name: True  # noqa: E731
        elif callable(owned):
            mine = owned
        else:
            mine = set(owned).__contains__
        foreign = target.is_dir() and any(
            not (mine(e) or _TMP_FILE.match(e) or _TMP_DIR.match(e)) for e in os.listdir(target))
        if foreign or in_place:
            clean_stale(target)
            _move_files_in(tmp, target, mine)
        else:
            _swap_in(tmp, target)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
