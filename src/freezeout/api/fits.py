"""Fitting a run file, writing its report, recording it in the history."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import TYPE_CHECKING

from freezeout._version import __version__
from freezeout.api.level_physics import LevelPhysics, check_fit_use, level_physics
from freezeout.api.materials import load_material
from freezeout.api.runs import load_run
from freezeout.api.simulation import check_statistics
from freezeout.errors import FitError, InputError
from freezeout.reporting.report_files import REPORT_FILES as FIT_REPORT_FILES

if TYPE_CHECKING:
    from freezeout.fitting.result import FitResult
    from freezeout.physics.materials import Material
    from freezeout.records.run import RunData
    from freezeout.storage import SaveOutcome


def fit_file(
    path: str | Path,
    material: str | Material | None = None,
    material_file: str | Path | None = None,
    donors: int | str = 1,
    acceptors: int | str = 1,
    statistics: str = "fermi-dirac",
    hall_factor: float | str | None = None,
    *,
    degeneracy: float | None = None,
    fix: Mapping[str, float] | None = None,
    bounds: Mapping[str, tuple[float, float]] | None = None,
    include_mixed: bool = False,
    include_flagged: bool = False,
    thickness: str | None = None,
    mobility: Sequence[str] | str = (),
    lattice_mu300: float | None = None,
    lattice_exponent: float | None = None,
    carriers: str = "majority",
    posterior: bool = False,
    posterior_steps: int | None = None,
    posterior_progress=None,
    excited_states: str | None = None,
    energy_vs_density: str | None = None,
    dos_mass: str | None = None,
) -> FitResult:
    """Read a run, fit it and return the :class:`~freezeout.fitting.result.FitResult`.

    Parameters
    ----------
    path
        Run file (reduced CSV or raw readings).
    material, material_file
        Library name (default: the file's ``# material:`` line, else ``Si``) or a TOML file.
    donors, acceptors
        Level counts (see :func:`freezeout.fitting.fit.fit_run`), or ``"auto"``: the
        majority count auto fits 1 to 4 levels, the minority count auto fits without and
        with the compensating species, and the rule of
        :mod:`freezeout.fitting.model_selection` (BIC, refusals) chooses; the result then
        carries ``model_selection``.
    statistics
        ``"fermi-dirac"`` or ``"boltzmann"``.
    hall_factor
        Hall scattering factor: a number r [1] (the density is r / (q |R_H|); with
        ``mobility`` also mu_H = r mu), or ``"scattering"`` (needs ``mobility``): r_H(T)
        = <tau^2>/<tau>^2 of the mechanisms at every point, for the density and the
        mobility alike (:func:`fit_run_record`). None (default) keeps the file's own (a
        reduced run's ``# hall_factor:`` line), else 1; with ``mobility`` and no stated
        line, ``"scattering"``.
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
    mobility
        Scattering mechanisms for a joint fit of the density and the Hall mobility (e.g.
        ``("lattice", "brooks-herring")``; must include ``lattice``); empty (default) for
        the density-only fit. The run needs a mobility column, or a resistivity column
        beside the density (:func:`freezeout.fitting.joint.fit_run_joint`).
    lattice_mu300, lattice_exponent
        Optional starting values of the fitted lattice term. [cm^2/(V s)], [1]
    carriers
        ``"majority"`` (default): the majority carrier alone; ``"both"``: fit the signed
        R_H(T) and rho(T) with electrons and holes, mixed-conduction points included
        (:func:`freezeout.fitting.two_carrier.fit_run_two_carrier`; mechanisms from
        ``mobility``, default ``lattice+brooks-herring``).
    posterior, posterior_steps, posterior_progress
        Sample the density fit's posterior with an ensemble MCMC
        (:func:`freezeout.fitting.posterior.sample_posterior`; needs the ``posterior`` extra),
        ``posterior_steps`` steps per walker (default its ``DEFAULT_STEPS``), calling
        ``posterior_progress(done, total)`` after every step; the result carries ``posterior``.
    excited_states, energy_vs_density, dos_mass
        Optional physics, off by default (:mod:`freezeout.api.level_physics`).
    """
    check_statistics(statistics)
    run = load_run(path, hall_factor=reader_hall_factor(hall_factor, mobility),
                   include_mixed=include_mixed,
                   thickness=thickness)
    try:
        return fit_run_record(
            run, input_name=Path(path).name, input_path=str(path), material=material,
            material_file=material_file, donors=donors, acceptors=acceptors,
            statistics=statistics, hall_factor=hall_factor, degeneracy=degeneracy, fix=fix,
            bounds=bounds, include_mixed=include_mixed, include_flagged=include_flagged,
            mobility=mobility, lattice_mu300=lattice_mu300, lattice_exponent=lattice_exponent,
            carriers=carriers, posterior=posterior, posterior_steps=posterior_steps,
            posterior_progress=posterior_progress,
            physics=level_physics(excited_states, energy_vs_density, dos_mass))
    except FitError as exc:  # the message names the run
        if exc.file is not None:
            raise
        raise FitError(exc.message, optimizer_message=exc.optimizer_message,
                       file=str(path)) from exc


def fit_run_record(run: RunData, *, input_name: str, input_path: str | None,
                   material: str | Material | None = None,
                   material_file: str | Path | None = None, donors: int | str = 1,
                   acceptors: int | str = 1, statistics: str = "fermi-dirac",
                   hall_factor: float | str | None = None,
                   degeneracy: float | None = None,
                   fix: Mapping[str, float] | None = None,
                   bounds: Mapping[str, tuple[float, float]] | None = None,
                   include_mixed: bool = False, include_flagged: bool = False,
                   where: str = "the file", mobility: Sequence[str] | str = (),
                   lattice_mu300: float | None = None,
                   lattice_exponent: float | None = None,
                   carriers: str = "majority", posterior: bool = False,
                   posterior_steps: int | None = None, posterior_progress=None,
                   spectrum: bool = True, physics: LevelPhysics | None = None) -> FitResult:
    """Fit a run record with the options and provenance of :func:`fit_file`.

    ``input_name`` and ``input_path`` name where the run came from; ``where`` says it in the
    note made when no material is given ("the file", "the table"). With ``mobility`` the
    density-only fit is followed by the joint fit of density and Hall mobility, and the
    options record the mechanisms and the Hall factor applied (absent otherwise, so a
    density-only fit's options are unchanged). ``spectrum=False`` leaves out Hoffmann's level
    spectrum of a density-only fit (a wafer of a lot: its verdict does not read it).

    The Hall factor of a joint fit (project choice, no source): a number given here, or the
    run's stated one (a ``# hall_factor:`` line, which ``freezeout reduce`` always writes), is
    one constant r for both series; ``"scattering"``, or no number and none stated, is
    r_H(T) from the mechanisms at every point for both series (the density column, computed
    with the run's r_run, modelled as r_run n / r_H(T); mu_H = r_H(T) mu). A constant the
    user states is a measurement of the sample and wins; without one, the scattering the fit
    already computes gives r_H(T), which moves by 10-20 % over a run. ``physics``: the
    optional level and band physics (:func:`freezeout.api.level_physics.level_physics`).
    """
    import datetime as _dt
    from dataclasses import replace

    from freezeout.fitting.fit import fit_run
    from freezeout.fitting.model_selection import AUTO, level_count, select_model
    from freezeout.physics.neutrality_kernel import active_kernel

    statistics = check_statistics(statistics)
    carriers = check_carriers(carriers)
    donors, acceptors = level_count(donors, "--donors"), level_count(acceptors, "--acceptors")
    if posterior:  # refused before any fit: a joint/two-carrier fit, bad steps, no emcee
        from freezeout.fitting import posterior as mcmc

        posterior_steps = mcmc.DEFAULT_STEPS if posterior_steps is None else posterior_steps
        mcmc.check_request(carriers, mobility, posterior_steps)
    if carriers == "both" and not mobility:
        mobility = "lattice+brooks-herring"
    models = ()
    if mobility:
        from freezeout.physics.majority_mobility import check_mechanisms

        models = check_mechanisms(mobility)
    source = joint_hall_factor(hall_factor, models, run)
    notes = []
    stated = run.metadata.get("material")
    if material is None and material_file is None:
        if stated:
            material = stated
        else:
            notes.append(f"no material given and none stated in {where}: assumed Si")
    elif stated and material is not None:
        asked = str(getattr(material, "name", material))
        if asked.strip().lower() != str(stated).strip().lower():
            notes.append(f"{where} says '# material: {stated}' but {asked} was asked for: "
                         f"the run is fitted as {asked}")
    physics = physics or level_physics()
    check_fit_use(physics, run.carrier, joint=bool(models), posterior=posterior,
                  majority_levels=donors if run.carrier == "n" else acceptors)
    mat = physics.material(load_material(material, material_file))
    check_gap_open(mat, run.temperature, input_path)
    options = {"material": mat.name, "material_file": None if material_file is None
               else str(material_file), "donors": donors, "acceptors": acceptors,
               "statistics": statistics, "hall_factor": hall_factor, "degeneracy": degeneracy,
               "fix": dict(fix or {}), "bounds": {k: list(v) for k, v in (bounds or {}).items()},
               "include_mixed": include_mixed, "include_flagged": include_flagged,
               **physics.options}
    if carriers == "both":
        options["carriers"] = "both"
    if posterior:
        options["posterior"] = {"steps": posterior_steps, "walkers": mcmc.DEFAULT_WALKERS,
                                "seed": 0}
    if models:
        options["mobility"] = {"models": list(models), "lattice_mu300_start": lattice_mu300,
                               "lattice_exponent_start": lattice_exponent,
                               "hall_factor": ("scattering" if source == "scattering"
                                               else float(run.hall_factor))}
    provenance = {
        "input": input_name,
        "input_path": input_path,
        "sha256": run.sha256,
        "metadata": dict(run.metadata),
        "tool": "freezeout",
        "tool_version": __version__,
        "neutrality_kernel": active_kernel(),  # the path that solved neutrality (same results)
        "date": _dt.datetime.now(_dt.UTC).date().isoformat(),
        "options": options,
        "hall_factor": run.hall_factor,
    }
    # an "auto" count: candidates fitted and one chosen by BIC (fitting.model_selection)
    density_fit = select_model if AUTO in (donors, acceptors) else fit_run
    # the two-carrier fit starts from the density-only levels, refits them all and states its
    # own intervals: its start is a start-only fit (the candidates of an "auto" count are
    # full fits, without profiles, so that their chi^2 can be compared)
    role = ({"start_only": True} if carriers == "both" and density_fit is fit_run
            else {"profiles": carriers != "both"})
    if physics.active:
        role.update(excited=physics.excited, lowering=physics.lowering)
    result = density_fit(run, mat, donors=donors, acceptors=acceptors, statistics=statistics,
                         degeneracy=physics.degeneracy(degeneracy), fix=fix, bounds=bounds,
                         include_flagged=include_flagged, provenance=provenance, **role)
    if carriers == "both":
        from freezeout.fitting.two_carrier import fit_run_two_carrier

        result = fit_run_two_carrier(
            run, mat, mobility=models, base=result, include_flagged=include_flagged, fix=fix,
            bounds=bounds, hall_factor=None if source == "scattering" else float(run.hall_factor))
    elif models:
        from freezeout.fitting.joint import fit_run_joint

        result = fit_run_joint(run, mat, mobility=models, lattice_mu300=lattice_mu300,
                               lattice_exponent=lattice_exponent, hall_factor=source,
                               base=result, fix=fix, bounds=bounds)
    if notes:
        result = replace(result, warnings=tuple(notes) + result.warnings)
    physics_note = physics.note(result.levels)
    if physics_note:
        result = replace(result, warnings=(physics_note,) + result.warnings)
    if spectrum and carriers == "majority" and not models and not physics.active:
        # the density fit's run read without a fit: Hoffmann's level spectrum of n(T)
        from freezeout.fitting.spectroscopy import fit_spectrum

        result = replace(result, spectroscopy=fit_spectrum(result, degeneracy=degeneracy))
    if posterior:
        result = replace(result, posterior=mcmc.sample_posterior(
            result, run, steps=posterior_steps, progress=posterior_progress))
    return result


def _is_scattering(hall_factor) -> bool:
    """Whether ``hall_factor`` is the word ``scattering``; InputError for any other word."""
    if not isinstance(hall_factor, str):
        return False
    if hall_factor.strip().lower() == "scattering":
        return True
    raise InputError(f"hall factor: expected a number or 'scattering', got {hall_factor!r}")


def reader_hall_factor(hall_factor, mobility=()) -> float | None:
    """The Hall factor the run reader applies: None (the file's own) for ``"scattering"``.

    Raises
    ------
    InputError
        ``"scattering"`` without mobility mechanisms, or a word other than ``scattering``.
    """
    if _is_scattering(hall_factor):
        if not mobility:
            raise InputError("--hall-factor scattering computes r_H(T) from the scattering "
                             "mechanisms: give them with --mobility (e.g. "
                             "lattice+brooks-herring), or give a number")
        return None
    return hall_factor


def joint_hall_factor(hall_factor, models, run: RunData) -> str | None:
    """``"scattering"`` or ``"constant"`` for a joint fit (rule of :func:`fit_run_record`).

    None without ``models`` (a density-only fit); an InputError for ``"scattering"`` then.
    """
    reader_hall_factor(hall_factor, models)
    if not models:
        return None
    if _is_scattering(hall_factor):
        return "scattering"
    if hall_factor is not None or "hall_factor" in run.metadata:
        return "constant"
    return "scattering"


#: Ways to model the conduction: the majority carrier alone, or electrons and holes.
CARRIER_CHOICES = ("majority", "both")


def check_carriers(carriers: str) -> str:
    """The carriers option checked (``"majority"`` or ``"both"``).

    Raises
    ------
    InputError
        Any other value; the message lists the valid ones.
    """
    key = str(carriers).strip().lower()
    if key not in CARRIER_CHOICES:
        raise InputError(f"unknown carriers choice {carriers!r}; valid: "
                         + ", ".join(CARRIER_CHOICES))
    return key


def check_gap_open(mat: Material, temperature, file: str | None = None) -> None:
    """Refuse a material whose band gap closes at one of the run's temperatures.

    Parameters
    ----------
    mat
        The material.
    temperature
        The run's temperatures. [K]
    file
        The run file, named in the error.

    Raises
    ------
    InputError
        Naming the first temperature (ascending) where E_g(T) <= 0, as simulate does.
    """
    import numpy as np

    t = np.sort(np.asarray(temperature, dtype=float))
    closed = t[~(np.asarray(mat.band_gap(t), dtype=float) > 0)]
    if closed.size:
        raise InputError(
            f"the band gap of {mat.name} closes at {closed[0]:.5g} K, within the run's "
            f"temperatures ({t[0]:.5g} to {t[-1]:.5g} K): the carrier model needs an open gap; "
            "check the material's band gap and Varshni parameters", file=file)


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


def write_fit_report(result: FitResult, folder: str | Path, *, svg: bool = False
                     ) -> dict[str, Path]:
    """Write the fit report into ``folder``; return name -> path.

    fit.json, the figures (PNG; SVG too with ``svg``), curves.csv, residuals.csv and
    report.html.

    Refuses (:class:`InputError`, nothing written) a folder that is, or whose report files
    would be, the run or material file the fit read
    (:func:`freezeout.api.guard.refuse_overwrite`).
    """
    from freezeout.api.guard import refuse_overwrite
    from freezeout.reporting.fit_report import write_fit_report as _write

    refuse_overwrite(fit_report_outputs(folder), _fit_inputs(result))
    return _write(result, folder, svg=svg)


def history_failure(exc: Exception, report: str | Path | None) -> InputError:
    """The error for a history database that failed, saying whether a report was kept."""
    msg = getattr(exc, "message", None)
    if not msg:  # a driver's error: its first line, without the SQL and the link
        orig = getattr(exc, "orig", None)
        msg = (str(orig if orig is not None else exc) or type(exc).__name__).splitlines()[0]
    if not msg.startswith("--db: history database") and not msg.startswith("history database"):
        msg = f"history database: {msg}"
    if report is not None:
        msg += f"; the report in {report} was written and kept"
    return InputError(msg, file=getattr(exc, "file", None))


def record_fit(result: FitResult, db: str | None = None, *,
               report: str | Path | None = None) -> SaveOutcome:
    """Store a fit in the history database (once per input and options).

    Parameters
    ----------
    result
        The fit.
    db
        Database URL (``sqlite:///FILE`` or ``postgresql://...``); default ``$FREEZEOUT_DB``,
        else a SQLite file in the user data folder.
    report
        The report folder already written for this fit, named in the error if storing fails
        (the report stays).

    Raises
    ------
    InputError
        The database cannot be opened or written (the message says whether ``report`` was
        written and kept), or is the fit's run or material file.
    """
    from sqlalchemy.exc import SQLAlchemyError

    from freezeout.api.guard import refuse_overwrite, sqlite_file
    from freezeout.storage import StorageError, open_history

    refuse_overwrite([sqlite_file(db)], _fit_inputs(result), option="--db")
    try:
        store = open_history(db)
        try:
            return store.save_fit(result)
        finally:
            store.close()
    except (InputError, StorageError, SQLAlchemyError, OSError) as exc:
        raise history_failure(exc, report) from exc
