"""Versioned schema steps of the history database and the code that applies them.

:data:`MIGRATIONS` are applied in order, each in its own transaction under a lock (SQLite's
write lock, a PostgreSQL advisory lock), and recorded in the ``schema_version`` table.
Opening an older database migrates it; a newer one is refused.
"""

from __future__ import annotations

import datetime as _dt
import json
from collections.abc import Callable, Iterable
from dataclasses import dataclass

from sqlalchemy import Engine, MetaData, Table, func, inspect, select, text
from sqlalchemy.engine import Connection

from freezeout.storage.engine import StorageError
from freezeout.storage.rows import claim_rows_from_document
from freezeout.storage.schema import (
    claim_records,
    fit_table,
    lot_columns,
    lot_index,
    lot_records,
    schema_version,
)

# Arbitrary constant key of the PostgreSQL advisory lock that serialises migrations.
_PG_MIGRATION_LOCK = 7_140_315_926


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
    fit_table(md)
    Table("lot_records", md, *lot_columns())
    md.create_all(conn)


def _v2(conn: Connection) -> None:
    conn.execute(text("ALTER TABLE lot_records ADD COLUMN decision_rule VARCHAR(16)"))
    claim_records.create(conn)
    lot_index.create(conn)
    # backfill from the result JSON kept with every lot record
    rows = conn.execute(select(lot_records.c.id, lot_records.c.result_json)).all()
    for rid, result_json in rows:
        result = json.loads(result_json)
        rule = (result.get("decision") or {}).get("rule")
        conn.execute(lot_records.update().where(lot_records.c.id == rid)
                     .values(decision_rule=rule))
        claims = claim_rows_from_document(result, rid)
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
        An engine made by :func:`freezeout.storage.engine.make_engine`.

    Returns
    -------
    int
        The highest version recorded in ``schema_version``.
    """
    with engine.begin() as conn:
        return _current_version(conn)


def _too_new(current: int, latest: int) -> StorageError:
    return StorageError(
        f"the history database has schema version {current}, newer than this freezeout "
        f"knows ({latest}); upgrade freezeout")


def migrate(engine: Engine, target: int | None = None,
            migrations: Iterable[Migration] | None = None) -> int:
    """Bring a database to a schema version, one transaction per step.

    Parameters
    ----------
    engine
        An engine made by :func:`freezeout.storage.engine.make_engine`.
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
                raise _too_new(current, latest)
            if current >= step.version:
                continue
            step.apply(conn)
            conn.execute(schema_version.insert().values(
                version=step.version, description=step.description,
                applied_at=_dt.datetime.now(_dt.UTC)))
    with engine.begin() as conn:
        current = _current_version(conn)
    if current > latest:
        raise _too_new(current, latest)
    return current
