"""History of fits and lot qualifications in SQLite or PostgreSQL (SQLAlchemy core).

One code path serves both back ends: a SQLite file by default (under the user's data
directory, or ``$FREEZEOUT_DB``), PostgreSQL when given a ``postgresql://`` URL (driven by
psycopg 3).

Every record keeps the input's SHA-256, the tool version, the options (as canonical JSON and
their SHA-256) and the full result JSON. A record is identified by (input SHA-256, options
hash): saving the same input with the same options again stores nothing and returns the
existing record. Writes are single transactions, so a writer that fails or is killed midway
leaves no partial record; concurrent writers lose nothing and never store a record twice
(``INSERT ... ON CONFLICT DO NOTHING`` inside the transaction; SQLite transactions start with
``BEGIN IMMEDIATE`` so writers queue instead of failing).

The schema is versioned: :data:`MIGRATIONS` are applied in order, each in its own transaction
under a lock (SQLite's write lock, a PostgreSQL advisory lock), and recorded in the
``schema_version`` table. Opening an older database migrates it; a newer one is refused.
"""

from __future__ import annotations

import datetime as _dt
import hashlib
import json
import os
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import platformdirs
from sqlalchemy import (
    Column,
    Date,
    DateTime,
    Engine,
    Float,
    ForeignKey,
    Index,
    Integer,
    MetaData,
    String,
    Table,
    Text,
    UniqueConstraint,
    create_engine,
    event,
    func,
    inspect,
    select,
    text,
)
from sqlalchemy.dialects import postgresql as _pg
from sqlalchemy.dialects import sqlite as _sqlite
from sqlalchemy.engine import Connection, make_url
from sqlalchemy.pool import StaticPool

from freezeout.errors import FreezeoutError, InputError
from freezeout.numbers import finite_or_none

#: Environment variable naming the database (a URL or a SQLite file path).
ENV_VAR = "FREEZEOUT_DB"

# Arbitrary constant key of the PostgreSQL advisory lock that serialises migrations.
_PG_MIGRATION_LOCK = 7_140_315_926


class StorageError(FreezeoutError):
    """The history database cannot be used (unsupported URL, schema newer than this tool)."""


# ---------------------------------------------------------------------------------------------
# schema (current version)

metadata = MetaData()

schema_version = Table(
    "schema_version",
    metadata,
    Column("version", Integer, primary_key=True, autoincrement=False),
    Column("description", Text, nullable=False),
    Column("applied_at", DateTime(timezone=True), nullable=False),
)


def _fit_table(md: MetaData) -> Table:
    return Table(
        "fit_records",
        md,
        Column("id", Integer, primary_key=True),
        Column("created_at", DateTime(timezone=True), nullable=False),
        Column("input_name", Text, nullable=False),
        Column("input_sha256", String(64), nullable=False),
        Column("options_json", Text, nullable=False),
        Column("options_hash", String(64), nullable=False),
        Column("tool_version", Text, nullable=False),
        Column("material", Text),
        Column("carrier", String(1)),
        Column("net_doping", Float),
        Column("net_doping_stderr", Float),
        Column("result_json", Text, nullable=False),
        UniqueConstraint("input_sha256", "options_hash", name="uq_fit_input_options"),
    )


def _lot_columns() -> list:
    return [
        Column("id", Integer, primary_key=True),
        Column("created_at", DateTime(timezone=True), nullable=False),
        Column("supplier", Text, nullable=False),
        Column("lot", Text, nullable=False),
        Column("lot_date", Date, nullable=False),
        Column("verdict", String(16), nullable=False),
        Column("input_name", Text, nullable=False),
        Column("input_sha256", String(64), nullable=False),
        Column("options_json", Text, nullable=False),
        Column("options_hash", String(64), nullable=False),
        Column("tool_version", Text, nullable=False),
        Column("result_json", Text, nullable=False),
        UniqueConstraint("input_sha256", "options_hash", name="uq_lot_input_options"),
    ]


fit_records = _fit_table(metadata)
lot_records = Table(
    "lot_records", metadata, *_lot_columns(),
    Column("decision_rule", String(16)),  # added in schema version 2
)
claim_records = Table(
    "claim_records",
    metadata,
    Column("id", Integer, primary_key=True),
    Column("lot_record_id", Integer, ForeignKey("lot_records.id", ondelete="CASCADE"),
           nullable=False),
    Column("wafer_id", Text, nullable=False),
    Column("claim_index", Integer, nullable=False),
    Column("claim_key", Text),
    Column("quantity", String(32), nullable=False),
    Column("unit", Text),
    Column("temperature_K", Float),
    Column("measured", Float),
    Column("measured_text", Text),
    Column("stderr", Float),
    Column("coverage_factor", Float),
    Column("spec_min", Float),
    Column("spec_max", Float),
    Column("nominal", Float),
    Column("claimed", Float),
    Column("claimed_text", Text),
    Column("verdict", String(16), nullable=False),
    Column("margin", Float),
    UniqueConstraint("lot_record_id", "wafer_id", "claim_index", name="uq_claim_position"),
)
_lot_index = Index("ix_lot_supplier_date", lot_records.c.supplier, lot_records.c.lot_date)


# ---------------------------------------------------------------------------------------------
# migrations


@dataclass(frozen=True)
class Migration:
    """One versioned schema step.

    Attributes
    ----------
    version
        The schema version after the step.
    description
        What it does, recorded in ``schema_version``.
    apply
        Function of a :class:`sqlalchemy.engine.Connection` inside the step's transaction.
    """

    version: int
    description: str
    apply: Callable[[Connection], None]


def _v1(conn: Connection) -> None:
    md = MetaData()
    _fit_table(md)
    Table("lot_records", md, *_lot_columns())
    md.create_all(conn)


def _v2(conn: Connection) -> None:
    conn.execute(text("ALTER TABLE lot_records ADD COLUMN decision_rule VARCHAR(16)"))
    claim_records.create(conn)
    _lot_index.create(conn)
    # backfill from the result JSON kept with every lot record
    rows = conn.execute(select(lot_records.c.id, lot_records.c.result_json)).all()
    for rid, result_json in rows:
        result = json.loads(result_json)
        rule = (result.get("decision") or {}).get("rule")
        conn.execute(lot_records.update().where(lot_records.c.id == rid)
                     .values(decision_rule=rule))
        claims = _claim_rows(result, rid)
        if claims:
            conn.execute(claim_records.insert(), claims)


#: Schema steps, applied in order.
MIGRATIONS: tuple[Migration, ...] = (
    Migration(1, "fit_records and lot_records", _v1),
    Migration(2, "claim_records and lot_records.decision_rule, backfilled from result_json",
              _v2),
)

#: The schema version this code writes.
LATEST_VERSION = MIGRATIONS[-1].version


def _lock(conn: Connection) -> None:
    if conn.dialect.name == "postgresql":
        conn.execute(text("SELECT pg_advisory_xact_lock(:k)"), {"k": _PG_MIGRATION_LOCK})
    # SQLite: the transaction began with BEGIN IMMEDIATE and holds the write lock already


def _current_version(conn: Connection) -> int:
    if not inspect(conn).has_table("schema_version"):
        return 0
    v = conn.execute(select(func.max(schema_version.c.version))).scalar()
    return int(v or 0)


def schema_version_of(engine: Engine) -> int:
    """The schema version of a database (0 when it has none yet).

    Parameters
    ----------
    engine
        An engine made by :func:`make_engine`.

    Returns
    -------
    int
        The highest version recorded in ``schema_version``.
    """
    with engine.begin() as conn:
        return _current_version(conn)


def migrate(engine: Engine, target: int | None = None,
            migrations: Iterable[Migration] | None = None) -> int:
    """Bring a database to a schema version, one transaction per step.

    Parameters
    ----------
    engine
        An engine made by :func:`make_engine`.
    target
        The version to reach; default :data:`LATEST_VERSION`.
    migrations
        The steps (default :data:`MIGRATIONS`); for tests.

    Returns
    -------
    int
        The version reached.

    Raises
    ------
    StorageError
        If the database is newer than this code knows.
    """
    steps = tuple(MIGRATIONS if migrations is None else migrations)
    latest = steps[-1].version
    target = latest if target is None else target
    for step in steps:
        if step.version > target:
            break
        with engine.begin() as conn:
            _lock(conn)
            schema_version.create(conn, checkfirst=True)
            current = _current_version(conn)
            if current > latest:
                raise StorageError(
                    f"the history database has schema version {current}, newer than this "
                    f"freezeout knows ({latest}); upgrade freezeout")
            if current >= step.version:
                continue
            step.apply(conn)
            conn.execute(schema_version.insert().values(
                version=step.version, description=step.description,
                applied_at=_dt.datetime.now(_dt.UTC)))
    with engine.begin() as conn:
        current = _current_version(conn)
    if current > latest:
        raise StorageError(
            f"the history database has schema version {current}, newer than this freezeout "
            f"knows ({latest}); upgrade freezeout")
    return current


# ---------------------------------------------------------------------------------------------
# engines and URLs


def default_url() -> str:
    """``$FREEZEOUT_DB`` if set, else a SQLite file under the user's data directory."""
    env = os.environ.get(ENV_VAR)
    if env:
        return normalize_url(env)
    path = Path(platformdirs.user_data_dir("freezeout")) / "history.sqlite3"
    return f"sqlite:///{path}"


def normalize_url(url: str) -> str:
    """Turn what a user may write into a SQLAlchemy URL.

    A plain path becomes a SQLite file URL; ``postgresql://`` and ``postgres://`` select the
    psycopg 3 driver; other URLs pass unchanged.

    Parameters
    ----------
    url
        A database URL or a file path.

    Returns
    -------
    str
        A SQLAlchemy URL.
    """
    u = url.strip()
    if "://" not in u:
        return f"sqlite:///{Path(u).expanduser().resolve()}"
    for prefix in ("postgresql://", "postgres://"):
        if u.startswith(prefix):
            return "postgresql+psycopg://" + u[len(prefix):]
    return u


def make_engine(url: str) -> Engine:
    """An engine for a SQLite or PostgreSQL URL, set up for safe concurrent writing.

    Parameters
    ----------
    url
        A URL accepted by :func:`normalize_url`.

    Returns
    -------
    sqlalchemy.Engine
        For SQLite: foreign keys on, a 60 s busy timeout, transactions begun with
        ``BEGIN IMMEDIATE``. For PostgreSQL: psycopg 3, pre-ping.

    Raises
    ------
    StorageError
        For any other back end.
    """
    u = make_url(normalize_url(url))
    backend = u.get_backend_name()
    if backend == "sqlite":
        kwargs: dict[str, Any] = {"connect_args": {"timeout": 60.0}}
        if not u.database or u.database == ":memory:":
            kwargs["poolclass"] = StaticPool
        else:
            Path(u.database).expanduser().parent.mkdir(parents=True, exist_ok=True)
        engine = create_engine(u, **kwargs)

        @event.listens_for(engine, "connect")
        def _on_connect(dbapi_connection, _record):  # pragma: no cover - driver callback
            dbapi_connection.isolation_level = None  # we emit BEGIN ourselves
            cur = dbapi_connection.cursor()
            cur.execute("PRAGMA foreign_keys = ON")
            cur.close()

        @event.listens_for(engine, "begin")
        def _on_begin(conn):  # pragma: no cover - driver callback
            conn.exec_driver_sql("BEGIN IMMEDIATE")

        return engine
    if backend == "postgresql":
        return create_engine(u, pool_pre_ping=True)
    raise StorageError(f"unsupported database {u.render_as_string(hide_password=True)!r}: "
                       "use a SQLite file or a postgresql:// URL")


# ---------------------------------------------------------------------------------------------
# records


def canonical_json(obj: Any) -> str:
    """JSON with sorted keys and no spaces: equal data give equal text (and hash)."""
    return json.dumps(obj, sort_keys=True, separators=(",", ":"), default=str)


def options_hash(options: Mapping[str, Any]) -> str:
    """SHA-256 (hex) of the canonical JSON of an options mapping."""
    return hashlib.sha256(canonical_json(dict(options)).encode("utf-8")).hexdigest()



def _claim_rows(result: Mapping, lot_record_id: int) -> list[dict]:
    """Claim rows from a lot result (``LotVerdict.to_dict()``)."""
    rows = []
    for w in result.get("wafers") or []:
        for i, c in enumerate(w.get("claims") or []):
            m = c.get("measured") or {}
            spec = c.get("spec") or {}
            value = m.get("value")
            rows.append({
                "lot_record_id": lot_record_id,
                "wafer_id": str(w.get("id")),
                "claim_index": i,
                "claim_key": c.get("claim"),
                "quantity": str(c.get("quantity")),
                "unit": c.get("unit"),
                "temperature_K": finite_or_none(c.get("temperature_K")),
                "measured": finite_or_none(value),
                "measured_text": value if isinstance(value, str) else None,
                "stderr": finite_or_none(m.get("stderr")),
                "coverage_factor": finite_or_none(c.get("coverage_factor")),
                "spec_min": finite_or_none(spec.get("min")),
                "spec_max": finite_or_none(spec.get("max")),
                "nominal": finite_or_none(spec.get("nominal")),
                "claimed": finite_or_none(c.get("claimed_reference")),
                "claimed_text": spec.get("value") if isinstance(spec.get("value"), str) else None,
                "verdict": str(c.get("verdict")),
                "margin": finite_or_none(c.get("margin_U")),
            })
    return rows


@dataclass(frozen=True)
class SaveOutcome:
    """What a save did.

    Attributes
    ----------
    record_id
        The id of the record (new or existing).
    created
        False when the same input and options were stored before (nothing was written).
    """

    record_id: int
    created: bool


@dataclass(frozen=True)
class Record:
    """One stored fit or lot qualification, as listed by :meth:`Store.list_records`.

    Attributes
    ----------
    kind
        ``"fit"`` or ``"lot"``.
    record_id
        Its id within its kind.
    created_at
        When it was stored (UTC).
    input_name, input_sha256, tool_version, options
        Provenance.
    supplier, lot, lot_date, verdict, decision_rule
        For lot records (None for fits).
    material, carrier, net_doping, net_doping_stderr
        For fit records (None for lots); net doping in [cm^-3].
    """

    kind: str
    record_id: int
    created_at: _dt.datetime
    input_name: str
    input_sha256: str
    tool_version: str
    options: dict
    supplier: str | None = None
    lot: str | None = None
    lot_date: _dt.date | None = None
    verdict: str | None = None
    decision_rule: str | None = None
    material: str | None = None
    carrier: str | None = None
    net_doping: float | None = None
    net_doping_stderr: float | None = None

    def to_dict(self) -> dict:
        """Plain-JSON form."""
        return {
            "kind": self.kind,
            "id": self.record_id,
            "created_at": self.created_at.isoformat(),
            "input_name": self.input_name,
            "input_sha256": self.input_sha256,
            "tool_version": self.tool_version,
            "options": self.options,
            "supplier": self.supplier,
            "lot": self.lot,
            "lot_date": None if self.lot_date is None else self.lot_date.isoformat(),
            "verdict": self.verdict,
            "decision_rule": self.decision_rule,
            "material": self.material,
            "carrier": self.carrier,
            "net_doping_cm3": self.net_doping,
            "net_doping_stderr_cm3": self.net_doping_stderr,
        }


@dataclass(frozen=True)
class TrendPoint:
    """Measured against claimed for one lot and one claimed quantity.

    Attributes
    ----------
    supplier, lot, lot_date
        The lot.
    quantity, unit, temperature_K
        The claimed quantity, its canonical unit, and the claim temperature [K].
    n_wafers
        Wafers with a measured value for this claim.
    mean_ratio, min_ratio, max_ratio
        measured / claimed over those wafers, where claimed is the nominal value, else the
        midpoint of a two-sided window, else the one limit. [1]
    spec_min_ratio, spec_max_ratio
        The specification limits over the claimed value (None when one-sided). [1]
    lot_verdict
        The lot's verdict.
    lot_record_id
        The lot record.
    """

    supplier: str
    lot: str
    lot_date: _dt.date
    quantity: str
    unit: str | None
    temperature_K: float | None
    n_wafers: int
    mean_ratio: float
    min_ratio: float
    max_ratio: float
    spec_min_ratio: float | None
    spec_max_ratio: float | None
    lot_verdict: str
    lot_record_id: int

    def to_dict(self) -> dict:
        """Plain-JSON form."""
        d = dict(self.__dict__)
        d["lot_date"] = self.lot_date.isoformat()
        return d


def _aware(t: _dt.datetime) -> _dt.datetime:
    return t if t.tzinfo is not None else t.replace(tzinfo=_dt.UTC)


def _as_date(since: _dt.date | str | None) -> _dt.date | None:
    if since is None or isinstance(since, _dt.date):
        return since.date() if isinstance(since, _dt.datetime) else since
    try:
        return _dt.date.fromisoformat(str(since).strip())
    except ValueError:
        raise InputError(f"not a date (write 2026-11-03): {since!r}", column="since") from None


class Store:
    """The history database.

    Open with :func:`open_store`. All methods are safe to call from several processes at once.

    Parameters
    ----------
    engine
        An engine from :func:`make_engine`, already migrated.
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
        dialect = _pg if conn.dialect.name == "postgresql" else _sqlite
        stmt = (dialect.insert(table).values(**row)
                .on_conflict_do_nothing(index_elements=["input_sha256", "options_hash"])
                .returning(table.c.id))
        new_id = conn.execute(stmt).scalar_one_or_none()
        if new_id is not None:
            return SaveOutcome(int(new_id), True)
        old_id = conn.execute(select(table.c.id).where(
            table.c.input_sha256 == row["input_sha256"],
            table.c.options_hash == row["options_hash"])).scalar_one()
        return SaveOutcome(int(old_id), False)

    @staticmethod
    def _provenance(input_name: str, input_sha256: str, options: Mapping[str, Any],
                    tool_version: str, result: Mapping) -> dict:
        if not (isinstance(input_sha256, str) and len(input_sha256) == 64):
            raise InputError(f"input_sha256 must be a 64-digit hex digest, got {input_sha256!r}")
        opts = canonical_json(dict(options))
        return {
            "created_at": _dt.datetime.now(_dt.UTC),
            "input_name": str(input_name),
            "input_sha256": input_sha256.lower(),
            "options_json": opts,
            "options_hash": hashlib.sha256(opts.encode("utf-8")).hexdigest(),
            "tool_version": str(tool_version),
            "result_json": canonical_json(dict(result)),
        }

    def save_fit(self, result: Mapping, *, input_name: str, input_sha256: str,
                 options: Mapping[str, Any], tool_version: str) -> SaveOutcome:
        """Store a fit result once.

        Parameters
        ----------
        result
            The fit result JSON (``fit_file(...).to_dict()``).
        input_name
            The run file's name.
        input_sha256
            SHA-256 of the run file's bytes (hex).
        options
            The fit options that, with the input, determine the result.
        tool_version
            freezeout's version.

        Returns
        -------
        SaveOutcome
            The record id and whether it was written now (False: already stored for this
            input and options, nothing written).
        """
        row = self._provenance(input_name, input_sha256, options, tool_version, result)
        material = result.get("material")
        net = result.get("net_doping_cm3") or {}
        row.update(
            material=material.get("name") if isinstance(material, Mapping) else material,
            carrier=result.get("carrier"),
            net_doping=finite_or_none(net.get("value")),
            net_doping_stderr=finite_or_none(net.get("stderr")),
        )
        with self.engine.begin() as conn:
            return self._insert_once(conn, fit_records, row)

    def save_lot(self, result: Mapping, *, input_name: str, input_sha256: str,
                 options: Mapping[str, Any], tool_version: str) -> SaveOutcome:
        """Store a lot qualification once, with one row per wafer and claim.

        Parameters
        ----------
        result
            The lot JSON (``LotVerdict.to_dict()``): ``supplier``, ``lot``, ``date``,
            ``verdict``, ``decision``, ``wafers``.
        input_name
            The lot file's name.
        input_sha256
            SHA-256 over the lot file and the files it refers to
            (:func:`freezeout.claims.lotfile.lot_input_sha256`).
        options
            The options that, with the input, determine the result.
        tool_version
            freezeout's version.

        Returns
        -------
        SaveOutcome
            The record id and whether it was written now. The lot row and its claim rows are
            written in one transaction: all or nothing.
        """
        row = self._provenance(input_name, input_sha256, options, tool_version, result)
        try:
            lot_date = _dt.date.fromisoformat(str(result["date"]))
            row.update(supplier=str(result["supplier"]), lot=str(result["lot"]),
                       lot_date=lot_date, verdict=str(result["verdict"]),
                       decision_rule=(result.get("decision") or {}).get("rule"))
        except (KeyError, ValueError) as exc:
            raise InputError(f"not a lot result: {exc}") from None
        with self.engine.begin() as conn:
            outcome = self._insert_once(conn, lot_records, row)
            if outcome.created:
                claims = _claim_rows(result, outcome.record_id)
                if claims:
                    conn.execute(claim_records.insert(), claims)
            return outcome

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
                    q = q.where(lot_records.c.supplier == supplier)
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
            The supplier, as written in the lot files.

        Returns
        -------
        list of TrendPoint
            In lot-date order.
        """
        q = (select(lot_records.c.id, lot_records.c.lot, lot_records.c.lot_date,
                    lot_records.c.verdict, lot_records.c.created_at, claim_records)
             .join(claim_records, claim_records.c.lot_record_id == lot_records.c.id)
             .where(lot_records.c.supplier == supplier)
             .where(claim_records.c.measured.is_not(None))
             .where(claim_records.c.claimed.is_not(None)))
        with self.engine.begin() as conn:
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
        :func:`default_url` (``$FREEZEOUT_DB`` or a file under the user's data directory).

    Returns
    -------
    Store
        Ready to use, at :data:`LATEST_VERSION`.

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
