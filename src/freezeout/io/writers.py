"""Writers of freezeout's own CSV outputs."""

from __future__ import annotations

import csv
import io
from collections.abc import Mapping
from pathlib import Path

import numpy as np

from freezeout.io.atomic import atomic_write_text


def format_csv(columns: Mapping[str, np.ndarray], metadata: Mapping[str, str] = ()) -> str:
    """CSV text: ``# key: value`` lines, a header row, one row per index (repr precision)."""
    buf = io.StringIO()
    for k, v in dict(metadata).items():
        buf.write(f"# {k}: {v}\n")
    w = csv.writer(buf, lineterminator="\n")
    names = list(columns)
    w.writerow(names)
    arrays = [np.asarray(columns[k]) for k in names]
    for i in range(len(arrays[0]) if arrays else 0):
        w.writerow([_cell(a[i]) for a in arrays])
    return buf.getvalue()


def _cell(x) -> str:
    if isinstance(x, str):
        return x
    if isinstance(x, bool | np.bool_):
        return str(bool(x))
    x = float(x)
    return "" if not np.isfinite(x) else repr(x)


def write_csv(path: str | Path, columns: Mapping[str, np.ndarray],
              metadata: Mapping[str, str] = ()) -> Path:
    """Write :func:`format_csv` output atomically."""
    return atomic_write_text(path, format_csv(columns, metadata))
