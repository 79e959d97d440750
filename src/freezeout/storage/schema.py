"""The tables of the history database at the current schema version (SQLAlchemy core).

Every record keeps the input's SHA-256, the tool version, the options (as canonical JSON and
their SHA-256) and the full result JSON; (input SHA-256, options hash) is unique per kind.
Lot records have one ``claim_records`` row per wafer and claim. Older versions are reached
from these definitions by :mod:`freezeout.storage.migrations`.
"""

from __future__ import annotations

from sqlalchemy import (
    Column,
    Date,
    DateTime,
    Float,
    ForeignKey,
    Index,
    Integer,
    MetaData,
    String,
    Table,
    Text,
    UniqueConstraint,
)

metadata = MetaData()

schema_version = Table(
    "schema_version",
    metadata,
    Column("version", Integer, primary_key=True, autoincrement=False),
    Column("description", Text, nullable=False),
    Column("applied_at", DateTime(timezone=True), nullable=False),
)


def fit_table(md: MetaData) -> Table:
    """The ``fit_records`` table (unchanged since schema version 1) on ``md``."""
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


def lot_columns() -> list:
    """The columns of ``lot_records`` as schema version 1 made them (fresh objects)."""
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


fit_records = fit_table(metadata)
lot_records = Table(
    "lot_records", metadata, *lot_columns(),
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
#: Lots by supplier and date (for the trend), added in schema version 2.
lot_index = Index("ix_lot_supplier_date", lot_records.c.supplier, lot_records.c.lot_date)
