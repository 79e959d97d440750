"""Where the history database is and how to connect to it: URLs and engines.

One code path serves both back ends: a SQLite file by default (under the user's data
directory, or ``$FREEZEOUT_DB``), PostgreSQL when given a ``postgresql://`` URL (driven by
psycopg 3). SQLite transactions start with ``BEGIN IMMEDIATE`` so writers queue instead of
failing.
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any

import platformdirs
from sqlalchemy import Engine, create_engine, event
from sqlalchemy.engine import make_url
from sqlalchemy.pool import StaticPool

from freezeout.errors import FreezeoutError

#: Environment variable naming the database (a URL or a SQLite file path).
ENV_VAR = "FREEZEOUT_DB"


class StorageError(FreezeoutError):
    """The history database cannot be used (unsupported URL, schema newer than this tool)."""


def insert_of(conn):
    """The INSERT construct (with ON CONFLICT) of ``conn``'s back end: PostgreSQL or SQLite.

    The PostgreSQL dialect is imported only for a PostgreSQL connection: its module loads
    the asyncpg dialect too, a cost a SQLite history need not pay on every command.
    """
    if conn.dialect.name == "postgresql":
        from sqlalchemy.dialects.postgresql import insert
    else:
        from sqlalchemy.dialects.sqlite import insert
    return insert


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
