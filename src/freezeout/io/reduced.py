"""Writer of reduced runs: the CSV that ``freezeout fit`` reads.

Columns, in order: ``T [K]``, ``rho [ohm cm]``, ``rho_err [ohm cm]``, ``R_H [cm^3/C]``,
``R_H_err [cm^3/C]``, ``n [cm^-3]`` or ``p [cm^-3]`` (the run's majority carrier; the
density is unsigned), ``n_err [cm^-3]`` or ``p_err [cm^-3]``, ``mu_H [cm^2/(V s)]``,
``mu_H_err [cm^2/(V s)]``, ``flags`` (finding codes joined by ``;``, empty when clean).
``# key: value`` lines at the top carry the sample, thickness, provenance and a summary of
the findings.
"""

from __future__ import annotations

import csv
import io
import math
from pathlib import Path

import numpy as np

from freezeout._version import __version__
from freezeout.io.atomic import atomic_write_text
from freezeout.reduction import SEVERE_MARK, ReducedRun, reduced_columns

__all__ = ["format_number", "severe_from_flags", "write_reduced_csv"]

_OWN_KEYS = ("sample", "thickness", "reduced_from", "raw_sha256", "geometry", "hall_factor",
             "carrier", "findings", "produced_by", "thickness_source")


def format_number(value: float) -> str:
    """Format a float for the CSV: ten significant digits, ``nan``/``inf`` spelled out.

    Parameters
    ----------
    value
        The number.

    Returns
    -------
    str
        Its text.
    """
    value = float(value)
    if math.isnan(value):
        return "nan"
    if math.isinf(value):
        return "inf" if value > 0 else "-inf"
    return f"{value:.10g}"


def severe_from_flags(flags) -> np.ndarray:
    """Which points of a reduced CSV failed a severe check, from its ``flags`` column.

    Parameters
    ----------
    flags
        The ``flags`` strings, one per point (codes joined by ``;``, severe ones ending in
        ``!``).

    Returns
    -------
    ndarray of bool
        True where any code carries the severe mark.
    """
    return np.array([any(code.strip().endswith(SEVERE_MARK) for code in str(f).split(";"))
                     for f in flags], dtype=bool)


def _one_line(text) -> str:
    return " ".join(str(text).split())


def _thickness_text(run: ReducedRun) -> str:
    t_um = run.thickness * 1e4
    if run.thickness_err > 0:
        return f"{t_um:.6g} um +- {run.thickness_err * 1e4:.3g} um"
    return f"{t_um:.6g} um"


def _findings_summary(run: ReducedRun) -> str:
    if not run.findings:
        return "none"
    n_severe = sum(f.severity == "severe" for f in run.findings)
    flagged = [f"{t:.4g}" for t, fl in zip(run.temperature, run.flags, strict=True) if fl]
    return (f"{len(run.findings)} ({n_severe} severe) at T = {', '.join(flagged)} K; "
            f"{int(run.severe.sum())} point(s) marked severe")


def write_reduced_csv(run: ReducedRun, path, *, raw_source=None) -> Path:
    """Write a reduced run as CSV, atomically.

    The file is written to a temporary file in the same folder and moved into place with
    :func:`os.replace` (:func:`freezeout.io.atomic.atomic_write_text`), so a half-written
    file is never left behind. In the ``flags`` column, codes of severe findings carry a
    trailing ``!`` (``"reciprocity!;ratio"``), so a reader can recover which points are
    severe with :func:`severe_from_flags`.

    Parameters
    ----------
    run
        The reduced run.
    path
        Output file.
    raw_source
        The raw file it was reduced from, for the ``# reduced_from:`` line; defaults to
        ``run.metadata["reduced_from"]``.

    Returns
    -------
    Path
        The path written.
    """
    path = Path(path)
    meta = dict(run.metadata)
    source = raw_source if raw_source is not None else meta.get("reduced_from", "unknown")
    header_lines = [
        ("sample", meta.get("sample", "")),
        ("thickness", _thickness_text(run)),
        ("reduced_from", Path(str(source)).name),
        ("raw_sha256", meta.get("raw_sha256", "")),
        ("geometry", run.geometry),
        ("hall_factor", f"{run.hall_factor:g}"),
        ("carrier", run.majority_carrier),
        ("findings", _findings_summary(run)),
        ("produced_by", f"freezeout {__version__} reduce"),
    ]
    header_lines += [(k, v) for k, v in meta.items() if k not in _OWN_KEYS]
    columns = reduced_columns(run)
    names = list(columns)
    rows = []
    for i in range(run.n_points):
        row = [format_number(columns[name][i]) for name in names[:-1]]
        row.append(columns["flags"][i])
        rows.append(row)

    buffer = io.StringIO()
    for key, value in header_lines:
        if value != "":
            buffer.write(f"# {_one_line(key)}: {_one_line(value)}\n")
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(names)
    writer.writerows(rows)
    atomic_write_text(path, buffer.getvalue())
    return path
