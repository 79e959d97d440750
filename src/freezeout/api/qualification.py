"""The qualification pipeline: lot -> runs -> fits -> verdicts -> record -> report -> store.

Each wafer's run is fitted (in worker processes when that helps) or, for a single
room-temperature result, read directly; the claims are decided under the lot file's decision
rule; the lot report (HTML, JSON, CSV) is written and the qualification and every fit are
stored in the history database. Verdicts defer to the purchase contract's specification
(:data:`freezeout.records.verdicts.DEFERENCE`).
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING

from freezeout._version import __version__
from freezeout.api.wafers import FIT_OPTIONS, Progress, WaferJob, WaferOutcome, measure_wafers
from freezeout.errors import InputError

if TYPE_CHECKING:
    from freezeout.records.lot import LotFile
    from freezeout.records.qualification import LotQualification
    from freezeout.storage import SaveOutcome

#: Exit code of ``freezeout qualify`` per lot verdict.
EXIT_CODES = {"accept": 0, "reject": 3, "indeterminate": 4}


def lot_options() -> dict:
    """The options that, with the lot's input files, determine a qualification."""
    from freezeout.claims import (
        DEFAULT_TEMPERATURE_TOLERANCE_K,
        FULL_IONIZATION,
        RESISTIVITY_TEMPERATURE_COEFFICIENT_PER_K,
        ROOM_TEMPERATURE_RANGE_K,
    )

    return {"fit": dict(FIT_OPTIONS),
            "temperature_tolerance_K": DEFAULT_TEMPERATURE_TOLERANCE_K,
            "room_temperature_range_K": list(ROOM_TEMPERATURE_RANGE_K),
            "full_ionization_fraction": FULL_IONIZATION,
            "resistivity_temperature_coefficient_per_K":
                RESISTIVITY_TEMPERATURE_COEFFICIENT_PER_K}


#: Lots up to this many wafers are measured in this process by default when workers must be
#: spawned: a spawned worker re-imports the numerical stack (about 2 s each), more than a
#: small lot's fits take (sample lot, 5 wafers, 2 CPUs: 4.5-6.9 s with 1 worker, 12.8-14.1 s
#: with 2).
SMALL_LOT_WAFERS = 5
#: Wafers per spawned worker beyond that, so each worker's start-up is spread over several fits.
WAFERS_PER_WORKER = 3
#: With forked workers (a warm start: they begin with this process's imports) a pool pays
#: from this many wafers on. Measured on 2 CPUs, 1 worker vs 2 (temperature runs of the
#: sample lot): 2 wafers 0.09 vs 0.11 s, 4: 0.16 vs 0.15 s, 6: 0.26 vs 0.16 s, 12: 0.61 vs
#: 0.41 s, 40: 2.1-2.6 vs 1.2-1.3 s.
FORK_POOL_WAFERS = 4


def default_workers(n_wafers: int, cpu_count: int | None = None, *,
                    fork: bool | None = None) -> int:
    """The default number of worker processes for a lot of ``n_wafers``.

    With forked workers (``fork``; default: whether this system can fork): one (this
    process) below :data:`FORK_POOL_WAFERS` wafers, else ``min(cpu_count, n_wafers // 2)``.
    With spawned workers: one for a lot of at most :data:`SMALL_LOT_WAFERS` wafers, else
    ``min(cpu_count, n_wafers // WAFERS_PER_WORKER)``. At least 1.

    Parameters
    ----------
    n_wafers
        Wafers to measure.
    cpu_count
        CPUs available (default :func:`os.cpu_count`).
    fork
        Whether the workers are forked (default: ``fork`` is a start method here).
    """
    cpus = cpu_count if cpu_count is not None else (os.cpu_count() or 1)
    if fork is None:
        import multiprocessing

        fork = "fork" in multiprocessing.get_all_start_methods()
    if fork:
        if n_wafers < FORK_POOL_WAFERS:
            return 1
        return max(1, min(cpus, n_wafers // 2))
    if n_wafers <= SMALL_LOT_WAFERS:
        return 1
    return max(1, min(cpus, n_wafers // WAFERS_PER_WORKER))


def _relative(path: Path, base: Path) -> str:
    try:
        return path.relative_to(base).as_posix()
    except ValueError:
        return str(path)


def _jobs(lot: LotFile) -> list[WaferJob]:
    from freezeout.claims import net_doping_dopants

    dopants = tuple(net_doping_dopants(lot))
    return [WaferJob(w.wafer_id, str(w.run), w.material,
                     None if w.material_file is None else str(w.material_file),
                     w.hall_factor.value, w.hall_factor.stderr,
                     tuple(k for k in (w.hall_factor.value_key, w.hall_factor.stderr_key) if k),
                     dopants)
            for w in lot.wafers]


def _fit_summary(fit):
    from freezeout.records.qualification import FitSummary

    nd, comp = fit.net_doping, fit.compensation_ratio
    return FitSummary(nd.value, nd.stderr, tuple(nd.ci95), comp.value, comp.stderr,
                      tuple(comp.ci95), fit.n_points, fit.reduced_chi2, tuple(fit.warnings))


def outside_paths(lot: LotFile) -> list[str]:
    """The lot's run and material files outside the lot file's folder (resolved paths)."""
    base = lot.path.parent
    files = [p for w in lot.wafers for p in (w.run, w.material_file) if p is not None]
    return list(dict.fromkeys(str(p) for p in files if not p.is_relative_to(base)))


def build_qualification(lot: LotFile, outcomes: dict[str, WaferOutcome],
                        sha256: str, *, recorded: bool = True) -> LotQualification:
    """Decide the lot's claims from the wafers' outcomes and make the qualification record.

    ``recorded=False`` marks a trial run that is not stored in the history.

    When the lot names files outside its folder (read only with ``allow_outside``), the
    provenance options say so: ``allow_outside_paths`` and ``paths_outside_lot_folder``.
    """
    import datetime as dt

    from freezeout.claims import evaluate_lot
    from freezeout.records.qualification import LotProvenance, LotQualification, WaferInput

    measured = {wid: o.measurement for wid, o in outcomes.items() if o.measurement is not None}
    unmeasured = {wid: o.reason for wid, o in outcomes.items() if o.measurement is None}
    verdict = evaluate_lot(lot, measured, unmeasured=unmeasured)
    base = lot.path.parent
    inputs = {}
    for w in lot.wafers:
        o = outcomes[w.wafer_id]
        inputs[w.wafer_id] = WaferInput(
            run=_relative(w.run, base), run_sha256=o.run_sha256, material=w.material,
            material_file=None if w.material_file is None else _relative(w.material_file, base),
            how=o.how, reason=o.reason, fit=None if o.fit is None else _fit_summary(o.fit),
            hall_factor=None if o.measurement is None else o.measurement.hall_factor,
            note=w.note)
    options = lot_options()
    outside = outside_paths(lot)
    if outside:
        options |= {"allow_outside_paths": True, "paths_outside_lot_folder": outside}
    provenance = LotProvenance(
        lot_file=lot.path.name, lot_input_sha256=sha256, tool_version=__version__,
        date=dt.datetime.now(dt.UTC).replace(microsecond=0).isoformat(),
        options=options, recorded=recorded)
    return LotQualification(lot, verdict, inputs, provenance)


@dataclass(frozen=True)
class QualificationOutcome:
    """What :func:`qualify_lot` did.

    Attributes
    ----------
    qualification
        The qualified lot (verdicts, inputs, provenance).
    written
        Report files written, name -> path (empty when no report was asked for).
    lot_record
        The history record of the qualification (None when not recorded).
    fits_new
        Fit records newly stored (a fit stored before for the same input and options is not
        stored again).
    """

    qualification: LotQualification
    written: dict[str, Path] = field(default_factory=dict)
    lot_record: SaveOutcome | None = None
    fits_new: int = 0

    @property
    def verdict(self) -> str:
        """The lot's verdict: ``"accept"``, ``"reject"`` or ``"indeterminate"``."""
        return self.qualification.verdict.verdict

    @property
    def exit_code(self) -> int:
        """0 accepted, 3 rejected, 4 indeterminate."""
        return EXIT_CODES[self.verdict]

    def to_dict(self) -> dict:
        """The lot JSON (what ``freezeout qualify --json`` prints)."""
        return self.qualification.to_dict()


def default_lot_folder(lot_id: str) -> Path:
    """Where ``qualify`` writes a lot's report by default: ``reports/<lot>/``."""
    from freezeout.numbers import slug

    return Path("reports") / slug(lot_id, "lot")


def _refuse_overwrite(lot: LotFile, folder: Path | None, db: str | None) -> None:
    """Refuse a report folder or database that would write over the lot's own files."""
    from freezeout.api.guard import refuse_overwrite, sqlite_file

    inputs = [lot.path, *(w.run for w in lot.wafers), *(w.material_file for w in lot.wafers)]
    if folder is not None:
        from freezeout.reporting.lot_report import lot_report_files

        refuse_overwrite([folder, *(folder / n for n in lot_report_files(lot))], inputs)
    refuse_overwrite([sqlite_file(db)], inputs, option="--db")


def qualify_lot(path: str | Path, *, out: str | Path | None = None, report: bool = True,
                db: str | None = None, workers: int | None = None,
                progress: Progress | None = None,
                allow_outside: bool = False, record: bool = True) -> QualificationOutcome:
    """Qualify a lot: measure every wafer, decide every claim, report and store.

    Parameters
    ----------
    path
        The lot file (TOML; ``docs/lot_format.md``).
    out
        Report folder (default ``reports/<lot>/``).
    report
        False: write no report unless ``out`` is given.
    db
        History database URL (default ``$FREEZEOUT_DB``, else the user data folder).
    workers
        Processes fitting wafers at once (default :func:`default_workers`: 1, in this
        process, for a lot of up to 3 wafers where workers are forked, up to 5 where they
        are spawned; 1 fits in this process).
    progress
        Called after each wafer with (done, total, wafer id).
    allow_outside
        Read run and material files outside the lot file's folder (``..``, absolute paths,
        symbolic links out); refused by default. The report and lot.json then say so.
    record
        False: a trial run; nothing is stored in the history (the database is not opened)
        and the report says the run was not recorded.

    Raises
    ------
    InputError
        A bad lot file, option or database URL; a report folder or database that would
        write over the lot file or one of its runs or material files (checked before any
        wafer is measured; nothing is written).
    """
    from sqlalchemy.exc import SQLAlchemyError

    from freezeout.api.fits import history_failure
    from freezeout.claims import load_lot, lot_input_sha256
    from freezeout.storage import StorageError, open_history

    if workers is not None and workers < 1:
        raise InputError(f"--workers must be at least 1, got {workers}")
    lot = load_lot(path, allow_outside=allow_outside)
    folder = None
    if out is not None or report:
        folder = Path(out) if out is not None else default_lot_folder(lot.lot)
    _refuse_overwrite(lot, folder, db)
    sha = lot_input_sha256(lot)
    store = open_history(db) if record else None
    if store is not None:  # no open database connection is forked into the workers
        store.engine.dispose()
    try:
        jobs = _jobs(lot)
        n_workers = max(1, min(workers or default_workers(len(jobs)), len(jobs)))
        outcomes = measure_wafers(jobs, n_workers, progress)
        qualification = build_qualification(lot, outcomes, sha, recorded=record)
        written = {}
        if folder is not None:
            from freezeout.reporting.lot_report import write_lot_report

            written = write_lot_report(qualification, folder)
        fits = [o.fit for o in outcomes.values() if o.fit is not None]
        saved_lot, fits_new = None, 0
        try:
            if store is not None:
                saved_lot, fits_new = store.save_qualification(qualification, fits)
        except (StorageError, SQLAlchemyError, OSError) as exc:
            raise history_failure(exc, folder if written else None) from exc
    finally:
        if store is not None:
            store.close()
    return QualificationOutcome(qualification, written, saved_lot, fits_new)
