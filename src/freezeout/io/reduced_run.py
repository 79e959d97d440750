"""A reduced run from the reduction layer, in the form the fit takes."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from freezeout.errors import InputError
from freezeout.io.csv_run import majority_carrier, mixed_note, sha256_of, split_scale_uncertainty
from freezeout.records.run import RunData


def run_from_reduction(path, reduced, *, include_mixed: bool = False) -> RunData:
    """Convert a ``ReducedRun`` (from ``freezeout.io.raw.load_raw_run``) into a RunData.

    Raises
    ------
    InputError
        If the reduction left no point with a usable Hall density.
    """
    ok = np.isfinite(reduced.density) & (reduced.density > 0)
    if not ok.any():
        raise InputError("no set point gave a usable Hall density", file=str(path))
    point_carrier = tuple(reduced.carrier)
    carrier = majority_carrier(point_carrier, reduced.temperature)
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
        sha256=sha256_of(Path(path)),
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
