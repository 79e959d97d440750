"""Measuring the wafers of a lot: one job per wafer, in this process or in worker processes.

A job and its outcome are plain picklable records, so the same function runs in a spawned
worker (:func:`measure_wafer`) and here.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace
from pathlib import Path
from typing import TYPE_CHECKING, Any

from freezeout.errors import FitError, InputError

if TYPE_CHECKING:
    from freezeout.fitting.result import FitResult
    from freezeout.records.measurement import Measurement

#: Fit settings used for every wafer (the lot file has no fit options): one partially
#: ionized majority level and one fully ionized compensating species, Fermi-Dirac
#: statistics (project choice). The Hall factor is the lot file's (``[measurement]`` or the
#: wafer's ``hall_factor``) when it states one, else the run's own (``# hall_factor:``,
#: else 1).
FIT_OPTIONS = {"donors": 1, "acceptors": 1, "statistics": "fermi-dirac"}

#: Called after each wafer: (wafers done, wafers in all, the wafer just measured).
Progress = Callable[[int, int, str], Any]


@dataclass(frozen=True)
class WaferJob:
    """What measuring one wafer needs.

    Attributes
    ----------
    wafer_id
        The wafer's id.
    run
        Path of its run.
    material, material_file
        Library name, or a user material file (which wins).
    hall_factor, hall_factor_uncertainty
        The lot file's r_H and its standard uncertainty, or None for the run's own. [1]
    hall_factor_keys
        The lot-file keys they came from.
    dopants
        The dopants the lot's net-doping claims are taken to come from (a single point's
        ionization check).
    """

    wafer_id: str
    run: str
    material: str | None
    material_file: str | None
    hall_factor: float | None
    hall_factor_uncertainty: float
    hall_factor_keys: tuple[str, ...]
    dopants: tuple[str | None, ...]


@dataclass(frozen=True)
class WaferOutcome:
    """How one wafer came out.

    Attributes
    ----------
    wafer_id
        The wafer's id.
    how
        ``"fit"``, ``"single room-temperature result"`` or ``"not measured"``.
    run_sha256
        SHA-256 of the run file, or None when it could not be read.
    measurement
        The measured quantities, or None.
    fit
        The fit, for fitted wafers (without the optimizer's raw result).
    reason
        Why the wafer was not measured, or None.
    """

    wafer_id: str
    how: str
    run_sha256: str | None = None
    measurement: Measurement | None = None
    fit: FitResult | None = None
    reason: str | None = None


def _reason_from(exc: Exception, run_name: str, what: str) -> str:
    msg = getattr(exc, "message", None) or str(exc)
    where = []
    line = getattr(exc, "line", None)
    column = getattr(exc, "column", None)
    if line is not None:
        where.append(f"line {line}")
    if column is not None:
        where.append(f"column {column!r}" if isinstance(column, str) else f"column {column}")
    loc = f" ({', '.join(where)})" if where else ""
    opt = getattr(exc, "optimizer_message", None)
    tail = f" ({opt})" if opt else ""
    return f"{what} {run_name}{loc}: {msg}{tail}"


def measure_wafer(job: WaferJob) -> WaferOutcome:
    """Measure one wafer: fit its run, or read a single room-temperature result.

    A run that cannot be read or fitted (:class:`InputError`, :class:`FitError`) gives an
    outcome with a ``reason`` instead of a measurement.
    """
    from freezeout.api.fits import fit_run_record
    from freezeout.api.materials import load_material
    from freezeout.api.runs import load_run
    from freezeout.claims import measurement_from_fit, room_point_measurement
    from freezeout.numbers import sha256_file
    from freezeout.records.measurement import HallFactorUsed

    run_path = Path(job.run)
    name = run_path.name
    try:
        sha = sha256_file(run_path)
    except OSError as exc:
        return WaferOutcome(job.wafer_id, "not measured",
                            reason=f"cannot read the run {name}: {exc}")
    hall_kw = {} if job.hall_factor is None else {"hall_factor": float(job.hall_factor)}
    lot_hall = None if job.hall_factor is None else HallFactorUsed(
        float(job.hall_factor), float(job.hall_factor_uncertainty or 0.0),
        "lot file " + ", ".join(job.hall_factor_keys))
    material = None if job.material_file else job.material
    try:
        run = load_run(run_path, **hall_kw)
        if run.n_points == 1:
            hall = lot_hall
            if hall is None:  # the run's own r_H (its # hall_factor line, else 1)
                hall = HallFactorUsed(
                    float(run.hall_factor), 0.0,
                    "the run's # hall_factor line" if "hall_factor" in run.metadata
                    else "default 1: neither the lot file nor the run states one")
            mat = load_material(material, job.material_file)
            measured = room_point_measurement(run, mat, dopants=job.dopants or (None,),
                                              hall_factor=hall)
            return WaferOutcome(job.wafer_id, "single room-temperature result", sha, measured)
    except InputError as exc:
        return WaferOutcome(job.wafer_id, "not measured", sha,
                            reason=_reason_from(exc, name, "the run"))
    try:  # the run read above, fitted as fit_file would (read once, not twice)
        result = fit_run_record(run, input_name=name, input_path=str(run_path),
                                material=material, material_file=job.material_file,
                                spectrum=False, **FIT_OPTIONS, **hall_kw)
    except (InputError, FitError) as exc:
        return WaferOutcome(job.wafer_id, "not measured", sha,
                            reason=_reason_from(exc, name, "the fit of"))
    measured = measurement_from_fit(result)
    if lot_hall is not None:
        measured = replace(measured, hall_factor=lot_hall)
    return WaferOutcome(job.wafer_id, "fit", sha, measured, replace(result, raw=None))


def _watch_parent(parent_pid: int, period: float = 1.0) -> None:
    """Exit this process as soon as its parent is gone (polled every ``period`` [s])."""
    import os
    import time

    while True:
        if os.getppid() != parent_pid:
            os._exit(1)  # the parent was killed: nobody wants this wafer's result
        time.sleep(period)


def warm_imports() -> None:
    """Import what measuring a wafer needs (the numerical stack), once per process."""
    import freezeout.api.fits  # noqa: F401 - the fit, its reading and its material
    import freezeout.claims  # noqa: F401 - the measurement of a fit or a single point
    import freezeout.fitting.fit  # noqa: F401


def pool_context():
    """The process start method of the worker pool: ``fork`` where the system has it.

    A forked worker starts with this process's imports (a warm start, milliseconds); a
    spawned one (Windows, macOS without fork) imports the stack again in its initializer,
    once per worker (about 2 s here).
    """
    import multiprocessing

    methods = multiprocessing.get_all_start_methods()
    return multiprocessing.get_context("fork" if "fork" in methods else "spawn")


def _start_worker(parent_pid: int) -> None:
    """Worker start-up: leave Ctrl-C to the parent, die with the parent, import once.

    A parent killed outright (SIGKILL, out of memory) cannot stop its workers, so each
    watches it from a daemon thread and exits when its parent process changes.
    """
    import signal
    import threading

    signal.signal(signal.SIGINT, signal.SIG_IGN)
    threading.Thread(target=_watch_parent, args=(parent_pid,), name="watch-parent",
                     daemon=True).start()
    warm_imports()  # nothing to do after a fork; a spawned worker imports here, once


def measure_wafers(jobs: Sequence[WaferJob], workers: int,
                   progress: Progress | None = None) -> dict[str, WaferOutcome]:
    """Measure every wafer, in worker processes when ``workers`` > 1.

    The workers are forked from this process where the system allows it
    (:func:`pool_context`), so they start with the stack already imported; the outcomes
    come back in lot order whatever order the workers finish in. Ctrl-C (or any error)
    stops the workers at once instead of waiting for their fits.
    """
    results: dict[str, WaferOutcome] = {}
    total = len(jobs)

    def done(wid: str) -> None:
        if progress is not None:
            progress(len(results), total, wid)

    if workers <= 1 or total <= 1:
        for job in jobs:
            results[job.wafer_id] = measure_wafer(job)
            done(job.wafer_id)
        return results
    import os
    import warnings
    from concurrent.futures import ProcessPoolExecutor, as_completed

    warm_imports()  # imported before the fork, so no worker imports them again
    pool = ProcessPoolExecutor(max_workers=workers, mp_context=pool_context(),
                               initializer=_start_worker, initargs=(os.getpid(),))
    try:
        with warnings.catch_warnings():
            # Python 3.12+ warns of a fork beside other threads (the pool's own manager,
            # OpenBLAS's pool, which has its own fork handler); the workers only fit
            warnings.filterwarnings("ignore", category=DeprecationWarning,
                                    message=".*fork.*")
            futures = {pool.submit(measure_wafer, job): job.wafer_id for job in jobs}
        for fut in as_completed(futures):
            wid = futures[fut]
            results[wid] = fut.result()
            done(wid)
    except BaseException:
        processes = list(getattr(pool, "_processes", {}).values())
        pool.shutdown(wait=False, cancel_futures=True)
        for proc in processes:
            proc.terminate()
        for proc in processes:
            proc.join(timeout=5)
        raise
    pool.shutdown(wait=True)
    return {job.wafer_id: results[job.wafer_id] for job in jobs}
