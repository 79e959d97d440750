"""Fitting a run file, writing its report, recording it in the history."""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path
from typing import TYPE_CHECKING

from freezeout._version import __version__
from freezeout.api.materials import load_material
from freezeout.api.runs import load_run
from freezeout.api.simulation import check_statistics

if TYPE_CHECKING:
    from freezeout.fitting.result import FitResult
    from freezeout.physics.materials import Material
    from freezeout.records.run import RunData
    from freezeout.storage import SaveOutcome


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
) -> FitResult:
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
    check_statistics(statistics)
    run = load_run(path, hall_factor=hall_factor, include_mixed=include_mixed,
                   thickness=thickness)
    return fit_run_record(run, input_name=Path(path).name, input_path=str(path),
                          material=material, material_file=material_file, donors=donors,
                          acceptors=acceptors, statistics=statistics, hall_factor=hall_factor,
                          degeneracy=degeneracy, fix=fix, bounds=bounds,
                          include_mixed=include_mixed, include_flagged=include_flagged)


def fit_run_record(run: RunData, *, input_name: str, input_path: str | None,
                   material: str | Material | None = None,
                   material_file: str | Path | None = None, donors: int = 1,
                   acceptors: int = 1, statistics: str = "fermi-dirac",
                   hall_factor: float | None = None, degeneracy: float | None = None,
                   fix: Mapping[str, float] | None = None,
                   bounds: Mapping[str, tuple[float, float]] | None = None,
                   include_mixed: bool = False, include_flagged: bool = False,
                   where: str = "the file") -> FitResult:
    """Fit a run record with the options and provenance of :func:`fit_file`.

    ``input_name`` and ``input_path`` name where the run came from; ``where`` says it in the
    note made when no material is given ("the file", "the table").
    """
    import datetime as _dt
    from dataclasses import replace

    from freezeout.fitting.fit import fit_run

    statistics = check_statistics(statistics)
    notes = []
    if material is None and material_file is None:
        stated = run.metadata.get("material")
        if stated:
            material = stated
        else:
            notes.append(f"no material given and none stated in {where}: assumed Si")
    mat = load_material(material, material_file)
    options = {"material": mat.name, "material_file": None if material_file is None
               else str(material_file), "donors": donors, "acceptors": acceptors,
               "statistics": statistics, "hall_factor": hall_factor, "degeneracy": degeneracy,
               "fix": dict(fix or {}), "bounds": {k: list(v) for k, v in (bounds or {}).items()},
               "include_mixed": include_mixed, "include_flagged": include_flagged}
    provenance = {
        "input": input_name,
        "input_path": input_path,
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
        result = replace(result, warnings=tuple(notes) + result.warnings)
    return result


#: Every file a fit report may write into its folder (freezeout.reporting.fit_report).
FIT_REPORT_FILES = ("fit.json", "report.html", "density.png", "residuals.png",
                    "fermi_level.png", "ionization.png", "transport.png")


def fit_report_outputs(folder: str | Path) -> list[Path]:
    """The report folder and every file the report may write in it."""
    folder = Path(folder)
    return [folder, *(folder / name for name in FIT_REPORT_FILES)]


def _fit_inputs(result: FitResult) -> list[str | None]:
    """The files a fit read: its run and its material file."""
    prov = result.provenance or {}
    return [prov.get("input_path"), (prov.get("options") or {}).get("material_file")]


def default_report_folder(run_path: str | Path) -> Path:
    """Where ``fit`` writes a run's report by default: ``reports/<run stem>/``."""
    return Path("reports") / Path(run_path).stem


def write_fit_report(result: FitResult, folder: str | Path) -> dict[str, Path]:
    """Write fit.json, the figures and report.html into ``folder``; return name -> path.

    Refuses (:class:`InputError`, nothing written) a folder that is, or whose report files
    would be, the run or material file the fit read
    (:func:`freezeout.api.guard.refuse_overwrite`).
    """
    from freezeout.api.guard import refuse_overwrite
    from freezeout.reporting.fit_report import write_fit_report as _write

    refuse_overwrite(fit_report_outputs(folder), _fit_inputs(result))
    return _write(result, folder)


def record_fit(result: FitResult, db: str | None = None) -> SaveOutcome:
    """Store a fit in the history database (once per input and options).

    Parameters
    ----------
    result
        The fit.
    db
        Database URL (``sqlite:///FILE`` or ``postgresql://...``); default ``$FREEZEOUT_DB``,
        else a SQLite file in the user data folder.

    Raises
    ------
    InputError
        The database cannot be opened, or is the fit's run or material file.
    """
    from freezeout.api.guard import refuse_overwrite, sqlite_file
    from freezeout.storage import open_history

    refuse_overwrite([sqlite_file(db)], _fit_inputs(result), option="--db")
    store = open_history(db)
    try:
        return store.save_fit(result)
    finally:
        store.close()
