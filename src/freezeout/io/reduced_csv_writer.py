"""Writer of a reduced run as the reduced CSV that ``freezeout fit`` reads.

The run is a :class:`~freezeout.records.readings.ReducedRun`; the columns are those of
:func:`freezeout.io.reduced_csv_layout.reduced_columns`. ``# key: value`` lines at the top
carry the sample, thickness, provenance, the run's carrier type and a summary of the
findings.
"""

from __future__ import annotations

import csv
import io
import math
from pathlib import Path

from freezeout._version import __version__
from freezeout.io.atomic import atomic_write_text
from freezeout.io.reduced_csv_layout import reduced_columns
from freezeout.records.readings import ReducedRun

__all__ = ["format_number", "write_reduced_csv"]

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
    severe with :func:`~freezeout.io.reduced_csv_layout.severe_from_flags`.

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
