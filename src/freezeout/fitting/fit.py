"""Fitting a run to the carrier model: the multi-start driver.

Concentrations are fitted as log10. The global stage evaluates a grid of starts around the
data-driven guess (:mod:`freezeout.fitting.guess`) in one vectorized solve and refines the
best few locally with lmfit; the lowest chi^2 wins. The residuals are those of
:mod:`freezeout.fitting.problem`; the result is built by :mod:`freezeout.fitting.summary`.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import replace

import lmfit
import numpy as np

from freezeout.errors import FitError, InputError
from freezeout.fitting.guess import guess, start_grid
from freezeout.fitting.model import CarrierModel
from freezeout.fitting.parameters import (
    LOG10_CONCENTRATION_BOUNDS,
    internal_options,
    lmfit_parameters,
    to_internal,
)
from freezeout.fitting.problem import Problem, profile_upper
from freezeout.fitting.result import FitResult
from freezeout.fitting.summary import build_result
from freezeout.physics.materials import Material
from freezeout.records.run import RunData

__all__ = ["LOG10_CONCENTRATION_BOUNDS", "MAX_EVALUATIONS", "fit_run", "guess", "to_internal"]

#: Model evaluations allowed to one local fit before it counts as not converged.
MAX_EVALUATIONS = 1500

_NOT_CONVERGED = ("the optimizer did not converge: the chi^2 surface is flat along some "
                  "directions, so those parameters are not determined by these data (see the "
                  "other warnings); the values shown are one point of that flat valley")


def _level_counts(carrier: str, donors: int, acceptors: int) -> tuple[int, int]:
    """Majority levels and compensating species of a run, checked (InputError if bad)."""
    if carrier == "n":
        n_levels, n_comp = donors, acceptors
    else:
        n_levels, n_comp = acceptors, donors
    major_word = "donors" if carrier == "n" else "acceptors"
    minor_word = "acceptors" if carrier == "n" else "donors"
    if n_levels < 1:
        raise InputError(f"an {carrier}-type run needs at least one level of {major_word}"
                         f" (--{major_word} 1 or more)")
    if n_levels > 4:
        raise InputError(f"--{major_word} {n_levels}: at most 4 levels can be fitted")
    if n_comp not in (0, 1):
        raise InputError(f"--{minor_word} {n_comp}: for an {carrier}-type run the minority "
                         "species is one fully ionized compensating concentration (0 or 1); "
                         "several of them cannot be told apart by the data")
    return n_levels, n_comp


def _local_fits(problem: Problem, starts: list[dict], costs: np.ndarray,
                start_fermi: np.ndarray, n_tries: int, internal_fix: dict,
                internal_bounds: dict, weighted: bool):
    """Refine the best starts locally; the converged fit of lowest chi^2, and the fallback.

    Returns ``(best, stalled, failures)``: the best converged lmfit result or None, the best
    of those that stopped short of convergence or None, and the optimizer messages of the
    starts that failed.
    """
    model = problem.model
    best = None
    stalled = None  # best of the starts that stopped without converging
    failures = []
    for idx in np.argsort(costs)[:n_tries]:
        if not np.isfinite(costs[idx]):
            continue
        params = lmfit_parameters(model, starts[idx], internal_fix, internal_bounds)
        model.warm_start(start_fermi[idx])  # warm start from the global stage
        out = lmfit.minimize(problem.residual, params, method="leastsq",
                             scale_covar=not weighted, max_nfev=MAX_EVALUATIONS)
        if problem.type_penalty(out.params.valuesdict()) > 0 or not np.isfinite(out.chisqr):
            failures.append(str(out.message))
            continue
        if not out.success or out.aborted:
            # stopped short, at its last point rather than its best: kept only as a fallback
            # when no start converges (flat directions of an under-determined model)
            failures.append(str(out.message))
            if stalled is None or out.chisqr < stalled.chisqr:
                stalled = out
            continue
        if best is None or out.chisqr < best.chisqr:
            best = out
        if weighted and best.nfree > 0 and best.redchi < 2.0:
            # consistent with the stated uncertainties: further starts cannot do better
            # than the noise, so stop here
            break
    return best, stalled, failures


def fit_run(
    run: RunData,
    material: Material,
    *,
    donors: int = 1,
    acceptors: int = 1,
    statistics: str = "fermi-dirac",
    degeneracy: float | None = None,
    fix: Mapping[str, float] | None = None,
    bounds: Mapping[str, tuple[float, float]] | None = None,
    include_flagged: bool = False,
    provenance: dict | None = None,
) -> FitResult:
    """Fit a run's majority-carrier density versus temperature.

    Parameters
    ----------
    run
        The run (densities already corrected by the Hall factor).
    material
        Host material.
    donors, acceptors
        Level counts. For an n-type run ``donors`` is the number of partially ionized donor
        levels and ``acceptors`` (0 or 1) says whether a fully ionized compensating acceptor
        is included; for a p-type run the roles swap.
    statistics
        ``"fermi-dirac"`` (default) or ``"boltzmann"``.
    degeneracy
        Ground-state degeneracy of the majority levels (default 2 donors, 4 acceptors). [1]
    fix
        Parameters to hold, public names (``N_D1`` in cm^-3, ``E_D1`` in eV, ``N_A``).
    bounds
        Bounds of parameters, public names, (low, high) in the same units.
    include_flagged
        Keep points that failed a severe data-quality check.
    provenance
        Provenance dict to carry into the result.

    Raises
    ------
    InputError
        Bad counts, unknown parameter names, too few usable points.
    FitError
        When no start gives a finite fit.
    """
    n_levels, n_comp = _level_counts(run.carrier, donors, acceptors)
    model = CarrierModel(material, run.temperature, run.carrier, n_levels, bool(n_comp),
                         statistics, degeneracy)
    used = ~run.mixed
    if run.severe is not None and not include_flagged:
        used &= ~np.asarray(run.severe, dtype=bool)
    n_used = int(used.sum())
    if degeneracy is not None and not (np.isfinite(degeneracy) and 0 < degeneracy <= 100):
        raise InputError(f"degeneracy must be a number above 0 and at most 100, got "
                         f"{degeneracy!r}")
    gap = float(material.band_gap(float(np.min(run.temperature))))
    internal_fix, internal_bounds = internal_options(model, fix, bounds, gap)
    n_free = len(model.specs) - len(internal_fix)
    if n_used < n_free + 1:
        raise InputError(f"too few usable points: {n_used} for {n_free} free parameters "
                         f"(need at least {n_free + 1})", file=run.source)

    t_used = run.temperature[used]
    model_used = CarrierModel(material, t_used, run.carrier, n_levels, bool(n_comp), statistics,
                              degeneracy)
    y = np.log(run.density[used])
    weighted = run.density_err is not None
    sigma = (run.density_err[used] / run.density[used]) if weighted else np.ones(n_used)
    problem = Problem(model_used, y, sigma)

    g = guess(t_used, run.density[used], material)
    starts = start_grid(model_used, g, internal_fix)
    for s in starts:
        for k, (lo, hi) in internal_bounds.items():
            s[k] = float(np.clip(s[k], lo, hi))
    costs, start_fermi = problem.batch_cost(starts)
    u_t = None
    if weighted and run.temperature_err is not None and np.any(run.temperature_err[used] > 0):
        u_t = run.temperature_err[used]
        base_sigma = sigma.copy()
        problem.include_temperature(starts[np.argsort(costs)[0]], base_sigma, u_t)
        costs, start_fermi = problem.batch_cost(starts)
    best, stalled, failures = _local_fits(problem, starts, costs, start_fermi,
                                          4 if n_levels > 1 else 3, internal_fix,
                                          internal_bounds, weighted)
    not_converged = False
    if best is None and stalled is not None and stalled.nfree > 0:
        # accept a stalled fit only if it describes the data: reduced chi^2 within what the
        # stated uncertainties allow (weighted) or a residual scatter below 30 % (unweighted)
        ok = stalled.redchi < 4.0 if weighted else stalled.redchi < 0.3**2
        if ok:
            best, not_converged = stalled, True
    if best is None or not np.isfinite(best.chisqr) or best.chisqr >= 1e11:
        raise FitError("no starting point converged to a fit of this carrier type",
                       optimizer_message="; ".join(dict.fromkeys(failures)) or None)
    if u_t is not None and not not_converged:
        # the slope of the first pass came from a start: take it from the fit and refit once
        problem.include_temperature(best.params.valuesdict(), base_sigma, u_t)
        again = lmfit.minimize(problem.residual, best.params.copy(), method="leastsq",
                               scale_covar=False, max_nfev=MAX_EVALUATIONS)
        if again.success and not again.aborted and problem.type_penalty(
                again.params.valuesdict()) == 0:
            best = again
    upper = None
    cname = model_used.compensation_name
    if model_used.compensated and cname not in internal_fix:
        se_c = best.params[cname].stderr
        at_floor = best.params[cname].value <= best.params[cname].min + 0.05
        if se_c is None or not np.isfinite(se_c) or se_c > 0.5 or at_floor:
            upper = profile_upper(problem, best, cname, weighted)
            model_used.clear_warm_start()
    result = build_result(run, material, model, problem, best, used, weighted, internal_fix,
                          provenance or {}, upper)
    if not_converged:
        result = replace(result, warnings=result.warnings + (_NOT_CONVERGED,))
    return result
