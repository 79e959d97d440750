"""The history: stored fits and qualifications, and each supplier's trend."""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING

from freezeout.errors import InputError

if TYPE_CHECKING:
    import datetime as _dt

    from freezeout.storage import Record, TrendPoint

_DATE = re.compile(r"^\d{4}-\d{2}-\d{2}$")
KINDS = ("fit", "lot")


def parse_since(text: str | _dt.date | None) -> _dt.date | None:
    """``YYYY-MM-DD`` (or a date) as a date, or an InputError naming ``--since``."""
    import datetime as _dt

    if text is None or isinstance(text, _dt.date):
        return text.date() if isinstance(text, _dt.datetime) else text
    t = str(text).strip()
    try:
        if not _DATE.match(t):
            raise ValueError(t)
        return _dt.date.fromisoformat(t)
    except ValueError:
        raise InputError(f"--since: {text!r} is not a date; write YYYY-MM-DD, e.g. "
                         "2026-11-03") from None


def trend_file_name(supplier: str) -> str:
    """The trend PNG's file name for a supplier, e.g. ``trend_Kestrel_Ridge_Wafers.png``."""
    from freezeout.numbers import slug

    return f"trend_{slug(supplier, 'supplier')}.png"


def _trend_targets(out: Path | None, suppliers: list[str], draw: bool
                   ) -> dict[str, Path | None]:
    if out is None:
        folder = Path("reports") / "history" if draw else None
        return {s: None if folder is None else folder / trend_file_name(s) for s in suppliers}
    if out.suffix.lower() == ".png":
        if len(suppliers) > 1:
            raise InputError(f"--out {out} names one file, but {len(suppliers)} suppliers have "
                             "trends; give a folder, or choose one with --supplier")
        return {s: out for s in suppliers}
    return {s: out / trend_file_name(s) for s in suppliers}


@dataclass(frozen=True)
class HistoryResult:
    """What :func:`history` found and drew.

    Attributes
    ----------
    records
        The matching records, oldest first.
    suppliers
        The suppliers whose trends were asked for (named, or every supplier with a lot).
    trends
        Trend points per supplier that has any.
    figures
        The trend PNG written per supplier, or None when none was drawn.
    """

    records: tuple[Record, ...]
    suppliers: tuple[str, ...] = ()
    trends: dict[str, tuple[TrendPoint, ...]] = field(default_factory=dict)
    figures: dict[str, Path | None] = field(default_factory=dict)

    def to_dict(self) -> dict:
        """The JSON that ``freezeout history --json`` prints."""
        return {
            "records": [r.to_dict() for r in self.records],
            "trends": {s: {"points": [p.to_dict() for p in pts],
                           "figure": None if self.figures.get(s) is None
                           else str(self.figures[s])}
                       for s, pts in self.trends.items()},
        }


def history(*, supplier: str | None = None, since: str | _dt.date | None = None,
            kind: str | None = None, db: str | None = None, out: str | Path | None = None,
            draw: bool = True) -> HistoryResult:
    """List stored records and draw each supplier's trend of measured over claimed values.

    Parameters
    ----------
    supplier
        Only this supplier's lots (fits carry no supplier and are then left out).
    since
        Only lots dated, and fits stored, on or after this date.
    kind
        Only ``"fit"`` or ``"lot"`` records.
    db
        History database URL.
    out
        Where the trend PNGs go: a folder (default ``reports/history/``) or, for one
        supplier, a ``.png`` file.
    draw
        False: draw no PNG unless ``out`` is given.

    Raises
    ------
    InputError
        A bad option or database URL, or an ``out`` (or a trend PNG in it) that is the
        database file (:func:`freezeout.api.guard.refuse_overwrite`; nothing is written).
    """
    from freezeout.api.guard import refuse_overwrite, sqlite_file
    from freezeout.storage import open_history

    day = parse_since(since)
    if kind is not None and kind not in KINDS:
        raise InputError(f"--kind must be 'fit' or 'lot', got {kind!r}")
    database = sqlite_file(db)
    refuse_overwrite([out], [database])
    if db is None and not _default_store_exists():
        return HistoryResult(())  # nothing stored yet on this machine: no records, no error
    store = open_history(db, read_only=True)
    try:
        records = tuple(store.list_records(supplier=supplier, since=day, kind=kind))
        if supplier is not None:  # as stored (the match ignores case and blanks)
            stored = sorted({r.supplier for r in records if r.kind == "lot" and r.supplier})
            suppliers = [stored[0] if stored else supplier.strip()]
        elif kind == "fit":
            suppliers = []
        else:
            suppliers = sorted({r.supplier for r in records if r.kind == "lot" and r.supplier})
        trends = {}
        for s in suppliers:
            pts = tuple(p for p in store.trend(s) if day is None or p.lot_date >= day)
            if pts:
                trends[s] = pts
    finally:
        store.close()
    targets = _trend_targets(None if out is None else Path(out), list(trends), draw)
    refuse_overwrite(targets.values(), [database])
    figures: dict[str, Path | None] = {}
    for s, pts in trends.items():
        path = targets[s]
        if path is not None:
            from freezeout.reporting.trend_figures import write_trend_png

            write_trend_png(pts, s, path)
        figures[s] = path
    return HistoryResult(records, tuple(suppliers), trends, figures)


def _default_store_exists() -> bool:
    """Whether the default history (``$FREEZEOUT_DB``, else the user data folder) exists.

    Only the built-in default counts as "not yet made"; a URL given in ``$FREEZEOUT_DB`` or
    ``--db`` that names no database is an error (a mistyped path), reported by the store.
    """
    import os

    from freezeout.storage import ENV_VAR, default_url

    if os.environ.get(ENV_VAR):
        return True
    url = default_url()
    path = url.removeprefix("sqlite:///") if url.startswith("sqlite:///") else None
    return path is None or os.path.isfile(path)


def check_history_url(db: str | None) -> None:
    """Refuse, before any work, a ``--db`` URL the history cannot use (not opened here).

    Raises
    ------
    InputError
        ``--db: history database: ...`` for a URL that is neither a SQLite file nor
        ``postgresql://`` (the message :func:`freezeout.storage.open_history` gives).
    """
    if db is None:
        return
    from sqlalchemy.engine import make_url

    from freezeout.storage.engine import normalize_url

    try:
        url = make_url(normalize_url(db))
    except Exception as exc:  # noqa: BLE001 - any unreadable URL is bad input
        raise InputError(f"--db: history database: cannot read the URL {db!r}: {exc}") from None
    if url.get_backend_name() not in ("sqlite", "postgresql"):
        raise InputError(f"--db: history database: unsupported database "
                         f"{url.render_as_string(hide_password=True)!r}: use a SQLite file or "
                         "a postgresql:// URL")
