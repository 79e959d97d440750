"""Typed reads of a lot file's TOML values: strings, numbers, tables, known keys.

Each read either returns the value or raises an :class:`~freezeout.errors.InputError` located
by :class:`freezeout.claims.lot_locator.LotContext` (file, line, key path).
"""

from __future__ import annotations

import math

from freezeout.claims.lot_locator import LotContext, key_path


def check_keys(ctx: LotContext, d: dict, allowed: set[str], table: str,
               index: int | None) -> None:
    """Refuse a key of ``d`` that is not in ``allowed``, listing the known ones."""
    for k in d:
        if k not in allowed:
            known = ", ".join(sorted(allowed))
            raise ctx.error(f"unknown key {k!r} (known keys: {known})",
                            key_path(table, index, k), table, index, k)


def read_string(ctx: LotContext, d: dict, key: str, table: str, index: int | None, *,
                required: bool) -> str | None:
    """``d[key]`` as a stripped non-empty string; None when absent and not ``required``."""
    if key not in d:
        if required:
            where = f"[{key_path(table, index)}]" if table else "the top level"
            raise ctx.error(f"missing key {key!r} in {where}", key_path(table, index, key),
                            table, index)
        return None
    v = d[key]
    if not isinstance(v, str) or not v.strip():
        raise ctx.error(f"{key} must be a non-empty string, got {v!r}",
                        key_path(table, index, key), table, index, key)
    return v.strip()


def read_number(ctx: LotContext, d: dict, key: str, table: str,
                index: int | None) -> float | None:
    """``d[key]`` as a finite float (a TOML integer or float); None when absent."""
    if key not in d:
        return None
    v = d[key]
    if isinstance(v, bool) or not isinstance(v, int | float):
        raise ctx.error(f"{key} must be a number, got {v!r}", key_path(table, index, key),
                        table, index, key)
    if not math.isfinite(v):
        raise ctx.error(f"{key} must be finite, got {v!r}", key_path(table, index, key),
                        table, index, key)
    return float(v)


def read_table(ctx: LotContext, top: dict, key: str) -> dict:
    """The required table ``[key]``."""
    if key not in top:
        raise ctx.error(f"missing table [{key}]", key)
    v = top[key]
    if not isinstance(v, dict):
        raise ctx.error(f"{key} must be a table [{key}]", key, key)
    return v


def read_tables(ctx: LotContext, top: dict, key: str) -> list[dict]:
    """The required, non-empty array of tables ``[[key]]``."""
    if key not in top:
        raise ctx.error(f"missing [[{key}]] entries: at least one is needed", key)
    v = top[key]
    if not isinstance(v, list) or not all(isinstance(e, dict) for e in v):
        raise ctx.error(f"{key} must be an array of tables [[{key}]]", key, key)
    if not v:
        raise ctx.error(f"at least one [[{key}]] entry is needed", key)
    return v
