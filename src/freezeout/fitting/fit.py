"""Fitting a run to the carrier model: the multi-start driver.

Concentrations are fitted as log10. The global stage takes a grid of starts around the
data-driven guess (:mod:`freezeout.fitting.guess`), spread over compensation ratios from
1e-4 to 0.9 of the majority total, and brings the best few of every compensation ratio down
their chi^2 valleys together, with Levenberg-Marquardt steps on the whole batch in one
vectorized solve per step. The descended points are grouped into distinct basins
(:mod:`freezeout.fitting.alternatives`); local least squares
(:func:`freezeout.fitting.batch_lm.polish`) refines the best point of every basin that comes
within reach of the best, the lowest chi^2 wins, and the other distinct solutions
within delta chi^2 = 4 are reported beside it as alternatives. The residuals are those of
:mod:`freezeout.fitting.problem`; the result is built by :mod:`freezeout.fitting.summary`.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import replace

import numpy as np

from freezeout.errors import FitError, InputError
from freezeout.fitting.alternatives import (
    DELTA_CHI2,
    alternative,
    alternatives_warning,
    basins_apart,
    distinct,
    signature,
)
from freezeout.fitting.basin_barrier import profile_barrier
from freezeout.fitting.batch_lm import polish
from freezeout.fitting.guess import best_per_basin, descend, guess, heavy_start, start_grid
from freezeout.fitting.model import CarrierModel
from freezeout.fitting.parameters import (
    LOG10_CONCENTRATION_BOUNDS,
    fit_parameters,
    internal_options,
    to_internal,
)
from freezeout.fitting.problem import Problem, profile_upper
from freezeout.fitting.result import FitResult
from freezeout.fitting.summary import build_result
from freezeout.physics.materials import Material
from freezeout.records.run import RunData

__all__ = ["LOG10_CONCENTRATION_BOUNDS", "MAX_EVALUATIONS", "fit_run", "guess", "to_internal"]

#: Model solves (each with its Jacobian: one Levenberg-Marquardt step) allowed to one local
#: fit before it counts as not converged (project choice, no source).
MAX_EVALUATIONS = 400
#: Solves of each local fit of a start-only fit (project choice, no source): the fit that
#: starts from it refits every level, so a flat valley need not be followed to its end
#: (30 steps; lmfit's former 200 evaluations were about 50 steps of 4 solves each).
START_EVALUATIONS = 30

_NOT_CONVERGED = ("the optimizer did not converge: the chi^2 surface is flat along some "
                  "directions, so those parameters are not determined by these data (see the "
                  "other warnings); the values shown are one point of that flat valley")


_MISSED = ("the fit may not be the best solution: the search reached chi^2 = {found:.4g} "
           "elsewhere, below the {chi2:.4g} of the fit reported, but the local fit there did "
           "not converge (a valley running to a limit of the parameters); try --bound or "
           "--fix to explore it")


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


#: Starts of each compensation group (light, heavy) the global stage descends, by number of
#: majority levels (more levels, more ways to assign them; project choice, no source).
PER_BASIN = {1: 1, 2: 3, 3: 4}

#: Extra reach of the global stage, in chi^2 units of the residual variance: a basin whose
#: descended chi^2 lies within DELTA_CHI2 + this of the best is refined by a local fit (its
#: descent may have stopped short of the bottom; project choice, no source). [1]
REACH = 6.0


def _basins(model: CarrierModel, points: list[dict], costs: np.ndarray, low_density: float
            ) -> tuple[list[int], list[int]]:
    """The lowest point of each distinct basin, and every other point, each by chi^2."""
    heads: list[int] = []
    rest: list[int] = []
    sigs = {}
    for i in np.argsort(costs):
        if not np.isfinite(costs[i]):
            continue
        sig = signature(model, points[i], low_density)
        if all(distinct(sig, sigs[j]) for j in heads):
            heads.append(int(i))
            sigs[int(i)] = sig
        else:
            rest.append(int(i))
    return heads, rest


def _variance_unit(chi2: float, nfree: int, weighted: bool) -> float:
    """The unit of chi^2 differences.

    The stated variance (inflated by a reduced chi^2 above 1) or, unweighted, the fitted one.
    """
    red = chi2 / nfree if nfree > 0 else math.nan
    if not np.isfinite(red):
        return 1.0
    return max(red, 1.0) if weighted else max(red, 1e-300)


def _local_fits(problem: Problem, points: list[dict], fermi: np.ndarray,
                required: list[int], spare: list[int], n_tries: int, internal_fix: dict,
                internal_bounds: dict, weighted: bool, window: float,
                max_nfev: int = MAX_EVALUATIONS, together: bool = False):
    """Refine the descended points by local least squares, each batch stepped together.

    Every point of ``required`` (the basins within reach of the best) is refined; the points
    of ``spare`` only when none of those has converged, up to ``n_tries`` fits in all. A
    start that cannot come within ``window`` (chi^2 units) of a converged one is stopped
    early (:func:`freezeout.fitting.batch_lm.polish`). With ``together`` (a start-only fit,
    a few solves each) the spare points step beside the required ones, one batch of solves
    instead of two in turn.

    Returns ``(best, stalled, converged, failures)``: the converged local fit of lowest
    chi^2 or None, the best of those that stopped short of convergence or None, every
    converged fit, and the messages of the starts that failed.
    """
    model = problem.model
    best = None
    stalled = None  # best of the starts that stopped without converging
    converged = []
    failures = []
    spare = spare[:max(n_tries - len(required), 0)]
    groups = (required + spare, []) if together else (required, spare)
    for group in groups:
        if not group or best is not None:
            continue
        params = [fit_parameters(model, points[i], internal_fix, internal_bounds)
                  for i in group]
        # warm starts from the global stage
        for out in polish(problem, params, fermi[group], max_nfev, not weighted, window):
            if problem.type_penalty(out.params.valuesdict()) > 0 or not np.isfinite(out.chisqr):
                failures.append(out.message)
                continue
            if not out.success:
                # stopped short, at its last point: kept only as a fallback when no start
                # converges (flat directions of an under-determined model)
                failures.append(out.message)
                if stalled is None or out.chisqr < stalled.chisqr:
                    stalled = out
                continue
            converged.append(out)
            if best is None or out.chisqr < best.chisqr:
                best = out
    for out in (best, stalled):
        if out is not None and out.fermi is not None:
            model.warm_start(out.fermi)
            break
    return best, stalled, converged, failures


def _stderr(out, weighted: bool) -> dict:
    """Standard errors of a local fit by internal name, inflated as reported."""
    inflate = math.sqrt(max(out.redchi, 1.0)) if weighted and out.nfree > 0 else 1.0
    return {n: (p.stderr * inflate if p.stderr is not None else math.nan)
            for n, p in out.params.items()}


def _alternatives(problem: Problem, best, converged: list, weighted: bool,
                  low_density: float) -> list:
    """Distinct converged solutions within delta chi^2 = 4 of the best, best first.

    Their chi^2 is taken at the problem's final uncertainties (which the temperature
    uncertainty may have changed after they were fitted).
    """
    model = problem.model
    # with stated uncertainties chi^2 is in their units; unweighted, in the fitted variance
    unit = 1.0 if weighted else _variance_unit(best.chisqr, best.nfree, weighted)
    kept = [(best, signature(model, best.params.valuesdict(), low_density,
                             _stderr(best, weighted)))]
    found = []
    for out in sorted(converged, key=lambda o: o.chisqr):
        if out is best:
            continue
        chi2 = float(np.sum(problem.residual(out.params) ** 2))
        if not chi2 - best.chisqr <= DELTA_CHI2 * unit:
            continue
        sig = signature(model, out.params.valuesdict(), low_density, _stderr(out, weighted))
        if all(distinct(sig, s) or (basins_apart(sig, s) and profile_barrier(
                problem, out, o, weighted, unit, MAX_EVALUATIONS)) for o, s in kept):
            kept.append((out, sig))
            found.append(alternative(model, out.params.valuesdict(), chi2, best.chisqr))
    return found


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
    profiles: bool = True,
    start_only: bool = False,
    excited: tuple = (),
    lowering=None,
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
    profiles
        Compute profile-likelihood intervals where the covariance is unreliable (default);
        False keeps the Wald intervals (a fit used only as the start of another, e.g. the
        two-carrier fit, which states its own).
    start_only
        A fit used only as the start of another that refits every level (the two-carrier
        fit): no profiles and no alternatives, each local fit stopped after
        :data:`START_EVALUATIONS` evaluations, and the best point kept even where the
        optimizer stopped short (no convergence statement: the refit states its own).
    excited, lowering
        Excited states ``(E_0 - E_i [eV], g_i)`` and energy-versus-density model
        (:mod:`freezeout.physics.level_energy`) of the majority levels
        (:class:`freezeout.fitting.model.CarrierModel`); off by default.

    Raises
    ------
    InputError
        Bad counts, unknown parameter names, too few usable points.
    FitError
        When no start gives a finite fit.
    """
    n_levels, n_comp = _level_counts(run.carrier, donors, acceptors)
    physics = {"excited": excited, "lowering": lowering}
    model = CarrierModel(material, run.temperature, run.carrier, n_levels, bool(n_comp),
                         statistics, degeneracy, **physics)
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
                              degeneracy, **physics)
    y = np.log(run.density[used])
    weighted = run.density_err is not None
    sigma = (run.density_err[used] / run.density[used]) if weighted else np.ones(n_used)
    problem = Problem(model_used, y, sigma)

    g = guess(t_used, run.density[used], material)
    starts = start_grid(model_used, g, internal_fix)
    for s in starts:
        for k, (lo, hi) in internal_bounds.items():
            s[k] = float(np.clip(s[k], lo, hi))
    costs, _ = problem.batch_cost(starts)
    chosen = best_per_basin(model_used, starts, costs, PER_BASIN[min(n_levels, 3)])
    if not chosen:
        raise FitError("no starting point gives a finite model of this carrier type")
    points, costs, fermi, _ = descend(problem, [starts[i] for i in chosen], internal_fix,
                                            internal_bounds)
    u_t = None
    if weighted and run.temperature_err is not None and np.any(run.temperature_err[used] > 0):
        u_t = run.temperature_err[used]
        base_sigma = sigma.copy()
        problem.include_temperature(points[int(np.argmin(costs))], base_sigma, u_t)
        points, costs, fermi, _ = descend(problem, points, internal_fix, internal_bounds)
    low_density = float(np.min(run.density[used]))
    heads, rest = _basins(model_used, points, costs, low_density)
    unit = _variance_unit(float(np.min(costs)), n_used - n_free, weighted)
    reach = float(np.min(costs)) + (DELTA_CHI2 + REACH) * unit
    # every basin within reach of the best, and the best point of each compensation group
    # (light, heavy): a descent can settle slowly along a flat valley, the local fit goes on
    required = [i for i in heads if costs[i] <= reach]
    for group in (False, True):
        members = [int(i) for i in np.argsort(costs) if np.isfinite(costs[i])
                   and heavy_start(model_used, points[i]) == group]
        if members and members[0] not in required:
            required.append(members[0])
    spare = [i for i in heads if i not in required] + rest
    best, stalled, converged, failures = _local_fits(
        problem, points, fermi, required, spare, 4 if n_levels > 1 else 3,
        internal_fix, internal_bounds, weighted, DELTA_CHI2 * unit,
        START_EVALUATIONS if start_only else MAX_EVALUATIONS, together=start_only)
    not_converged = False
    if start_only:
        if stalled is not None and (best is None or stalled.chisqr < best.chisqr):
            best = stalled
    elif best is None and stalled is not None and stalled.nfree > 0:
        # accept a stalled fit only if it describes the data: reduced chi^2 within what the
        # stated uncertainties allow (weighted) or a residual scatter below 30 % (unweighted)
        ok = stalled.redchi < 4.0 if weighted else stalled.redchi < 0.3**2
        if ok:
            best, not_converged = stalled, True
    if best is None or not np.isfinite(best.chisqr) or best.chisqr >= 1e11:
        raise FitError("no starting point converged to a fit of this carrier type",
                       optimizer_message="; ".join(dict.fromkeys(failures)) or None)
    if u_t is not None and not not_converged and not start_only:
        # the slope of the first pass came from a start: take it from the fit and refit once
        problem.include_temperature(best.params.valuesdict(), base_sigma, u_t)
        again = polish(problem, [best.params.copy()], best.fermi[None, :], MAX_EVALUATIONS,
                       False)[0]
        if again.success and problem.type_penalty(again.params.valuesdict()) == 0:
            best = again
            model_used.warm_start(again.fermi)
    alternatives = ([] if start_only
                    else _alternatives(problem, best, converged, weighted, low_density))
    # a lower chi^2 seen on the way (a descended start, or a local fit that stopped short)
    # that the reported fit does not reach: say so rather than choose silently
    lowest = float(np.min(costs)) if u_t is None else math.inf
    if stalled is not None and stalled is not best:
        lowest = min(lowest, float(stalled.chisqr))
    missed = not start_only and lowest < best.chisqr - 1e-3 * _variance_unit(
        best.chisqr, best.nfree, weighted)
    upper = None
    cname = model_used.compensation_name
    profiles = profiles and not start_only
    if profiles and model_used.compensated and cname not in internal_fix:
        se_c = best.params[cname].stderr
        at_floor = best.params[cname].value <= best.params[cname].min + 0.05
        if se_c is None or not np.isfinite(se_c) or se_c > 0.5 or at_floor:
            upper = profile_upper(problem, best, cname, weighted)
            model_used.clear_warm_start()
    result = build_result(run, material, model, problem, best, used, weighted, internal_fix,
                          provenance or {}, upper, profiles=profiles)
    extra = [_NOT_CONVERGED] if not_converged else []
    if missed:
        extra.append(_MISSED.format(found=lowest, chi2=best.chisqr))
    note = alternatives_warning(model_used, alternatives, best.chisqr)
    if note:
        extra.append(note)
    if extra or alternatives:
        result = replace(result, warnings=result.warnings + tuple(extra),
                         alternatives=tuple(alternatives))
    return result
