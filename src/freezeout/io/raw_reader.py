"""Reader of raw van der Pauw / Hall readings (the raw-readings CSV format of freezeout).

One row per reading, columns ``T [unit]``, ``B [unit]``, ``I [unit]``, ``I+``, ``I-``,
``V+``, ``V-``, ``V [unit]`` in any order (other columns are ignored); ``#`` lines before
the header carry ``key: value`` metadata (``sample``, ``thickness``, ``geometry``,
``width``, ``spacing``, ...). The format is documented in ``docs/raw_format.md``.

This module is the only place where the raw format's units are converted; everything it
returns is in canonical units (K, T, A, V, cm). It reads only: the checks that need the
contact configurations, and the grouping by set point, are the reduction's
(:func:`freezeout.reduction.readings_from_table`).
"""

from __future__ import annotations

import codecs
import csv
import math
import os
import re
import stat

import numpy as np

from freezeout.errors import InputError
from freezeout.io.run_columns import header_names_run
from freezeout.io.table_reader import column_numbers, earliest, extra_cells, read_table
from freezeout.numbers.cells import parse_number_cell
from freezeout.numbers.digest import sha256_bytes
from freezeout.numbers.units import CANONICAL, parse_unit, split_header
from freezeout.records.readings import RawTable

__all__ = [
    "GEOMETRY_NAMES",
    "RAW_COLUMNS",
    "RAW_TEMPERATURE_RANGE",
    "header_names_raw",
    "is_raw_file",
    "parse_length",
    "read_raw",
]

#: Column name in the file -> role in :class:`~freezeout.records.readings.RawTable`.
RAW_COLUMNS: dict[str, str] = {
    "T": "temperature",
    "B": "field",
    "I": "current",
    "I+": "i_plus",
    "I-": "i_minus",
    "V+": "v_plus",
    "V-": "v_minus",
    "V": "voltage",
}

_DIMENSION = {"temperature": "temperature", "field": "field", "current": "current",
              "voltage": "voltage"}
_CONTACT_ROLES = ("i_plus", "i_minus", "v_plus", "v_minus")
_SNIFF_BYTES = 65536

#: Temperatures read as such (project choice, no source): 0.1 K to 5000 K after conversion.
RAW_TEMPERATURE_RANGE = (0.1, 5000.0)

#: Accepted spellings of the ``# geometry:`` value -> geometry name.
GEOMETRY_NAMES: dict[str, str] = {
    "van-der-pauw": "van-der-pauw",
    "vanderpauw": "van-der-pauw",
    "vdp": "van-der-pauw",
    "hall-bar": "hall-bar",
    "hallbar": "hall-bar",
}

_NUMBER = r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?"
_LENGTH = re.compile(
    rf"^\s*(?P<value>{_NUMBER})\s*(?P<unit>[^\d\s+±/-][^\s+±/]*)?\s*"
    rf"(?:(?:\+-|\+/-|±)\s*(?P<err>{_NUMBER})\s*(?P<err_unit>[^\d\s][^\s]*)?)?\s*$"
)


def parse_length(text: str, what: str = "length") -> tuple[float, float]:
    """Parse a length with an optional uncertainty, e.g. ``"350um"`` or ``"0.35 mm +- 5 um"``.

    The uncertainty may be written ``+-``, ``+/-`` or ``±`` and given in any length unit or
    in ``%`` of the value; without a unit it takes the value's unit.

    Parameters
    ----------
    text
        The text to parse.
    what
        Name of the quantity, for messages.

    Returns
    -------
    value, uncertainty : float
        The length and its standard uncertainty (0 when not given). [cm]

    Raises
    ------
    ValueError
        If the text is not a positive length with a length unit.
    """
    m = _LENGTH.match(text)
    if not m:
        raise ValueError(f"cannot read {what} {text!r}; write e.g. '350 um' or "
                         "'350 um +- 5 um'")
    if m.group("unit") is None:
        raise ValueError(f"{what} {text!r} needs a unit (e.g. '350 um')")
    unit = parse_unit(m.group("unit"), "length")
    value = unit.to_canonical(float(m.group("value")))
    if not (math.isfinite(value) and value > 0):
        raise ValueError(f"{what} must be positive, got {text!r}")
    err = 0.0
    if m.group("err") is not None:
        err_text = m.group("err_unit")
        if err_text == "%":
            err = value * float(m.group("err")) / 100.0
        else:
            err_unit = unit if err_text is None else parse_unit(err_text, "length")
            err = err_unit.scale_uncertainty(float(m.group("err")))
        if not (math.isfinite(err) and err >= 0):
            raise ValueError(f"{what} uncertainty must be non-negative, got {text!r}")
    return float(value), float(err)


def _column_key(name: str) -> str | None:
    key = name.strip()
    for col in RAW_COLUMNS:
        if key.upper() == col:
            return col
    return None


def _names(cells) -> set[str | None]:
    return {_column_key(split_header(h)[0]) for h in cells}


def header_names_raw(cells: list[str]) -> bool:
    """Whether a row is a raw file's header: ``T`` and at least two contact columns."""
    names = _names(cells)
    return "T" in names and len(names & {"I+", "I-", "V+", "V-"}) >= 2


def is_raw_file(path) -> bool:
    """Tell whether a file looks like a raw-readings CSV (cheap: reads the head only).

    Only a regular file is opened (a pipe or a device is not a raw file, and its reader
    refuses it).

    Parameters
    ----------
    path
        File to sniff.

    Returns
    -------
    bool
        True when the first row, after any preamble, that names columns has ``I+``, ``I-``,
        ``V+`` and ``V-`` columns.
    """
    try:
        if not stat.S_ISREG(os.stat(path).st_mode):
            return False
        with open(path, "rb") as fh:
            head = fh.read(_SNIFF_BYTES)
    except (OSError, ValueError):
        return False
    enc = "utf-16" if head.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)) else "utf-8-sig"
    text = head.decode(enc, errors="replace")
    for line in text.splitlines()[:500]:
        s = line.strip()
        if not s or s.startswith("#"):
            continue
        sep = max((",", ";", "\t"), key=s.count)
        try:
            cells = next(csv.reader([s], delimiter=sep))
        except (csv.Error, StopIteration):
            continue
        names = _names(cells)
        if {"I+", "I-", "V+", "V-"} <= names:
            return True
        if header_names_run(cells):
            return False
    return False


def _resolve_length(meta_lines: dict[str, tuple[str, int]], key: str, file: str,
                    override=None) -> tuple[float | None, float, str | None]:
    """Value and uncertainty [cm] of a length metadata key (with ``<key>_uncertainty``)."""
    if override is not None:
        if isinstance(override, str):
            try:
                value, err = parse_length(override, key)
            except ValueError as exc:
                raise InputError(f"--{key}: {exc}") from None
            return value, err, override.strip()
        value = float(override)
        if not (math.isfinite(value) and value > 0):
            raise InputError(f"{key} must be a positive length in cm, got {override!r}")
        return value, 0.0, f"{value:g} cm"
    if key not in meta_lines:
        return None, 0.0, None
    text, line = meta_lines[key]
    try:
        value, err = parse_length(text, key)
    except ValueError as exc:
        raise InputError(str(exc), file=file, line=line, column=key) from None
    unc_key = f"{key}_uncertainty"
    if unc_key in meta_lines:
        unc_text, unc_line = meta_lines[unc_key]
        if err:
            raise InputError(f"{key} uncertainty given twice (with +- and as {unc_key})",
                             file=file, line=unc_line, column=unc_key)
        try:
            if unc_text.strip().endswith("%"):
                err = value * float(unc_text.strip()[:-1]) / 100.0
            else:
                err, _ = parse_length(unc_text, unc_key)
        except ValueError as exc:
            raise InputError(str(exc), file=file, line=unc_line, column=unc_key) from None
    return value, err, text


def _reading_value(cell: str, file: str, line: int, column: str) -> float:
    """A number cell of a raw file by :func:`~freezeout.numbers.cells.parse_number_cell`.

    A raw file has no missing values: an empty cell is an ``empty value``, and a cell that
    is not a number says ``not a number: '...'`` (the raw format's wording).
    """
    if not cell:
        raise InputError("empty value", file=file, line=line, column=column)
    try:
        float(cell)
    except ValueError:
        raise InputError(f"not a number: {cell!r}", file=file, line=line,
                         column=column) from None
    return parse_number_cell(cell, file=file, line=line, column=column)


def read_raw(path, *, thickness=None) -> RawTable:
    """Read and convert a raw-readings CSV (no grouping, no check of the configurations).

    The file is read by :func:`freezeout.io.table_reader.read_table`: a regular file of at
    most 50 MB and :data:`~freezeout.io.table_reader.MAX_ROWS` lines, any preamble before the
    header kept as metadata, ``,`` ``;`` or tab separators, decimal commas with ``;`` or tab,
    units in the header or on a units row under it.

    Parameters
    ----------
    path
        The raw CSV.
    thickness
        Overrides the file's ``# thickness:`` line: a string with unit and optional
        uncertainty (``"350um"``, ``"0.35 mm +- 5 um"``), or a number in cm.

    Returns
    -------
    RawTable
        The readings in canonical units, contact labels as written; the reduction checks
        and groups them (:func:`freezeout.reduction.readings_from_table`).

    Raises
    ------
    InputError
        Naming file, line and column, for: unreadable, non-regular, too large or empty
        files, a missing column, an unknown unit, a truncated row, a value that is not a
        finite number, a temperature outside 0.1 K to 5000 K after conversion, a duplicate
        row, unknown geometry, a missing or unreadable thickness (or Hall bar width and
        spacing).
    """
    file = str(path)
    table = read_table(path, is_header=header_names_raw, what="raw-readings file")
    header = list(table.header)
    number = table.header_line
    meta_lines = _metadata_lines(table)
    index: dict[str, int] = {}
    units = {}
    for pos, title in enumerate(header):
        name, unit = split_header(title)
        key = _column_key(name)
        if key is None:
            continue
        if key in index:
            raise InputError(f"column {key!r} appears twice", file=file, line=number,
                             column=title.strip())
        index[key] = pos
        role = RAW_COLUMNS[key]
        if role in _DIMENSION:
            if unit is None:
                raise InputError(f"column {key!r} needs a unit in brackets, e.g. "
                                 f"'{key} [{_example_unit(role)}]'", file=file,
                                 line=table.unit_lines[pos], column=title.strip())
            try:
                units[role] = parse_unit(unit, _DIMENSION[role])
            except ValueError as exc:
                raise InputError(str(exc), file=file, line=table.unit_lines[pos],
                                 column=title.strip()) from None
    missing = [c for c in RAW_COLUMNS if c not in index]
    if missing:
        raise InputError(f"missing column(s) {', '.join(missing)}; a raw file needs "
                         f"{', '.join(RAW_COLUMNS)}", file=file, line=number,
                         column=missing[0])
    if table.n_rows == 0:
        raise InputError("no readings after the header", file=file, line=number)
    cells: dict[str, np.ndarray] = {}
    errors = [_width_error(table), _duplicate_error(table, index)]
    for key, pos in index.items():
        role = RAW_COLUMNS[key]
        title = header[pos].strip()
        if role in _CONTACT_ROLES:
            cells[role] = table.cells[pos].astype(str)
            continue
        values, problem = column_numbers(
            table, pos, lambda cell, line, title=title: _reading_value(cell, file, line, title))
        with np.errstate(over="ignore", invalid="ignore"):
            cells[role] = units[role].to_canonical(values)
        errors.append(problem if problem is not None
                      else _range_error(table, pos, role, cells[role]))
    earliest(errors)

    metadata = {k: v for k, (v, _) in meta_lines.items()}
    if table.preamble:
        metadata.setdefault("preamble", " | ".join(text for _, text in table.preamble))
    geometry = "van-der-pauw"
    if "geometry" in meta_lines:
        g_text, g_line = meta_lines["geometry"]
        g_key = re.sub(r"[\s_]+", "-", g_text.strip().lower())
        if g_key not in GEOMETRY_NAMES:
            raise InputError(f"unknown geometry {g_text!r} (known: van-der-pauw, hall-bar)",
                             file=file, line=g_line, column="geometry")
        geometry = GEOMETRY_NAMES[g_key]
    t_value, t_err, t_text = _resolve_length(meta_lines, "thickness", file, thickness)
    if t_value is None:
        raise InputError("no thickness: add a '# thickness: 350 um' line or give "
                         "--thickness", file=file)
    metadata["thickness"] = t_text
    metadata["thickness_source"] = "file" if thickness is None else "option"
    extra: dict[str, float] = {}
    if geometry == "hall-bar":
        for key in ("width", "spacing"):
            value, err, _ = _resolve_length(meta_lines, key, file)
            if value is None:
                raise InputError(f"hall-bar geometry needs a '# {key}:' line (e.g. "
                                 f"'# {key}: 1 mm')", file=file)
            extra[key], extra[f"{key}_err"] = value, err
    columns = {role: header[index[key]].strip() for key, role in RAW_COLUMNS.items()}
    metadata["raw_sha256"] = sha256_bytes(table.data)
    return RawTable(
        source=file,
        **{role: np.asarray(cells[role], dtype=float) for role in _DIMENSION},
        **{role: np.asarray(cells[role], dtype=str) for role in _CONTACT_ROLES},
        line=np.asarray(table.lines, dtype=int),
        thickness=t_value,
        thickness_err=t_err,
        geometry=geometry,
        metadata=metadata,
        columns=columns,
        **extra,
    )


_UNIQUE_KEYS = ("thickness", "thickness_uncertainty", "geometry", "width", "spacing", "sample")


def _metadata_lines(table) -> dict[str, tuple[str, int]]:
    """``key -> (value, line)`` of the metadata before the header; key lines given once."""
    meta_lines: dict[str, tuple[str, int]] = {}
    for raw_key, value, line, _ in table.metadata:
        key = raw_key.strip().lower().replace(" ", "_").replace("-", "_")
        if key in meta_lines and key in _UNIQUE_KEYS:
            raise InputError(f"metadata {key!r} given twice (first on line "
                             f"{meta_lines[key][1]})", file=table.source, line=line,
                             column=key)
        meta_lines[key] = (value, line)
    return meta_lines


def _width_error(table):
    """The first row with fewer cells than the header (or extra cells that are not empty)."""
    n = len(table.header)
    short = np.flatnonzero(table.widths < n)
    bad = np.flatnonzero((table.widths < n) | extra_cells(table, n))
    if not bad.size:
        return None
    i = int(bad[0])
    width = int(table.widths[i])
    where = table.header[width].strip() if short.size and short[0] == i else width
    return i, InputError(f"row has {width} fields, the header has {n}"
                         + (" (truncated file?)" if width < n else ""), file=table.source,
                         line=int(table.lines[i]), column=where)


def _duplicate_error(table, index):
    """A row identical to an earlier one in every column read (a copy)."""
    seen: dict[tuple, int] = {}
    for i, row in enumerate(zip(*(table.cells[p] for p in index.values()), strict=True)):
        first = seen.setdefault(row, i)
        if first != i:
            break
    else:
        return None
    return i, InputError(f"duplicate row: identical to line {int(table.lines[first])} in "
                         "every column (repeated readings differ at least in the last "
                         "digit; remove the copy)", file=table.source,
                         line=int(table.lines[i]), column=table.header[index["V"]].strip())


def _range_error(table, pos, role, values):
    """The first value not finite after conversion, or a temperature out of its range."""
    title = table.header[pos].strip()

    def err(i, message):
        return int(i), InputError(message, file=table.source, line=int(table.lines[i]),
                                  column=title)

    bad = np.flatnonzero(~np.isfinite(values))
    if bad.size:
        return err(bad[0], f"{table.cells[pos][bad[0]]} becomes infinite on "
                           f"conversion to {CANONICAL[_DIMENSION[role]]}; check the unit")
    if role != "temperature":
        return None
    lo, hi = RAW_TEMPERATURE_RANGE
    bad = np.flatnonzero((values < lo) | (values > hi))
    if not bad.size:
        return None
    v = values[bad[0]]
    if v <= 0:
        return err(bad[0], f"temperature {v:g} K is not above absolute zero")
    return err(bad[0], f"temperature {table.cells[pos][bad[0]]} ({v:.4g} K) "
                       f"is outside the range {lo:g} K to {hi:g} K of a measurement; check "
                       "its unit")


def _example_unit(role: str) -> str:
    return {"temperature": "K", "field": "T", "current": "A", "voltage": "V"}[role]
