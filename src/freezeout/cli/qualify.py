"""``freezeout qualify``: check a lot's certificate claims against the measured wafers.

Each wafer's run is fitted (in parallel over processes) or, for a single room-temperature
result, read directly; the claims are decided under the lot file's decision rule; the lot
report (HTML, JSON, CSV) is written and the qualification and every fit are stored in the
history database. Exit codes: 0 lot accepted, 3 rejected, 4 indeterminate, 2 bad input.
Verdicts defer to the purchase contract's specification
(:data:`freezeout.claims.conformity.DEFERENCE`).
"""

from __future__ import annotations

import os
import re
import sys
from pathlib import Path
from typing import Annotated

import typer

from freezeout.cli.common import DbOpt, JsonOpt, print_json
from freezeout.errors import InputError

HELP = ("Qualify a wafer lot: fit every wafer's run, decide each certificate claim with the "
        "measurement uncertainty (lot file's decision rule), write lot_report.html, lot.json "
        "and lot.csv, and store the result in the history. Exit 0 accepted, 3 rejected, "
        "4 indeterminate, 2 bad input.")

#: Exit code per lot verdict.
EXIT_CODES = {"accept": 0, "reject": 3, "indeterminate": 4}

#: Fit settings used for every wafer (the lot file has no fit options): one partially
#: ionized majority level and one fully ionized compensating species, Fermi-Dirac
#: statistics. The Hall factor is the lot file's (``[measurement]`` or the wafer's
#: ``hall_factor``) when it states one, else the run's own (``# hall_factor:``, else 1).
FIT_OPTIONS = {"donors": 1, "acceptors": 1, "statistics": "fermi-dirac"}

#: A run with a single point is read as a room-temperature result when its temperature lies
#: in this range; common practice for "room temperature", no source. [K]
ROOM_TEMPERATURE_RANGE_K = (250.0, 350.0)


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


def single_point_measurement(run, material, *, dopants=(None,), hall_factor=None) -> dict:
    """The measured-quantities dict of a single room-temperature result.

    With every dopant ionized (the saturation range) and non-degenerate statistics, charge
    neutrality n + N_A = p + N_D and n p = n_i^2 give the net doping from the majority
    density m as ``|N_D - N_A| = m - n_i^2 / m``, with n_i(T) of the material (reported
    signed: negative for a p-type point). Its standard uncertainty is
    ``hypot(u_m, s m) (1 + n_i^2 / m^2)``, with u_m the file's point-to-point density
    uncertainty and s the relative uncertainty common to every point that the reader split
    out of it (``RunData.scale_uncertainty``, the sample thickness of a reduced run); no
    density uncertainty given: unknown. The Hall factor's uncertainty is added when the claim
    is evaluated (:mod:`freezeout.claims.evaluate`). A resistivity column with its uncertainty
    is kept as the measured resistivity at that temperature (the readers keep the thickness
    part inside ``resistivity_err``; nothing is split out of it).

    Whether the point is in saturation is checked for each dopant in ``dopants``
    (:func:`freezeout.claims.single_point.check_single_point`); the result goes under
    ``ionization``, and a failed check makes the net-doping claims that depend on it
    indeterminate.

    Parameters
    ----------
    run
        The run (:class:`freezeout.records.run.RunData`) with exactly one point.
    material
        The :class:`freezeout.physics.materials.Material` (for n_i and the ionization).
    dopants
        The dopants the lot's net-doping claims are taken to come from (None: none named).
    hall_factor
        ``{"value", "stderr", "source"}`` of the r_H the density was taken with.

    Returns
    -------
    dict
        The measured-quantities dict of :mod:`freezeout.claims.evaluate`.

    Raises
    ------
    InputError
        If the point is not at room temperature, failed a severe data-quality check, or its
        density does not exceed n_i (then it is not a majority-carrier density).
    """
    import math

    from freezeout.claims.single_point import check_single_point

    t = float(run.temperature[0])
    lo, hi = ROOM_TEMPERATURE_RANGE_K
    name = Path(run.source).name
    if not lo <= t <= hi:
        raise InputError(f"a single point at {t:g} K is not a room-temperature result "
                         f"({lo:g} to {hi:g} K); net doping needs a temperature run there",
                         file=name)
    if run.severe is not None and bool(run.severe[0]):
        raise InputError("the only point failed a severe data-quality check", file=name)
    m = float(run.density[0])
    ni = float(material.intrinsic_density(t))
    if not m > ni:
        raise InputError(f"the density {m:.4g} cm^-3 does not exceed the intrinsic density "
                         f"{ni:.3g} cm^-3 of {material.name} at {t:g} K", file=name)
    net = m - ni * ni / m
    u_m = None if run.density_err is None else float(run.density_err[0])
    if u_m is not None and not math.isfinite(u_m):
        u_m = None
    scale = float(run.scale_uncertainty)
    u_net = None if u_m is None else math.hypot(u_m, scale * m) * (1.0 + (ni / m) ** 2)
    carrier_word = "n" if run.carrier == "n" else "p"
    rho_points = None
    if run.resistivity is not None and math.isfinite(float(run.resistivity[0])):
        err = None if run.resistivity_err is None else float(run.resistivity_err[0])
        rho_points = [{"temperature_K": t, "value": float(run.resistivity[0]),
                       "stderr": err if err is not None and math.isfinite(err) else None}]
    ionization = {d or "": check_single_point(material, d, run.carrier, m, t).to_dict()
                  for d in dict.fromkeys(dopants)}
    hall = dict(hall_factor or {"value": 1.0, "stderr": 0.0, "source": "default"})
    note = (f"single room-temperature result: net doping |N_D - N_A| taken from the majority "
            f"carrier density {carrier_word} at {t:g} K as {carrier_word} - n_i^2/"
            f"{carrier_word} (n_i = {ni:.3g} cm^-3), which holds in the saturation range where "
            "every dopant is ionized; the ionization of the claimed dopant at the measured "
            f"density is checked with the tool's model. Hall factor r_H = {hall['value']:g} "
            f"({hall['source']}).")
    if scale > 0 and u_m is not None:
        note += (f" The density's uncertainty includes the {100 * scale:.3g} % common to every "
                 "point (the sample thickness), in quadrature.")
    return {
        "material": material.name,
        "carrier": run.carrier,
        "net_doping_cm3": {"value": net if run.carrier == "n" else -net, "stderr": u_net},
        "net_doping_method": f"majority carrier density at {t:g} K (single room-temperature "
                             "result)",
        "resistivity_ohm_cm_at_T": rho_points,
        "compensation_ratio": None,
        "hall_factor": hall,
        "ionization": ionization,
        "warnings": [note, *run.notes],
        "source": name,
    }


def _hall_source(job: dict) -> str:
    keys = [k for k in (job.get("hall_factor_key"), job.get("hall_factor_uncertainty_key"))
            if k]
    return "lot file " + ", ".join(keys)


def measure_wafer(job: dict) -> dict:
    """Measure one wafer: fit its run, or read a single room-temperature result.

    Runs in a worker process (so it takes and returns plain data). A run that cannot be read
    or fitted (:class:`~freezeout.errors.InputError`, :class:`~freezeout.errors.FitError`)
    gives an outcome with a ``reason`` instead of a measurement.

    Parameters
    ----------
    job
        ``id``, ``run`` (path), ``material`` (name or None), ``material_file`` (path or
        None), ``hall_factor`` (the lot file's r_H, or None for the run's own) with
        ``hall_factor_uncertainty`` (absolute, 0 when none stated) and the keys they came
        from (``hall_factor_key``, ``hall_factor_uncertainty_key``), and ``dopants`` (the
        dopants the net-doping claims are taken to come from, for a single point's
        ionization check).

    Returns
    -------
    dict
        ``id``, ``how`` (``"fit"``, ``"single room-temperature result"`` or
        ``"not measured"``), ``sha256`` of the run, and ``measured`` (the
        measured-quantities dict) with ``fit`` (the fit result JSON, for fits) or ``reason``.
    """
    import hashlib

    from freezeout import api
    from freezeout.claims.evaluate import measured_from_fit
    from freezeout.errors import FitError

    run_path = Path(job["run"])
    name = run_path.name
    out = {"id": job["id"], "how": "not measured", "measured": None, "fit": None,
           "reason": None, "sha256": None}
    try:
        out["sha256"] = hashlib.sha256(run_path.read_bytes()).hexdigest()
    except OSError as exc:
        out["reason"] = f"cannot read the run {name}: {exc}"
        return out
    material = job.get("material")
    material_file = job.get("material_file")
    stated = job.get("hall_factor")
    hall_kw = {} if stated is None else {"hall_factor": float(stated)}
    lot_hall = None if stated is None else {
        "value": float(stated), "stderr": float(job.get("hall_factor_uncertainty") or 0.0),
        "source": _hall_source(job)}
    try:
        run = api.load_run(run_path, **hall_kw)
        if run.n_points == 1:
            hall = lot_hall
            if hall is None:  # the run's own r_H (its # hall_factor line, else 1)
                hall = {"value": float(run.hall_factor), "stderr": 0.0,
                        "source": "the run's # hall_factor line" if "hall_factor"
                        in run.metadata else "default 1: neither the lot file nor the run "
                        "states one"}
            mat = api.load_material(None if material_file else material, material_file)
            out["measured"] = single_point_measurement(
                run, mat, dopants=tuple(job.get("dopants") or (None,)), hall_factor=hall)
            out["how"] = "single room-temperature result"
            return out
    except InputError as exc:
        out["reason"] = _reason_from(exc, name, "the run")
        return out
    try:
        result = api.fit_file(run_path, material=None if material_file else material,
                              material_file=material_file, **FIT_OPTIONS, **hall_kw)
    except (InputError, FitError) as exc:
        out["reason"] = _reason_from(exc, name, "the fit of")
        return out
    d = result.to_dict()
    measured = measured_from_fit(d)
    if lot_hall is not None:
        measured["hall_factor"] = lot_hall
    out.update(how="fit", fit=d, measured=measured)
    return out


def _ignore_interrupts() -> None:
    """Worker start-up: leave Ctrl-C to the parent, which stops the workers itself."""
    import signal

    signal.signal(signal.SIGINT, signal.SIG_IGN)


def _measure_all(jobs: list[dict], workers: int, progress: bool) -> dict[str, dict]:
    """Measure every wafer, in worker processes when there is more than one to do."""
    from rich.console import Console
    from rich.progress import (
        BarColumn,
        MofNCompleteColumn,
        Progress,
        TextColumn,
        TimeElapsedColumn,
    )

    results: dict[str, dict] = {}
    columns = (TextColumn("{task.description}"), BarColumn(), MofNCompleteColumn(),
               TimeElapsedColumn())
    with Progress(*columns, console=Console(stderr=True), disable=not progress,
                  transient=True) as bar:
        task = bar.add_task("measuring wafers", total=len(jobs))
        if workers <= 1 or len(jobs) <= 1:
            for job in jobs:
                bar.update(task, description=f"measuring wafer {job['id']}")
                results[job["id"]] = measure_wafer(job)
                bar.advance(task)
            return results
        import multiprocessing
        from concurrent.futures import ProcessPoolExecutor, as_completed

        ctx = multiprocessing.get_context("spawn")
        pool = ProcessPoolExecutor(max_workers=workers, mp_context=ctx,
                                   initializer=_ignore_interrupts)
        try:
            futures = {pool.submit(measure_wafer, job): job["id"] for job in jobs}
            for fut in as_completed(futures):
                wid = futures[fut]
                results[wid] = fut.result()
                bar.update(task, description=f"measured wafer {wid}")
                bar.advance(task)
        except BaseException:
            # Ctrl-C or an error: stop the workers now rather than wait for their fits
            # (otherwise the interpreter joins them at exit and the command seems to hang)
            processes = list(getattr(pool, "_processes", {}).values())
            pool.shutdown(wait=False, cancel_futures=True)
            for proc in processes:
                proc.terminate()
            for proc in processes:
                proc.join(timeout=5)
            raise
        pool.shutdown(wait=True)
    return results


def _relative(path: Path, base: Path) -> str:
    try:
        return path.relative_to(base).as_posix()
    except ValueError:
        return str(path)


def _fit_summary(fit: dict) -> dict:
    st = fit.get("statistics") or {}
    return {"net_doping_cm3": fit.get("net_doping_cm3"),
            "compensation_ratio": fit.get("compensation_ratio"),
            "n_points": st.get("n_points"), "reduced_chi2": st.get("reduced_chi2"),
            "warnings": list(fit.get("warnings") or [])}


def lot_options() -> dict:
    """The options that, with the lot's input files, determine a qualification."""
    from freezeout.claims.evaluate import (
        DEFAULT_TEMPERATURE_TOLERANCE_K,
        RESISTIVITY_TEMPERATURE_COEFFICIENT_PER_K,
    )
    from freezeout.claims.single_point import FULL_IONIZATION

    return {"fit": dict(FIT_OPTIONS),
            "temperature_tolerance_K": DEFAULT_TEMPERATURE_TOLERANCE_K,
            "room_temperature_range_K": list(ROOM_TEMPERATURE_RANGE_K),
            "full_ionization_fraction": FULL_IONIZATION,
            "resistivity_temperature_coefficient_per_K":
                RESISTIVITY_TEMPERATURE_COEFFICIENT_PER_K}


def build_lot_document(lot, verdict, outcomes: dict[str, dict], sha256: str) -> dict:
    """The lot JSON: the verdict dict plus claims, each wafer's input and provenance."""
    import datetime as dt

    from freezeout._version import __version__

    doc = verdict.to_dict()
    doc["certificate"] = lot.certificate
    doc["note"] = lot.note
    doc["claims"] = [c.to_dict() for c in lot.claims]
    doc["measurement"] = lot.measurement.to_dict()
    base = lot.path.parent
    by_id = {w.wafer_id: w for w in lot.wafers}
    for w in doc["wafers"]:
        wafer = by_id[w["id"]]
        o = outcomes[w["id"]]
        w["input"] = {
            "run": _relative(wafer.run, base),
            "run_sha256": o["sha256"],
            "material": wafer.material,
            "material_file": None if wafer.material_file is None
            else _relative(wafer.material_file, base),
            "how": o["how"],
            "reason": o["reason"],
            "fit": None if o["fit"] is None else _fit_summary(o["fit"]),
            "hall_factor": None if o["measured"] is None else o["measured"].get("hall_factor"),
            "note": wafer.note,
        }
    doc["provenance"] = {
        "lot_file": lot.path.name,
        "lot_input_sha256": sha256,
        "tool": "freezeout",
        "tool_version": __version__,
        "date": dt.datetime.now(dt.UTC).replace(microsecond=0).isoformat(),
        "options": lot_options(),
    }
    return doc


def _folder_name(lot_id: str) -> str:
    return re.sub(r"[^A-Za-z0-9._-]+", "_", lot_id).strip("._") or "lot"


def _open_store(db: str | None):
    from freezeout.storage.db import StorageError, open_store

    try:
        return open_store(db)
    except StorageError as exc:
        raise InputError(f"--db: history database: {exc}") from None


def _net_doping_dopants(lot) -> list[str | None]:
    """The dopants the lot's claims that rest on a net doping are taken to come from."""
    from freezeout.claims import silicon
    from freezeout.claims.lotfile import claim_dopant

    out: list[str | None] = []
    for c in lot.claims:
        if c.quantity == "net_doping" or (c.quantity == "resistivity"
                                          and c.dopant in silicon.DOPANTS):
            d = claim_dopant(c, lot.claims)
            if d not in out:
                out.append(d)
    return out or [None]


def qualify_command(
    lot: Annotated[Path, typer.Argument(metavar="LOT.toml",
                                        help="Lot file (TOML; see docs/lot_format.md).")],
    out: Annotated[Path | None, typer.Option(
        "--out", "-o", help="Report folder (default: reports/<lot>/; with --json, no report "
        "unless --out is given).")] = None,
    db: DbOpt = None,
    json_output: JsonOpt = False,
    workers: Annotated[int | None, typer.Option(
        "--workers", "-j", help="Processes fitting wafers at once (default: the number of "
        "CPUs, at most one per wafer; 1 fits in this process).")] = None,
) -> int:
    """Qualify a lot; see HELP."""
    from freezeout.claims.evaluate import evaluate_lot
    from freezeout.claims.lotfile import load_lot, lot_input_sha256

    if workers is not None and workers < 1:
        raise InputError(f"--workers must be at least 1, got {workers}")
    lot_file = load_lot(lot)
    sha = lot_input_sha256(lot_file)
    store = _open_store(db)
    try:
        jobs = [{"id": w.wafer_id, "run": str(w.run), "material": w.material,
                 "material_file": None if w.material_file is None else str(w.material_file),
                 "hall_factor": w.hall_factor.value,
                 "hall_factor_uncertainty": w.hall_factor.stderr,
                 "hall_factor_key": w.hall_factor.value_key,
                 "hall_factor_uncertainty_key": w.hall_factor.stderr_key,
                 "dopants": _net_doping_dopants(lot_file)}
                for w in lot_file.wafers]
        n_workers = min(workers or os.cpu_count() or 1, len(jobs))
        progress = not json_output and sys.stderr.isatty()
        outcomes = _measure_all(jobs, n_workers, progress)
        measured = {wid: o["measured"] for wid, o in outcomes.items()
                    if o["measured"] is not None}
        unmeasured = {wid: o["reason"] for wid, o in outcomes.items() if o["measured"] is None}
        verdict = evaluate_lot(lot_file, measured, unmeasured=unmeasured)
        doc = build_lot_document(lot_file, verdict, outcomes, sha)

        written = {}
        if out is not None or not json_output:
            from freezeout.reporting.lot_report import write_lot_report

            folder = out if out is not None else Path("reports") / _folder_name(lot_file.lot)
            written = write_lot_report(doc, folder)

        from freezeout._version import __version__

        fits_new = 0
        for o in outcomes.values():
            fit = o["fit"]
            if fit is None:
                continue
            prov = fit["provenance"]
            saved = store.save_fit(fit, input_name=prov["input"], input_sha256=prov["sha256"],
                                   options=prov["options"], tool_version=prov["tool_version"])
            fits_new += saved.created
        lot_name = f"{lot_file.path.parent.name}/{lot_file.path.name}"
        saved_lot = store.save_lot(doc, input_name=lot_name, input_sha256=sha,
                                   options=lot_options(), tool_version=__version__)
    finally:
        store.close()

    if json_output:
        print_json(doc)
    else:
        _print_summary(doc, written, saved_lot, fits_new)
    return EXIT_CODES[doc["verdict"]]


def _print_summary(doc: dict, written: dict, saved_lot, fits_new: int) -> None:
    from rich.console import Console
    from rich.table import Table
    from rich.text import Text

    con = Console()
    table = Table(title=Text(f"Lot {doc['lot']} ({doc['supplier']}, {doc['date']}), "
                             f"{doc['decision']['rule']} rule"), title_justify="left")
    for col in ("wafer", "verdict", "decided by", "margin [U]", "measured from"):
        table.add_column(col, justify="right" if col == "margin [U]" else "left")
    for w in doc["wafers"]:
        m = w["margin_U"]
        how = w["input"]["how"]
        if w["input"]["reason"]:
            how += f": {w['input']['reason']}"
        table.add_row(*(Text(x) for x in (w["id"], w["verdict"], w["decided_by"] or "—",
                                          "—" if m is None else f"{m:+.2f}", how)))
    con.print(table)
    con.print(doc["sentence"], highlight=False, markup=False)
    if written:
        con.print(f"report: {written['lot_report.html']}", highlight=False, markup=False)
    state = "stored" if saved_lot.created else "already stored, nothing new"
    con.print(f"history: lot record {saved_lot.record_id} ({state}); {fits_new} new fit "
              "record(s)", highlight=False, markup=False)
