"""The one parser of a number cell read from a file (CSV cell, metadata value)."""

from __future__ import annotations

import math

from freezeout.errors import InputError

#: Cells that stand for "no value" in a table (case-insensitive).
MISSING_CELLS = ("", "nan", "na", "n/a", "-")


def is_missing(cell: str) -> bool:
    """Whether a stripped cell stands for "no value" (see :data:`MISSING_CELLS`)."""
    return cell.strip().lower() in MISSING_CELLS


def parse_number_cell(cell: str, *, file: str | None = None, line: int | None = None,
                      column: str | int | None = None) -> float:
    """A finite float from a cell, or an :class:`InputError` naming file, line and column.

    Parameters
    ----------
    cell
        The cell's text (surrounding blanks are ignored).
    file, line, column
        Where the cell is, for the message.
    """
    text = cell.strip()
    if not text:
        raise InputError("empty cell", file=file, line=line, column=column)
    try:
        value = float(text)
    except ValueError:
        raise InputError(f"cannot read {text!r} as a number", file=file, line=line,
                         column=column) from None
    if not math.isfinite(value):
        raise InputError(f"value {text!r} is not a finite number", file=file, line=line,
                         column=column)
    return value
