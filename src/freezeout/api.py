"""The Python API: what the CLI calls, usable directly from scripts."""

from __future__ import annotations

import datetime as _dt
from collections.abc import Mapping, Sequence
from pathlib import Path

import numpy as np

from freezeout._version import __version__
from freezeout.errors import InputError
from freezeout.physics.materials import Material, get_material

LevelSpec = tuple  # (concentration [cm^-3], energy [eV] or None, degeneracy or None)


def load_material(material: str | Material | None = None,
                  material_file: str | Path | None = None) -> Material:
    """A material by library name, from a TOML file, or passed through.

    Raises
    ------
    InputError
        Both or an unknown name given, or a bad file.
    """
    if isinstance(material, Material):
        return material
    if material is not None and material_file is not None:
        raise InputError("give either a material name or a material file, not both")
    if material_file is not None:
        from freezeout.io.material_file import read_material_file

        return read_material_file(material_file)
    return get_material(material or "Si")


def load_run(path: str | Path, *, hall_factor: float | None = None,
             include_mixed: bool = False, thickness: str | None = None):
    """Read a run file: a reduced run CSV, or a raw van der Pauw/Hall readings file.

    A raw file (recognised by its contact columns) is reduced on the way in.
    """
    import importlib.util

    if importlib.util.find_spec("freezeout.io.raw") is not None:
        from freezeout.io import raw as raw_io
    else:  # pragma: no cover - the reduction layer is being added
        raw_io = None
    is_raw = raw_io is not None and raw_io.is_raw_file(path)
    if thickness is not None and not is_raw:
        raise InputError("--thickness applies to raw readings only (a reduced run already has "
                         "its densities)", file=str(path))
    if is_raw:
        from freezeout.io.reduced_run import run_from_reduction

        if hall_factor is not None and not (0.1 <= hall_factor <= 10.0):
            raise InputError(f"Hall factor must be between 0.1 and 10, got {hall_factor!r}")
        reduced = raw_io.load_raw_run(path, thickness=thickness,
                                      hall_factor=1.0 if hall_factor is None else hall_factor)
        return run_from_reduction(path, reduced, include_mixed=include_mixed)
    from freezeout.io.csv_run import read_run_csv

    return read_run_csv(path, hall_factor=hall_factor, include_mixed=include_mixed)


def fit_file(
    path: str | Path,
    material: str | Material | None = None,
    material_file: str | Path | None = None,
    donors: int = 1,
    acceptors: int = 1,
    statistics: str = "fermi-dirac",
    hall_factor: float | None = None,
    *,
    degeneracy: float | None = None,
    fix: Mapping[str, float] | None = None,
    bounds: Mapping[str, tuple[float, float]] | None = None,
    include_mixed: bool = False,
    include_flagged: bool = False,
    thickness: str | None = None,
):
    """Read a run, fit it and return the :class:`~freezeout.fitting.result.FitResult`.

    Parameters
    ----------
    path
        Run file (reduced CSV or raw readings).
    material, material_file
        Library name (default: the file's ``# material:`` line, else ``Si``) or a TOML file.
    donors, acceptors
        Level counts (see :func:`freezeout.fitting.fit.fit_run`).
    statistics
        ``"fermi-dirac"`` or ``"boltzmann"``.
    hall_factor
        Hall scattering factor r_H; None (default) keeps the file's own (a reduced run's
        ``# hall_factor:`` line), else 1. [1]
    degeneracy
        Degeneracy of the majority levels (default 2 donors, 4 acceptors). [1]
    fix, bounds
        Parameters to fix or bound, public names (``N_D1`` [cm^-3], ``E_D1`` [eV], ``N_A``).
    include_mixed
        Keep points of opposite Hall sign in the fit.
    include_flagged
        Keep points that failed a severe data-quality check.
    thickness
        Sample thickness for a raw file, e.g. ``"350um"`` (overrides the file's).
    """
    from freezeout.fitting.fit import fit_run

    statistics = str(statistics).strip().lower()
    if statistics not in ("fermi-dirac", "boltzmann"):
        raise InputError(f"unknown statistics {statistics!r}; valid: fermi-dirac, boltzmann")
    run = load_run(path, hall_factor=hall_factor, include_mixed=include_mixed,
                   thickness=thickness)
    notes = []
    if material is None and material_file is None:
        stated = run.metadata.get("material")
        if stated:
            material = stated
        else:
            notes.append("no material given and none stated in the file: assumed Si")
    mat = load_material(material, material_file)
    options = {"material": mat.name, "material_file": None if material_file is None
               else str(material_file), "donors": donors, "acceptors": acceptors,
               "statistics": statistics, "hall_factor": hall_factor, "degeneracy": degeneracy,
               "fix": dict(fix or {}), "bounds": {k: list(v) for k, v in (bounds or {}).items()},
               "include_mixed": include_mixed, "include_flagged": include_flagged}
    provenance = {
        "input": Path(path).name,
        "input_path": str(path),
        "sha256": run.sha256,
        "metadata": dict(run.metadata),
        "tool": "freezeout",
        "tool_version": __version__,
        "date": _dt.datetime.now(_dt.UTC).date().isoformat(),
        "options": options,
        "hall_factor": run.hall_factor,
    }
    result = fit_run(run, mat, donors=donors, acceptors=acceptors, statistics=statistics,
                     degeneracy=degeneracy, fix=fix, bounds=bounds,
                     include_flagged=include_flagged, provenance=provenance)
    if notes:
        from dataclasses import replace

        result = replace(result, warnings=tuple(notes) + result.warnings)
    return result


def _levels(kind: str, specs: Sequence[LevelSpec]):
    from freezeout.physics.neutrality import DopantLevel

    out = []
    for spec in specs:
        spec = tuple(spec)
        if not 2 <= len(spec) <= 3:
            raise InputError(f"{kind} {spec!r}: give (concentration, energy[, degeneracy])")
        g = None if len(spec) < 3 or spec[2] is None else float(spec[2])
        try:
            out.append(DopantLevel(kind, float(spec[0]),
                                   None if spec[1] is None else float(spec[1]), g))
        except (TypeError, ValueError) as exc:
            raise InputError(f"{kind} {spec!r}: {exc}") from None
    return out


def simulate(
    material: str | Material | None = None,
    material_file: str | Path | None = None,
    donors: Sequence[LevelSpec] = (),
    acceptors: Sequence[LevelSpec] = (),
    temperatures=(10.0, 700.0, 60),
    statistics: str = "fermi-dirac",
):
    """Simulate a run: n, p, E_F and ionized fractions versus temperature.

    Parameters
    ----------
    material, material_file
        Library name (default ``Si``) or TOML file.
    donors, acceptors
        Levels as ``(concentration [cm^-3], energy [eV] or None, degeneracy [1] or None)``.
    temperatures
        ``(t_min, t_max, n)``, n points evenly spaced in 1000/T, or an array of
        temperatures. [K]
    statistics
        ``"fermi-dirac"`` or ``"boltzmann"``.
    """
    from freezeout.forward import simulate as _simulate
    from freezeout.forward import temperature_grid

    mat = load_material(material, material_file)
    statistics = str(statistics).strip().lower()
    if isinstance(temperatures, tuple) and len(temperatures) == 3:
        try:
            t = temperature_grid(float(temperatures[0]), float(temperatures[1]),
                                 int(temperatures[2]))
        except ValueError as exc:
            raise InputError(f"temperatures: {exc}") from None
    else:
        t = np.asarray(temperatures, dtype=float)
    if t.size == 0 or not np.all(np.isfinite(t)) or np.any(t <= 0) or np.any(t > 5000):
        raise InputError("temperatures must be above 0 K and at most 5000 K")
    if statistics not in ("fermi-dirac", "boltzmann"):
        raise InputError(f"unknown statistics {statistics!r}; valid: fermi-dirac, boltzmann")
    gap = float(np.min(mat.band_gap(t)))
    if not gap > 0:
        raise InputError(f"the band gap of {mat.name} closes within these temperatures")
    levels = {"donor": _levels("donor", donors), "acceptor": _levels("acceptor", acceptors)}
    for kind, lvs in levels.items():
        for lv in lvs:
            if not lv.concentration <= 1e22:
                raise InputError(f"{kind} concentration {lv.concentration:g} cm^-3 is above "
                                 "1e22 cm^-3, beyond the model")
            if lv.energy is not None and not lv.energy < gap:
                raise InputError(f"{kind} ionization energy {lv.energy:g} eV is not below the "
                                 f"band gap ({gap:.4g} eV)")
    return _simulate(mat, t, levels["donor"], levels["acceptor"], statistics)
