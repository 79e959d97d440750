"""A pandas DataFrame given in a program, read as a table.

The :class:`~freezeout.io.table_reader.Table` a file of the same cells would give; the
DataFrame's column names are the file's headers.
"""

from __future__ import annotations

import numpy as np

from freezeout.errors import InputError
from freezeout.io.table_reader import MAX_ROWS, Table

__all__ = ["table_from_frame"]


def _frame_cell(value) -> str:
    """A DataFrame cell as the text a file would hold (floats exactly, by repr)."""
    if value is None:
        return ""
    if isinstance(value, str):
        return value
    if isinstance(value, bool | np.bool_):
        return str(value)
    if isinstance(value, int | float | np.integer | np.floating):
        v = float(value)
        return "" if np.isnan(v) else repr(v)
    return str(value)


def _frame_title(label) -> str:
    if isinstance(label, tuple):
        parts = [str(p).strip() for p in label if not str(p).startswith("Unnamed")]
        return f"{parts[0]} [{parts[1]}]" if len(parts) == 2 else " ".join(parts)
    return str(label).strip()


def table_from_frame(frame, *, source: str = "DataFrame", metadata=None,
                     max_rows: int = MAX_ROWS) -> Table:
    """A :class:`Table` from a pandas DataFrame whose column names are a file's headers.

    Parameters
    ----------
    frame
        The DataFrame (a two-level column index is read as name and unit).
    source
        Name for messages; lines are those of ``frame.to_csv(index=False)`` (header on
        line 1, the first row on line 2).
    metadata
        ``key -> value`` pairs, as a file's ``# key: value`` lines.
    max_rows
        Most rows accepted.

    Raises
    ------
    InputError
        Not a DataFrame, or too many rows.
    """
    import pandas as pd

    if not isinstance(frame, pd.DataFrame):
        raise InputError(f"expected a pandas DataFrame, got {type(frame).__name__}",
                         file=source)
    if len(frame) > max_rows:
        raise InputError(f"{len(frame):,} rows, over the limit of {max_rows:,}", file=source)
    header = tuple(_frame_title(c) for c in frame.columns)
    texts = [[_frame_cell(v) for v in frame.iloc[:, j].tolist()] for j in range(frame.shape[1])]
    text = pd.DataFrame({h: texts[j] for j, h in enumerate(header)}).to_csv(index=False)
    cells = tuple(np.array([c.strip() for c in col], dtype=object) for col in texts)
    meta = tuple((str(k), str(v), 0, True) for k, v in (metadata or {}).items())
    return Table(source=source, data=text.encode("utf-8"), encoding="utf-8", separator=",",
                 decimal=".", header_line=1, header=header, unit_lines=(1,) * len(header),
                 cells=cells, lines=np.arange(2, len(frame) + 2, dtype=int),
                 widths=np.full(len(frame), len(header), dtype=int), metadata=meta,
                 preamble=(), notes=())
