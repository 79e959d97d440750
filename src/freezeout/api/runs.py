"""Runs in: read a run file (reduced or raw), reduce raw readings, write the reduced CSV.

The API composes the layers here: :mod:`freezeout.io` reads files, :mod:`freezeout.reduction`
turns raw readings into reduced quantities; neither calls the other.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

from freezeout.errors import InputError

if TYPE_CHECKING:
    from freezeout.records.readings import ReducedRun
    from freezeout.records.run import RunData


def default_reduced_output(raw: str | Path) -> Path:
    """Default output of ``reduce``: ``<raw stem>_reduced.csv`` next to the raw file."""
    raw = Path(raw)
    return raw.with_name(f"{raw.stem}_reduced.csv")


def _thresholds(overrides: Mapping[str, float] | None):
    from freezeout.reduction import QualityThresholds

    try:
        return QualityThresholds.from_overrides(dict(overrides or {}))
    except ValueError as exc:
        raise InputError(f"--threshold: {exc}") from None


def reduce_raw_file(path: str | Path, *, thickness: str | None = None,
                    hall_factor: float = 1.0, temperature_tolerance: float | None = None,
                    thresholds: Mapping[str, float] | None = None) -> ReducedRun:
    """Read a raw-readings file and reduce it (no file is written).

    Parameters
    ----------
    path
        Raw-readings CSV (``docs/raw_format.md``).
    thickness
        Thickness overriding the file's, e.g. ``"350um"`` or ``"0.35 mm +- 5 um"``.
    hall_factor
        Hall scattering factor r_H for the density r_H/(q|R_H|). [1]
    temperature_tolerance
        Readings within this many kelvin of a set point's mean join it (default
        :data:`freezeout.records.limits.DEFAULT_GROUPING_TOLERANCE_K`). [K]
    thresholds
        Quality thresholds to override, name -> value.
    """
    from freezeout.io.raw_reader import read_raw
    from freezeout.records.limits import DEFAULT_GROUPING_TOLERANCE_K, check_hall_factor
    from freezeout.reduction import readings_from_table, reduce_readings

    tol = DEFAULT_GROUPING_TOLERANCE_K if temperature_tolerance is None \
        else float(temperature_tolerance)
    if not (tol > 0 and math.isfinite(tol)):
        raise InputError(f"--temperature-tolerance must be positive, got {tol:g}")
    r_h = check_hall_factor(hall_factor, "--hall-factor")
    limits = _thresholds(thresholds)
    readings = readings_from_table(read_raw(path, thickness=thickness),
                                   temperature_tolerance=tol)
    return reduce_readings(readings, hall_factor=r_h, thresholds=limits)


def is_raw_file(path: str | Path) -> bool:
    """Whether a file holds raw readings (it has contact columns)."""
    from freezeout.io.raw_reader import is_raw_file as _is_raw

    return _is_raw(path)


def load_run(path: str | Path, *, hall_factor: float | None = None,
             include_mixed: bool = False, thickness: str | None = None) -> RunData:
    """Read a run file: a reduced run CSV, or a raw van der Pauw/Hall readings file.

    A raw file (recognised by its contact columns) is reduced on the way in, with the same
    carrier-type rule as ``reduce`` (:func:`freezeout.records.run.run_carrier`).

    Parameters
    ----------
    path
        The run file.
    hall_factor
        r_H; None keeps the file's own (a reduced run's ``# hall_factor:``), else 1. [1]
    include_mixed
        Keep points whose Hall sign is opposite to the run's.
    thickness
        Thickness for a raw file, overriding its own.
    """
    raw = is_raw_file(path)
    if thickness is not None and not raw:
        raise InputError("--thickness applies to raw readings only (a reduced run already has "
                         "its densities)", file=str(path))
    if raw:
        from freezeout.reduction import run_from_reduction

        reduced = reduce_raw_file(path, thickness=thickness,
                                  hall_factor=1.0 if hall_factor is None else hall_factor)
        return run_from_reduction(path, reduced, include_mixed=include_mixed)
    from freezeout.io.reduced_csv_reader import read_reduced_csv

    return read_reduced_csv(path, hall_factor=hall_factor, include_mixed=include_mixed)


def _strict(value):
    """NaN and infinities to None so that the JSON is strict JSON."""
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if isinstance(value, dict):
        return {k: _strict(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_strict(v) for v in value]
    return value


@dataclass(frozen=True)
class ReduceOutcome:
    """What :func:`reduce_file` did.

    Attributes
    ----------
    run
        The reduced run (set points, findings).
    output
        The reduced CSV written, or None when none was asked for.
    """

    run: ReducedRun
    output: Path | None

    @property
    def n_flagged(self) -> int:
        """Set points with any data-quality finding."""
        return sum(bool(f) for f in self.run.flags)

    @property
    def n_severe(self) -> int:
        """Set points that failed a severe check (kept, left out of fits unless asked)."""
        return int(self.run.severe.sum())

    def to_dict(self) -> dict:
        """The JSON that ``freezeout reduce --json`` prints."""
        return _strict({"output": None if self.output is None else str(self.output),
                        "points": self.run.n_points, "flagged": self.n_flagged,
                        "severe": self.n_severe, "carrier": self.run.majority_carrier,
                        "run": self.run.to_dict()})


def reduce_file(raw: str | Path, *, out: str | Path | None = None, write: bool = True,
                thickness: str | None = None, hall_factor: float = 1.0,
                temperature_tolerance: float | None = None,
                thresholds: Mapping[str, float] | None = None) -> ReduceOutcome:
    """Reduce a raw-readings file and write the reduced CSV that ``fit`` reads.

    Parameters
    ----------
    raw
        Raw-readings CSV.
    out
        Reduced CSV to write (default ``<raw stem>_reduced.csv`` beside ``raw``). It may not
        be the raw file itself under any name (:func:`freezeout.api.guard.refuse_overwrite`).
    write
        False: reduce only, write nothing.
    thickness, hall_factor, temperature_tolerance, thresholds
        As for :func:`reduce_raw_file`.

    Raises
    ------
    InputError
        Bad readings or options, or ``out`` naming the input.
    """
    target = None
    if write:
        from freezeout.api.guard import refuse_overwrite

        target = Path(out) if out is not None else default_reduced_output(raw)
        refuse_overwrite([target], [raw])
    run = reduce_raw_file(raw, thickness=thickness, hall_factor=hall_factor,
                          temperature_tolerance=temperature_tolerance, thresholds=thresholds)
    if target is not None:
        from freezeout.io.reduced_csv_writer import write_reduced_csv

        write_reduced_csv(run, target, raw_source=raw)
    return ReduceOutcome(run, target)
