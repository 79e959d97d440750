"""The one table reader of the run readers: a lab's CSV file to text cells.

Python's csv module tokenises the data (separators, quotes); this module keeps what a
tokeniser cannot know: which row is the header (the first row whose cells name the columns
the caller needs, after any instrument preamble of ``key: value`` or free-text lines, with
or without ``#``), a second header row of units (``Temperature,Hall coefficient`` then
``K,m^3/C``), the decimal mark (a comma with ``;`` or tab separators), the file line of every
row (blank and ``#`` lines are skipped, so the rows tokenised are mapped back to the file's
lines) and the number of cells actually on each row (a short row is padded with empty
cells). pandas is not needed to read a file (its import alone is about 0.1 s of a command);
a DataFrame given in a program is read by :func:`freezeout.io.frame_table.table_from_frame`.

Limits (project choice, no source): a run file has at most :data:`MAX_ROWS` lines and
:data:`~freezeout.io.text_file.MAX_FILE_BYTES` bytes, checked before it is parsed.
"""

from __future__ import annotations

import csv
import io
import re
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from freezeout.errors import InputError
from freezeout.io.text_file import MAX_FILE_BYTES, read_text_file
from freezeout.numbers.units import split_header

__all__ = ["MAX_ROWS", "Table", "column_numbers", "earliest", "extra_cells", "read_table"]

#: Most lines a run file may have (project choice, no source): 200,000, about 12,500 set
#: points of a van der Pauw run read 16 ways; checked on the bytes before parsing.
MAX_ROWS = 200_000

_SEPARATORS = (",", ";", "\t")
_SEPARATOR_NAMES = {",": "comma", ";": "semicolon", "\t": "tab"}
_COMMA_NUMBER = re.compile(r"^\s*[+-]?(?:\d+,\d*|,\d+)(?:[eE][+-]?\d+)?\s*$")
_POINT_NUMBER = re.compile(r"^\s*[+-]?(?:\d+\.\d*|\.\d+)(?:[eE][+-]?\d+)?\s*$")
_BOTH_MARKS = re.compile(r"^\s*[+-]?\d[\d.]*\.\d*,\d*(?:[eE][+-]?\d+)?\s*$|"
                         r"^\s*[+-]?\d[\d,]*,\d*\.\d*(?:[eE][+-]?\d+)?\s*$")


@dataclass(frozen=True, eq=False)
class Table:
    """A table read from a lab file: text cells, file lines and the header's whereabouts.

    Attributes
    ----------
    source
        The file, as given.
    data
        The file's bytes (for its SHA-256).
    encoding
        How the file was decoded (:class:`~freezeout.io.text_file.TextFile`).
    separator, decimal
        The cell separator (``,``, ``;`` or tab) and the decimal mark (``.`` or ``,``).
    header_line
        File line of the header row (1-based).
    header
        Column titles, stripped; a unit from a units row is appended in brackets
        (``Temperature [K]``).
    unit_lines
        Per column, the file line its unit is written on (the header's or the units row's).
    cells
        The data cells as text, stripped of surrounding blanks: one object array of str per
        column (``0 .. n_columns - 1``, at least ``len(header)``), a row each.
    lines
        File line of each data row.
    widths
        Number of cells written on each data row.
    metadata
        ``(key, value, line, commented)`` of each ``key: value`` line before the header,
        ``commented`` True for a ``#`` line.
    preamble
        ``(line, text)`` of the free-text lines before the header.
    notes
        What the reader should tell the user (an encoding fallback, a units row).
    """

    source: str
    data: bytes
    encoding: str
    separator: str
    decimal: str
    header_line: int
    header: tuple[str, ...]
    unit_lines: tuple[int, ...]
    cells: tuple[np.ndarray, ...]
    lines: np.ndarray
    widths: np.ndarray
    metadata: tuple[tuple[str, str, int, bool], ...]
    preamble: tuple[tuple[int, str], ...]
    notes: tuple[str, ...]

    @property
    def n_rows(self) -> int:
        """Number of data rows."""
        return int(self.lines.size)

    @property
    def n_columns(self) -> int:
        """Number of cell columns (the widest row's, at least the header's)."""
        return len(self.cells)


def _separator(line: str) -> str:
    counts = {d: line.count(d) for d in _SEPARATORS}
    return max(counts, key=counts.get) if max(counts.values()) > 0 else ","


def _split(line: str, sep: str) -> list[str]:
    try:
        return [c.strip() for c in next(csv.reader([line], delimiter=sep))]
    except (csv.Error, StopIteration):
        return [line.strip()]


def _key_value(text: str) -> tuple[str, str] | None:
    """``key: value`` (or ``key = value``) of a preamble line, or None for free text."""
    m = re.match(r"^\s*([^:=;,\t]{1,60}?)\s*[:=]\s*(.*)$", text)
    if not m or not m.group(1).strip():
        return None
    return m.group(1).strip(), m.group(2).strip()


def _is_number(cell: str) -> bool:
    try:
        float(cell.replace(",", "."))
    except ValueError:
        return False
    return True


def _units_row(header: list[str], cells: list[str]) -> bool:
    """Whether the row after the header is a row of units (no number, a unit where needed)."""
    bare = [j for j, h in enumerate(header) if split_header(h)[1] is None]
    if not bare or any(_is_number(c) for c in cells if c):
        return False
    return any(j < len(cells) and cells[j] for j in bare)


def _unit_cell(cell: str) -> str:
    c = cell.strip()
    if len(c) > 1 and (c[0], c[-1]) in (("[", "]"), ("(", ")")):
        c = c[1:-1].strip()
    return c


def _merge_units(header, units, header_line, file):
    merged, unit_lines = [], []
    for j, title in enumerate(header):
        unit = _unit_cell(units[j]) if j < len(units) else ""
        name, own = split_header(title)
        if not unit or unit == "-":
            merged.append(title)
            unit_lines.append(header_line)
        elif own is not None and own != unit:
            raise InputError(f"column {title!r} has the unit {own!r} in its header and "
                             f"{unit!r} on the units row below; keep one", file=file,
                             line=header_line + 1, column=title)
        else:
            merged.append(f"{name} [{unit}]")
            unit_lines.append(header_line + 1)
    return merged, unit_lines


def _matches(col: np.ndarray, regex: re.Pattern) -> np.ndarray:
    """Indices of the cells of ``col`` that ``regex`` matches (at their start)."""
    return np.array([i for i, c in enumerate(col) if regex.match(c)], dtype=int)


def _decimal_mark(cells: tuple[np.ndarray, ...], sep: str, lines: np.ndarray, header,
                  file: str) -> str:
    """``,`` when a ``;`` or tab file writes decimal commas (refusing mixed marks), else ``.``."""
    if sep == ",":
        return "."
    first_comma = first_point = None
    for j, col in enumerate(cells):
        if first_point is not None and not any("," in c for c in col):
            continue
        both = _matches(col, _BOTH_MARKS)
        if both.size:
            i = int(both[0])
            raise InputError(f"cell {col[i]!r} has a decimal point and a decimal comma "
                             "(a thousands separator?); write numbers without grouping, "
                             "with one decimal mark", file=file, line=int(lines[i]),
                             column=header[j] if j < len(header) else j + 1)
        for regex, found in ((_COMMA_NUMBER, "comma"), (_POINT_NUMBER, "point")):
            hits = _matches(col, regex)
            if hits.size:
                where = (int(hits[0]), j)
                if found == "comma" and (first_comma is None or where < first_comma):
                    first_comma = where
                if found == "point" and (first_point is None or where < first_point):
                    first_point = where
    if first_comma is None:
        return "."
    if first_point is not None:
        (ic, jc), (ip, jp) = first_comma, first_point
        raise InputError(f"mixed decimal marks: line {int(lines[ic])} writes "
                         f"{cells[jc][ic]!r} with a decimal comma and line "
                         f"{int(lines[ip])} {cells[jp][ip]!r} with a point; "
                         "write one decimal mark throughout", file=file,
                         line=int(lines[max(ic, ip)]),
                         column=header[jp] if ip >= ic else header[jc])
    return ","


def _widths(texts: list[str], sep: str) -> np.ndarray:
    """Cells written on each line (short rows are padded, so count them here)."""
    out = np.empty(len(texts), dtype=int)
    for i, t in enumerate(texts):
        out[i] = t.count(sep) + 1 if '"' not in t else len(_split(t, sep))
    return out


def read_table(path, *, is_header: Callable[[list[str]], bool], max_rows: int = MAX_ROWS,
               max_bytes: int = MAX_FILE_BYTES, what: str = "run file") -> Table:
    """Read a lab's table file: preamble, header (and units row), data cells as text.

    Parameters
    ----------
    path
        The file.
    is_header
        Tells, from a row's cells, whether it is the header (it names the columns the caller
        needs). When no row is, the first line that is neither ``#`` nor ``key: value`` is
        taken as the header, so the caller can say which column is missing.
    max_rows
        Most lines the file may have; checked on its bytes before it is parsed.
    max_bytes
        Largest file size, checked before it is read. [byte]
    what
        What the file is, for messages.

    Returns
    -------
    Table
        Cells as text, with the file line and the number of cells of every data row.

    Raises
    ------
    InputError
        Not a regular file, too large, binary, no header, a quoted cell over a line end, mixed
        decimal marks, a unit given twice; each naming the file and, where there is one, the
        line and column.
    """
    file = str(path)
    text = read_text_file(path, max_bytes=max_bytes)
    n_lines = text.data.count(b"\n") + (not text.data.endswith(b"\n") and bool(text.data))
    if n_lines > max_rows:
        raise InputError(f"file has {n_lines:,} lines, over the limit of {max_rows:,} for a "
                         f"{what}; split the run", file=file)
    lines = text.lines
    notes = [text.note] if text.note else []
    metadata, preamble = [], []
    header_idx, fallback = None, None
    for i, line in enumerate(lines):
        s = line.strip()
        if not s:
            continue
        if s.startswith("#"):
            body = s.lstrip("#").strip()
            if ":" in body:
                key, _, value = body.partition(":")
                metadata.append((key.strip(), value.strip(), i + 1, True))
            continue
        if is_header(_split(s, _separator(s))):
            header_idx = i
            break
        kv = _key_value(s)
        if kv:
            metadata.append((kv[0], kv[1], i + 1, False))
        else:
            preamble.append((i + 1, s))
            if fallback is None:
                fallback = (i, len(metadata), len(preamble) - 1)
    if header_idx is None:
        if fallback is None:
            raise InputError("no header line found: the file is empty or holds only "
                             "comments (expected a row like 'T [K],n [cm^-3]')", file=file)
        header_idx, n_meta, n_pre = fallback
        metadata, preamble = metadata[:n_meta], preamble[:n_pre]
    header_text = lines[header_idx].strip()
    sep = _separator(header_text)
    header = _split(header_text, sep)
    header_line = header_idx + 1
    data_idx = [i for i in range(header_idx + 1, len(lines))
                if lines[i].strip() and not lines[i].lstrip().startswith("#")]
    unit_lines = [header_line] * len(header)
    if data_idx and _units_row(header, _split(lines[data_idx[0]], sep)):
        if data_idx[0] != header_idx + 1:
            raise InputError("a units row must follow the header directly", file=file,
                             line=data_idx[0] + 1)
        header, unit_lines = _merge_units(header, _split(lines[data_idx[0]], sep),
                                          header_line, file)
        data_idx = data_idx[1:]
        notes.append(f"units read from the row under the header (line {header_line + 1})")
    texts = [lines[i] for i in data_idx]
    row_lines = np.asarray(data_idx, dtype=int) + 1
    widths = _widths(texts, sep)
    width = max(len(header), int(widths.max()) if widths.size else 0)
    cells = _cells(texts, sep, width, file, header_line, row_lines)
    decimal = _decimal_mark(cells, sep, row_lines, header, file) if texts else "."
    if sep != "," or decimal != ".":
        notes.append(f"read as a {_SEPARATOR_NAMES[sep]}-separated table with decimal "
                     f"{'commas' if decimal == ',' else 'points'}")
    return Table(source=file, data=text.data, encoding=text.encoding, separator=sep,
                 decimal=decimal, header_line=header_line, header=tuple(header),
                 unit_lines=tuple(unit_lines), cells=cells, lines=row_lines, widths=widths,
                 metadata=tuple(metadata), preamble=tuple(preamble), notes=tuple(notes))


def _cells(texts: list[str], sep: str, width: int, file: str, header_line: int,
           row_lines: np.ndarray) -> tuple[np.ndarray, ...]:
    """The data rows split into ``width`` columns of stripped text (short rows padded).

    A quoted cell may hold the separator; one left open runs into the next line, which
    leaves fewer rows than lines: refused, naming the line of the odd quote.
    """
    try:
        rows = list(csv.reader(io.StringIO("\n".join(texts)), delimiter=sep, quotechar='"'))
    except csv.Error as exc:
        raise InputError(f"cannot split the rows into cells: {exc}", file=file,
                         line=header_line) from None
    if len(rows) != len(texts) or (texts and not _closed(texts[-1], sep)):
        # (the csv module takes a quote left open on the last line as closed at the end)
        odd = next((k for k, t in enumerate(texts) if t.count('"') % 2), len(texts) - 1)
        raise InputError("a quoted cell runs over the end of its line; close the quote "
                         "on the same line", file=file, line=int(row_lines[odd]))
    columns = [np.full(len(rows), "", dtype=object) for _ in range(width)]
    for i, row in enumerate(rows):
        if len(row) > width:
            raise InputError(f"cannot split the rows into cells: {len(row)} cells on a row "
                             f"of at most {width}", file=file, line=int(row_lines[i]))
        for j, c in enumerate(row):
            columns[j][i] = c.strip()
    return tuple(columns)


def _closed(line: str, sep: str) -> bool:
    """Whether every quoted cell of ``line`` closes on it (csv's strict reading)."""
    if '"' not in line:
        return True
    try:
        list(csv.reader([line], delimiter=sep, quotechar='"', strict=True))
    except csv.Error:
        return False
    return True


def extra_cells(table: Table, n: int) -> np.ndarray:
    """True for each row with a non-empty cell beyond the first ``n`` columns."""
    extra = np.zeros(table.n_rows, dtype=bool)
    for col in table.cells[n:]:
        extra |= col != ""
    return extra


def _floats(cells: np.ndarray) -> np.ndarray:
    """Cells read as floats by Python's float (correctly rounded), NaN where it refuses."""
    out = np.empty(cells.size)
    for i, c in enumerate(cells):
        try:
            out[i] = float(c)
        except ValueError:
            out[i] = np.nan
    return out


def column_numbers(table: Table, j: int, parse: Callable[[str, int], float]
                   ) -> tuple[np.ndarray, tuple[int, InputError] | None]:
    """Column ``j`` as floats; cells that are not finite numbers go through ``parse``.

    Parameters
    ----------
    table
        The table.
    j
        Column index.
    parse
        Called as ``parse(cell, line)`` for each cell that does not read as a finite
        number (empty, missing, NaN, infinite, text); returns the value (NaN for a missing
        value the caller allows) or raises :class:`InputError`.

    Returns
    -------
    values, first_error
        The values, and ``(row, error)`` of the first cell ``parse`` refused, or None.
    """
    original = table.cells[j]
    text = original
    if table.decimal == ",":
        text = np.array([c.replace(",", ".") for c in original], dtype=object)
    values = _floats(text)
    for i in np.flatnonzero(~np.isfinite(values)):
        try:
            values[i] = parse(original[i], int(table.lines[i]))
        except InputError as exc:
            return values, (int(i), exc)
    return values, None


def earliest(errors: Sequence[tuple[int, InputError] | None]) -> None:
    """Raise the error of the earliest row among ``errors`` (the leftmost column on a tie)."""
    found = [(e[0], k, e[1]) for k, e in enumerate(errors) if e is not None]
    if found:
        raise min(found, key=lambda x: (x[0], x[1]))[2]
