"""The values of a reduced run's columns: read, converted to canonical units, checked.

Every check comes after the unit conversion, so that ``1e-300 [K]`` and ``1e-297 [mK]`` are
refused alike, and names the file, line and column of the first bad cell in file order.
"""

from __future__ import annotations

import numpy as np

from freezeout.errors import InputError
from freezeout.io.run_columns import RANGES
from freezeout.io.table_reader import Table, column_numbers, earliest, extra_cells
from freezeout.numbers.cells import is_missing, parse_number_cell
from freezeout.numbers.units import CANONICAL
from freezeout.physics.constants import Q

__all__ = ["density_hall_note", "read_columns"]

#: Columns that must have a value on every row.
_REQUIRED = {("temperature", False), ("density", False), ("hall_coefficient", False),
             ("density_p", False)}

#: Quantities whose stated uncertainty may not be zero (the density's is refused in
#: reduced_csv_reader, with the rule "on every row or none"; a temperature may be exact).
_NO_ZERO_ERROR = frozenset({"resistivity", "conductivity", "mobility", "hall_coefficient"})

#: Coverage factor for "disagree beyond their uncertainties" (common practice, no source).
AGREEMENT_K = 3.0
#: Relative tolerance of that comparison when neither column has uncertainties (project
#: choice, no source: rounding to three digits stays well inside it).
AGREEMENT_REL = 0.01


def _cell_parser(table: Table, required: bool, column: str):
    def parse(cell: str, line: int) -> float:
        if is_missing(cell):
            if required:
                raise InputError(f"missing value {cell!r}" if cell else "empty cell",
                                 file=table.source, line=line, column=column)
            return np.nan
        return parse_number_cell(cell, file=table.source, line=line, column=column)
    return parse


def _first(mask) -> int | None:
    hits = np.flatnonzero(mask)
    return int(hits[0]) if hits.size else None


def _check(values, raw, key, table, column, cells) -> tuple[int, InputError] | None:
    """The first value outside its quantity's range, after conversion, or None."""
    quantity, is_err = key
    lo, hi = RANGES[quantity]
    unit_name = CANONICAL["density" if quantity == "density_p" else quantity]
    given = ~np.isnan(raw)

    def err(i, message):
        return int(i), InputError(message, file=table.source, line=int(table.lines[i]),
                                  column=column)

    def cell(i):
        return cells[i]

    if is_err:
        i = _first(given & (values < 0))
        if i is not None:
            return err(i, f"uncertainty {cell(i)} is negative")
        i = _first(given & (values == 0)) if quantity in _NO_ZERO_ERROR else None
        if i is not None:  # (a guarded decision would take it as proof of conformity)
            return err(i, f"uncertainty {cell(i)} is zero, which no measured "
                          f"{quantity.replace('_', ' ')} has; leave the cell empty where it "
                          "is unknown")
        i = _first(given & ~np.isfinite(values))
        if i is not None:
            return err(i, f"uncertainty {cell(i)} becomes infinite on conversion to "
                          f"{unit_name}; check its unit")
        i = _first(given & ~(values <= hi))
        if i is not None:
            return err(i, f"uncertainty {cell(i)} is {values[i]:g} {unit_name}, beyond any "
                          f"{quantity.replace('_', ' ')} (over {hi:g} {unit_name}); check "
                          "its unit")
        return None
    i = _first(given & ~np.isfinite(values))
    if i is not None:
        return err(i, f"{quantity.replace('_', ' ')} {cell(i)} becomes infinite on "
                      f"conversion to {unit_name}; check its unit")
    if quantity == "temperature":
        i = _first(given & ((values <= 0) | (values < lo) | (values > hi)))
        if i is None:
            return None
        if values[i] <= 0:
            return err(i, f"temperature {cell(i)} is not above absolute zero")
        return err(i, f"temperature {cell(i)} ({values[i]:.4g} K) is outside the range "
                      f"{lo:g} K to {hi:g} K of a measurement; check its unit")
    mag = np.abs(values) if quantity in ("density", "hall_coefficient") else values
    i = _first(given & ~((mag >= lo) & (mag <= hi)))
    if i is not None:
        return err(i, f"{quantity.replace('_', ' ')} {cell(i)} is outside the plausible range "
                      f"[{lo:g}, {hi:g}] in canonical units")
    return None


def _width_error(table: Table, flag_col: int | None) -> tuple[int, InputError] | None:
    n = len(table.header)
    widths = table.widths
    short = widths < n
    if flag_col is not None and flag_col == n - 1:
        short &= widths != n - 1  # a row may leave out its empty flags cell
    i = _first(short)
    if i is not None:
        cells = "cell" if widths[i] == 1 else "cells"
        return i, InputError(f"row has {widths[i]} {cells}, the header has {n} (truncated "
                             "line?)", file=table.source, line=int(table.lines[i]),
                             column=table.header[widths[i]])
    if table.n_columns > n:
        i = _first(extra_cells(table, n))
        if i is not None:
            return i, InputError(f"row has {widths[i]} cells, the header has {n}",
                                 file=table.source, line=int(table.lines[i]))
    return None


def read_columns(table: Table, plan) -> tuple[dict, list[str]]:
    """Read, convert and check every used column of a reduced run.

    Parameters
    ----------
    table
        The table.
    plan
        Its :class:`~freezeout.io.run_columns.ColumnPlan`.

    Returns
    -------
    values, flags
        ``(quantity, is_error) -> canonical values`` (NaN where an optional cell is
        missing), and the ``flags`` text of each row.

    Raises
    ------
    InputError
        The first bad row in file order: a short row, a cell that is not a number, a missing
        required value, a value outside its range after conversion, an infinite uncertainty.
    """
    errors = [_width_error(table, plan.flag_col)]
    out = {}
    for key, (j, unit, h) in plan.cols.items():
        raw, problem = column_numbers(table, j, _cell_parser(table, key in _REQUIRED, h))
        if problem is not None:
            errors.append(problem)
            out[key] = raw
            continue
        with np.errstate(over="ignore", invalid="ignore"):
            values = unit.scale_uncertainty(raw) if key[1] else unit.to_canonical(raw)
        errors.append(_check(values, raw, key, table, h, table.cells[j]))
        out[key] = values
    earliest(errors)
    if plan.flag_col is not None:
        flags = list(table.cells[plan.flag_col])
    else:
        flags = [""] * table.n_rows
    return out, flags


def density_hall_note(dens, dens_err, rh, rh_err, r_file, temperature, lines, plan
                      ) -> str | None:
    """A note when the density and the Hall-coefficient columns disagree, else None.

    They should agree as n = r_H / (q |R_H|) with the file's Hall factor; disagreement
    beyond :data:`AGREEMENT_K` combined standard uncertainties (or :data:`AGREEMENT_REL`
    without uncertainties) is said, and that the density column is the one the fit used.

    Parameters
    ----------
    dens, dens_err
        Density and its uncertainty (or None) as in the file. [cm^-3]
    rh, rh_err
        Hall coefficient and its uncertainty (or None). [cm^3/C]
    r_file
        The Hall factor the file's densities carry. [1]
    temperature, lines
        Temperature [K] and file line of each point, for the note.
    plan
        The column plan, for the column names.
    """
    ok = np.isfinite(dens) & np.isfinite(rh) & (rh != 0)
    if not ok.any():
        return None
    with np.errstate(divide="ignore", invalid="ignore"):
        from_rh = r_file / (Q * np.abs(rh))
        var = np.zeros_like(from_rh)
        if dens_err is not None:
            var = var + np.nan_to_num(dens_err) ** 2
        if rh_err is not None:
            var = var + np.nan_to_num(from_rh * rh_err / np.abs(rh)) ** 2
        diff = np.abs(dens - from_rh)
        limit = np.where(var > 0, AGREEMENT_K * np.sqrt(var),
                         AGREEMENT_REL * np.maximum(dens, from_rh))
        bad = ok & (diff > limit)
    if not bad.any():
        return None
    worst = int(np.argmax(np.where(bad, diff / np.where(limit > 0, limit, 1.0), -np.inf)))
    n_col = plan.cols[("density", False)][2]
    r_col = plan.cols[("hall_coefficient", False)][2]
    how = (f"{AGREEMENT_K:g} combined standard uncertainties" if (var[bad] > 0).any()
           else f"{AGREEMENT_REL:.0%} (no uncertainties given)")
    return (f"the density column {n_col!r} and the Hall coefficient column {r_col!r} disagree "
            f"beyond {how} at {int(bad.sum())} of {int(ok.sum())} points (most at "
            f"{temperature[worst]:g} K, line {int(lines[worst])}: n = {dens[worst]:.4g} "
            f"cm^-3, r_H/(q|R_H|) = {from_rh[worst]:.4g} cm^-3 with r_H = {r_file:g}); the "
            "fit used the density column (it takes precedence; R_H gives only each point's "
            "carrier type)")
