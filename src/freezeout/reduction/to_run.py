"""A reduced run in the form the fit takes: :class:`ReducedRun` to :class:`RunData`."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from freezeout.errors import InputError
from freezeout.numbers.digest import sha256_file
from freezeout.records.readings import ReducedRun
from freezeout.records.run import RunData, run_carrier
from freezeout.records.run_rules import mixed_note, split_scale_uncertainty

__all__ = ["run_from_reduction"]


def run_from_reduction(path, reduced: ReducedRun, *, include_mixed: bool = False) -> RunData:
    """The run a fit takes, from the reduction of a raw file.

    The run's carrier type is :func:`~freezeout.records.run.run_carrier` of the points, as
    for the ``# carrier`` line of the reduced CSV, so a raw file and its reduced CSV fit
    alike.

    Parameters
    ----------
    path
        The raw file the run was reduced from (the run's source).
    reduced
        Its reduction.
    include_mixed
        Keep points whose Hall sign differs from the run's carrier type (otherwise they are
        marked for exclusion from a single-carrier fit).

    Returns
    -------
    RunData
        The run; the thickness uncertainty, common to all points, is held apart as
        ``scale_uncertainty``.

    Raises
    ------
    InputError
        If the reduction left no point with a usable Hall density.
    """
    ok = np.isfinite(reduced.density) & (reduced.density > 0)
    if not ok.any():
        raise InputError("no set point gave a usable Hall density", file=str(path))
    point_carrier = tuple(reduced.carrier)
    carrier = run_carrier(point_carrier, reduced.temperature)
    notes = []
    note = mixed_note(point_carrier, carrier, reduced.temperature, include_mixed)
    if note:
        notes.append(note)
    if include_mixed:
        point_carrier = (carrier,) * len(point_carrier)
    n_severe = int(np.sum(reduced.severe))
    if n_severe:
        notes.append(f"{n_severe} point(s) failed a severe data-quality check and are left out "
                     "of the fit unless --include-flagged is given (see the data-quality "
                     "section)")
    density = np.asarray(reduced.density, dtype=float)
    density_err, scale = split_scale_uncertainty(
        density, np.asarray(reduced.density_err, dtype=float),
        float(reduced.thickness_err) / float(reduced.thickness) if reduced.thickness else 0.0)
    meta = dict(reduced.metadata)
    meta.setdefault("reduced_from", Path(path).name)
    return RunData(
        source=str(path),
        sha256=meta.get("raw_sha256") or sha256_file(path),
        temperature=np.asarray(reduced.temperature, dtype=float),
        density=density,
        density_err=density_err,
        carrier=carrier,
        point_carrier=point_carrier,
        resistivity=np.asarray(reduced.resistivity, dtype=float),
        resistivity_err=np.asarray(reduced.resistivity_err, dtype=float),
        mobility=np.asarray(reduced.mobility, dtype=float),
        mobility_err=np.asarray(reduced.mobility_err, dtype=float),
        hall_coefficient=np.asarray(reduced.hall_coefficient, dtype=float),
        hall_coefficient_err=np.asarray(reduced.hall_coefficient_err, dtype=float),
        flags=tuple(reduced.flags),
        severe=np.asarray(reduced.severe, dtype=bool),
        metadata=meta,
        notes=tuple(notes),
        findings=tuple(reduced.findings),
        scale_uncertainty=scale,
        hall_factor=float(reduced.hall_factor),
        temperature_err=np.asarray(reduced.temperature_err, dtype=float),
    )
