"""The history store: save fits and lot qualifications once, list them, trend a supplier.

A record is identified by (input SHA-256, options hash): saving the same input with the same
options again stores nothing and returns the existing record. Writes are single
transactions, so a writer that fails or is killed midway leaves no partial record;
concurrent writers lose nothing and never store a record twice (``INSERT ... ON CONFLICT DO
NOTHING`` inside the transaction; SQLite transactions start with ``BEGIN IMMEDIATE`` so
writers queue instead of failing).
"""

from __future__ import annotations

import datetime as _dt
import json
from collections.abc import Iterable

from sqlalchemy import Engine, Table, select
from sqlalchemy.engine import Connection

from freezeout.errors import InputError
from freezeout.fitting.result import FitResult
from freezeout.records.history import QualificationSaved, Record, SaveOutcome, TrendPoint
from freezeout.records.qualification import LotQualification
from freezeout.storage import engine as _engine
from freezeout.storage.engine import StorageError, default_url, make_engine, normalize_url
from freezeout.storage.migrations import migrate, schema_version_of
from freezeout.storage.rows import claim_rows, fit_row, lot_row
from freezeout.storage.schema import claim_records, fit_records, lot_records


def _aware(t: _dt.datetime) -> _dt.datetime:
    return t if t.tzinfo is not None else t.replace(tzinfo=_dt.UTC)


def _as_date(since: _dt.date | str | None) -> _dt.date | None:
    if since is None or isinstance(since, _dt.date):
        return since.date() if isinstance(since, _dt.datetime) else since
    try:
        return _dt.date.fromisoformat(str(since).strip())
    except ValueError:
        raise InputError(f"not a date (write 2026-11-03): {since!r}", column="since") from None


def _same_supplier(a: str, b: str) -> bool:
    """Suppliers match ignoring case and surrounding blanks (as people type them)."""
    return a.strip().casefold() == b.strip().casefold()


def _supplier_names(conn: Connection, supplier: str) -> list[str]:
    """The stored spellings of a supplier (compared in Python: SQLite folds only ASCII)."""
    names = conn.execute(select(lot_records.c.supplier).distinct()).scalars()
    return [n for n in names if n is not None and _same_supplier(n, supplier)]


class Store:
    """The history database.

    Open with :func:`open_store`. All methods are safe to call from several processes at once.

    Parameters
    ----------
    engine
        An engine from :func:`~freezeout.storage.engine.make_engine`, already migrated.
    """

    def __init__(self, engine: Engine) -> None:
        self.engine = engine

    @property
    def url(self) -> str:
        """The database URL (password hidden)."""
        return self.engine.url.render_as_string(hide_password=True)

    def schema_version(self) -> int:
        """The database's schema version."""
        return schema_version_of(self.engine)

    def close(self) -> None:
        """Release the connections."""
        self.engine.dispose()

    def __enter__(self) -> Store:
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    # -- writing ---------------------------------------------------------------------------

    @staticmethod
    def _insert_once(conn: Connection, table: Table, row: dict) -> SaveOutcome:
        stmt = (_engine.insert_of(conn)(table).values(**row)
                .on_conflict_do_nothing(index_elements=["input_sha256", "options_hash"])
                .returning(table.c.id))
        new_id = conn.execute(stmt).scalar_one_or_none()
        if new_id is not None:
            return SaveOutcome(int(new_id), True)
        old_id = conn.execute(select(table.c.id).where(
            table.c.input_sha256 == row["input_sha256"],
            table.c.options_hash == row["options_hash"])).scalar_one()
        return SaveOutcome(int(old_id), False)

    @classmethod
    def _insert_lot(cls, conn: Connection, qualification: LotQualification,
                    row: dict) -> SaveOutcome:
        outcome = cls._insert_once(conn, lot_records, row)
        if outcome.created:
            claims = claim_rows(qualification.verdict, outcome.record_id)
            if claims:
                conn.execute(claim_records.insert(), claims)
        return outcome

    def save_fit(self, result: FitResult) -> SaveOutcome:
        """Store a fit result once.

        The input's name and SHA-256, the options and the tool version come from the
        result's provenance; the result JSON column holds ``result.to_dict()``.

        Parameters
        ----------
        result
            The fit.

        Returns
        -------
        SaveOutcome
            The record id and whether it was written now (False: already stored for this
            input and options, nothing written).

        Raises
        ------
        InputError
            If the provenance lacks one of those or its SHA-256 is not a hex digest.
        """
        row = fit_row(result)
        with self.engine.begin() as conn:
            return self._insert_once(conn, fit_records, row)

    def save_lot(self, qualification: LotQualification) -> SaveOutcome:
        """Store a lot qualification once, with one row per wafer and claim.

        The input name is ``<folder>/<file>`` of the lot file; its SHA-256 (over the lot file
        and the files it names), options and tool version come from the provenance; the
        result JSON column holds ``qualification.to_dict()`` (the lot JSON).

        Parameters
        ----------
        qualification
            The qualified lot.

        Returns
        -------
        SaveOutcome
            The record id and whether it was written now. The lot row and its claim rows are
            written in one transaction: all or nothing.
        """
        row = lot_row(qualification)
        with self.engine.begin() as conn:
            return self._insert_lot(conn, qualification, row)

    def save_qualification(self, qualification: LotQualification,
                           fits: Iterable[FitResult] = ()) -> QualificationSaved:
        """Store a qualification and the fits of its wafers in one transaction.

        Each record is stored once, as by :meth:`save_fit` and :meth:`save_lot`; either all
        of them are written or (on any failure) none.

        Parameters
        ----------
        qualification
            The qualified lot.
        fits
            The fits of its wafers.

        Returns
        -------
        QualificationSaved
            ``(lot, fits_new)``: the lot's outcome and how many fits were new.
        """
        fit_rows = [fit_row(f) for f in fits]
        row = lot_row(qualification)
        with self.engine.begin() as conn:
            fits_new = len(self._insert_many(conn, fit_records, fit_rows))
            lot = self._insert_lot(conn, qualification, row)
        return QualificationSaved(lot, fits_new)

    @staticmethod
    def _insert_many(conn: Connection, table: Table, rows: list[dict]) -> dict:
        """Insert rows not stored yet in one batched statement: (sha, options hash) -> new id."""
        if not rows:
            return {}
        stmt = (_engine.insert_of(conn)(table)
                .on_conflict_do_nothing(index_elements=["input_sha256", "options_hash"])
                .returning(table.c.id, table.c.input_sha256, table.c.options_hash))
        return {(r.input_sha256, r.options_hash): int(r.id)
                for r in conn.execute(stmt, rows)}

    def save_lots(self, qualifications: Iterable[LotQualification]) -> list[SaveOutcome]:
        """Store many lot qualifications in one transaction, in batched inserts.

        Each is stored once, as by :meth:`save_lot`; the lot rows go in one batched insert,
        their claim rows in another: all are written or (on any failure) none. Returns one
        SaveOutcome per qualification, in order.
        """
        qs = list(qualifications)
        rows = [lot_row(q) for q in qs]
        keys = [(r["input_sha256"], r["options_hash"]) for r in rows]
        with self.engine.begin() as conn:
            new = self._insert_many(conn, lot_records, rows)
            first = {k: q for q, k in reversed(list(zip(qs, keys, strict=True)))}
            claims = [c for k, q in first.items() if k in new
                      for c in claim_rows(q.verdict, new[k])]
            if claims:
                conn.execute(claim_records.insert(), claims)
            old = {}
            for k in dict.fromkeys(k for k in keys if k not in new):
                old[k] = conn.execute(select(lot_records.c.id).where(
                    lot_records.c.input_sha256 == k[0],
                    lot_records.c.options_hash == k[1])).scalar_one()
        seen: set = set()
        out = []
        for k in keys:  # a lot given twice is new the first time only
            created = k in new and k not in seen
            seen.add(k)
            out.append(SaveOutcome(new[k] if k in new else old[k], created))
        return out

    # -- reading ---------------------------------------------------------------------------

    def list_records(self, supplier: str | None = None,
                     since: _dt.date | str | None = None,
                     kind: str | None = None) -> list[Record]:
        """List stored records, oldest first.

        Parameters
        ----------
        supplier
            Only lot records of this supplier (fits carry no supplier and are left out).
        since
            Only lots dated on or after this date, and fits stored on or after it (UTC).
        kind
            ``"fit"``, ``"lot"`` or None for both.

        Returns
        -------
        list of Record
            Sorted by date (lot date for lots, storage date for fits), then storage time.
        """
        if kind not in (None, "fit", "lot"):
            raise InputError(f"kind must be 'fit' or 'lot', got {kind!r}", column="kind")
        day = _as_date(since)
        out: list[Record] = []
        with self.engine.begin() as conn:
            if kind in (None, "lot"):
                q = select(lot_records)
                if supplier is not None:
                    q = q.where(lot_records.c.supplier.in_(_supplier_names(conn, supplier)))
                if day is not None:
                    q = q.where(lot_records.c.lot_date >= day)
                for r in conn.execute(q).mappings():
                    out.append(Record(
                        "lot", r["id"], _aware(r["created_at"]), r["input_name"],
                        r["input_sha256"], r["tool_version"], json.loads(r["options_json"]),
                        supplier=r["supplier"], lot=r["lot"], lot_date=r["lot_date"],
                        verdict=r["verdict"], decision_rule=r["decision_rule"]))
            if kind in (None, "fit") and supplier is None:
                q = select(fit_records)
                if day is not None:
                    start = _dt.datetime.combine(day, _dt.time(), tzinfo=_dt.UTC)
                    q = q.where(fit_records.c.created_at >= start)
                for r in conn.execute(q).mappings():
                    out.append(Record(
                        "fit", r["id"], _aware(r["created_at"]), r["input_name"],
                        r["input_sha256"], r["tool_version"], json.loads(r["options_json"]),
                        material=r["material"], carrier=r["carrier"],
                        net_doping=r["net_doping"], net_doping_stderr=r["net_doping_stderr"]))
        out.sort(key=lambda rec: (rec.lot_date or rec.created_at.date(), rec.created_at,
                                  rec.kind, rec.record_id))
        return out

    def get_result(self, kind: str, record_id: int) -> dict:
        """The full result JSON of a record.

        Parameters
        ----------
        kind
            ``"fit"`` or ``"lot"``.
        record_id
            The record's id.

        Returns
        -------
        dict
            The result as it was saved.

        Raises
        ------
        KeyError
            If there is no such record.
        """
        table = {"fit": fit_records, "lot": lot_records}[kind]
        with self.engine.begin() as conn:
            s = conn.execute(select(table.c.result_json).where(table.c.id == record_id)
                             ).scalar_one_or_none()
        if s is None:
            raise KeyError(f"no {kind} record {record_id}")
        return json.loads(s)

    def claim_rows(self, lot_record_id: int) -> list[dict]:
        """The stored per-wafer, per-claim rows of a lot record, in wafer and claim order."""
        with self.engine.begin() as conn:
            rows = conn.execute(
                select(claim_records).where(claim_records.c.lot_record_id == lot_record_id)
                .order_by(claim_records.c.id)).mappings().all()
        return [dict(r) for r in rows]

    def trend(self, supplier: str) -> list[TrendPoint]:
        """Measured over claimed, per lot and claimed quantity, for one supplier.

        For a lot qualified more than once (other options), the most recently stored record
        counts. Type claims (no number) are left out.

        Parameters
        ----------
        supplier
            The supplier, as written in the lot files (case and surrounding blanks
            ignored).

        Returns
        -------
        list of TrendPoint
            In lot-date order.
        """
        q = (select(lot_records.c.id, lot_records.c.lot, lot_records.c.lot_date,
                    lot_records.c.verdict, lot_records.c.created_at, claim_records)
             .join(claim_records, claim_records.c.lot_record_id == lot_records.c.id)
             .where(claim_records.c.measured.is_not(None))
             .where(claim_records.c.claimed.is_not(None)))
        with self.engine.begin() as conn:
            q = q.where(lot_records.c.supplier.in_(_supplier_names(conn, supplier)))
            rows = conn.execute(q).mappings().all()
        latest: dict[str, tuple[_dt.datetime, int]] = {}
        for r in rows:
            key = (_aware(r["created_at"]), r["id"])
            if r["lot"] not in latest or key > latest[r["lot"]]:
                latest[r["lot"]] = key
        groups: dict[tuple, list] = {}
        for r in rows:
            if latest[r["lot"]][1] != r["id"] or not r["claimed"]:
                continue
            k = (r["id"], r["claim_index"], r["quantity"], r["unit"], r["temperature_K"])
            groups.setdefault(k, []).append(r)
        out = []
        for (rid, _idx, quantity, unit, temp), rs in groups.items():
            ratios = [r["measured"] / r["claimed"] for r in rs]
            first = rs[0]
            c = first["claimed"]
            out.append(TrendPoint(
                supplier=supplier, lot=first["lot"], lot_date=first["lot_date"],
                quantity=quantity, unit=unit, temperature_K=temp, n_wafers=len(rs),
                mean_ratio=sum(ratios) / len(ratios), min_ratio=min(ratios),
                max_ratio=max(ratios),
                spec_min_ratio=None if first["spec_min"] is None else first["spec_min"] / c,
                spec_max_ratio=None if first["spec_max"] is None else first["spec_max"] / c,
                lot_verdict=first["verdict"], lot_record_id=rid))
        out.sort(key=lambda p: (p.lot_date, p.lot, p.quantity, p.temperature_K or 0.0))
        return out


def open_store(url: str | None = None) -> Store:
    """Open (creating or migrating as needed) the history database.

    Parameters
    ----------
    url
        A SQLAlchemy URL, ``postgresql://...``, or a SQLite file path; default
        :func:`~freezeout.storage.engine.default_url` (``$FREEZEOUT_DB`` or a file under the
        user's data directory).

    Returns
    -------
    Store
        Ready to use, at :data:`~freezeout.storage.migrations.LATEST_VERSION`.

    Raises
    ------
    StorageError
        For an unsupported URL or a database newer than this code.
    """
    engine = make_engine(url if url is not None else default_url())
    try:
        migrate(engine)
    except BaseException:
        engine.dispose()
        raise
    return Store(engine)


def _sqlite_path(url: str) -> str | None:
    """The file a SQLite URL names, or None (another backend, in memory, unreadable URL)."""
    from sqlalchemy.engine import make_url

    try:
        u = make_url(normalize_url(url))
    except Exception:  # noqa: BLE001 - a bad URL is reported when the engine is made
        return None
    db = u.database
    if u.get_backend_name() != "sqlite" or not db or db == ":memory:" or db.startswith("file:"):
        return None
    return db


def open_history(url: str | None = None, *, read_only: bool = False) -> Store:
    """:func:`open_store`, with a database that cannot be used reported as bad input.

    Parameters
    ----------
    url
        As for :func:`open_store` (what ``--db`` gives).
    read_only
        For a command that only reads (``history``): a SQLite file that does not exist is
        an error, not a new empty database.

    Returns
    -------
    Store
        Ready to use.

    Raises
    ------
    InputError
        ``--db: history database: ...`` for an unsupported URL or a database newer than this
        code; with ``read_only``, ``no history database at PATH`` for a missing SQLite file,
        and a refusal for an empty one (nothing is created or written).
    """
    if read_only:
        import os

        path = _sqlite_path(url if url is not None else default_url())
        if path is not None and not os.path.isfile(path):
            raise InputError(f"no history database at {path} (nothing stored there yet, or a "
                             "mistyped --db or $FREEZEOUT_DB)")
        if path is not None and os.path.getsize(path) == 0:  # left as it is, not made one
            raise InputError(f"{path} is an empty file, not a history database")
    try:
        return open_store(url)
    except StorageError as exc:
        raise InputError(f"--db: history database: {exc}") from None
