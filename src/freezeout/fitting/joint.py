"""Joint fit of ln n and ln mu_H: the carrier model plus scattering-limited mobility.

The density-only fit (:func:`freezeout.fitting.fit.fit_run`) gives the levels; the Hall
mobility then adds what the density alone cannot see: the ionized-impurity density
N_I = n + 2 N_A (one donor level) enters mu_H at every temperature, so a compensation the
density bounds only from above becomes measurable. Free parameters: the level parameters of
the density fit (held values stay held) and the lattice term mu_300 (fitted as log10) and
a. One Hall factor for both series (:mod:`freezeout.fitting.mobility_model`): r_H(T) from the
scattering (the density column r_run / (q |R_H|) modelled as r_run n / r_H(T), mu_H = r_H mu)
or the run's constant r (density n, mu_H = r mu).
Residuals: (ln model - ln data) / sigma for each series, with its own sigma: the
stated uncertainties, or, without them, the series' own scatter, estimated from a first
pass (sigma_k^2 = SSR_k / (N_k - p N_k / N); project choice, no source). Start: a batch
scan over the compensating concentration and the lattice pair (one vectorized solve), then
a bounded trust-region least squares (scipy.optimize.least_squares, "trf").

Standard errors come from the Jacobian at the solution, cov = (J^T J)^-1 scaled by
max(chi^2/dof, 1) (the convention of the density fit); intervals are Wald intervals, in log
space for concentrations and mu_300 ("wald-log"), clipped to the parameter's range
(:mod:`freezeout.fitting.joint_result`). The FitResult's levels, net doping,
compensation ratio, correlation and model densities (the model of the measured density
column: r_run n / r_H(T) with the scattering r_H) are those of the joint fit; its chi^2, AIC
and BIC stay those of the density-only fit (ln n alone, the statistics other fits of the run
compare with); the joint chi^2 is in the ``mobility`` block.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
from scipy import optimize

from freezeout.errors import FitError, InputError
from freezeout.fitting.fit import fit_run
from freezeout.fitting.joint_result import build_result
from freezeout.fitting.mobility_model import (
    check_hall_factor_source,
    measured_hall_mobility,
    model_series,
)
from freezeout.fitting.model import CarrierModel
from freezeout.fitting.parameters import LOG10_CONCENTRATION_BOUNDS, internal_options
from freezeout.fitting.problem import Problem
from freezeout.fitting.result import FitResult
from freezeout.physics.majority_mobility import check_lattice, check_mechanisms
from freezeout.records.run import RunData

_LATTICE_BOUNDS = {"log10_mu300": (0.0, 6.0), "lattice_exponent": (0.0, 5.0)}
_LN10 = math.log(10.0)


def _level_setup(base: FitResult):
    """(n_levels, compensated, degeneracy, start values) from a density-only result."""
    major = [lv for lv in base.levels if lv.energy is not None]
    start = {}
    for lv in base.levels:
        start[f"log10_N_{lv.name}"] = math.log10(max(lv.concentration.value, 1e8))
        if lv.energy is not None:
            start[f"E_{lv.name}"] = lv.energy.value
    return len(major), len(major) < len(base.levels), major[0].degeneracy, start


def _lattice_start(t, mu):
    """mu_300 and a from the hottest third of the points, mu ~ T^-a (common practice)."""
    hot = t >= np.quantile(t, 2.0 / 3.0)
    if hot.sum() >= 2 and np.ptp(np.log(t[hot])) > 0:
        slope, icpt = np.polyfit(np.log(t[hot] / 300.0), np.log(mu[hot]), 1)
        return float(icpt / _LN10 + 0.1), float(np.clip(-slope + 0.3, 0.5, 4.0))
    return float(np.log10(np.max(mu))), 2.0


def fit_run_joint(run: RunData, material, *, mobility: Sequence[str] | str,
                  lattice_mu300: float | None = None, lattice_exponent: float | None = None,
                  hall_factor: str = "scattering", base: FitResult | None = None,
                  **fit_options) -> FitResult:
    """Fit the run's density and Hall mobility together.

    Parameters
    ----------
    run
        The run; needs a mobility column, or a resistivity column beside the density
        (:func:`freezeout.fitting.mobility_model.measured_hall_mobility`).
    material
        Host (needs the conductivity mass and the permittivity).
    mobility
        Scattering mechanisms (must include ``"lattice"``: mu_300 and a are fitted).
    lattice_mu300, lattice_exponent
        Optional starting values (else from the hottest points). [cm^2/(V s)], [1]
    hall_factor
        ``"scattering"`` (default): r_H(T) = <tau^2>/<tau>^2 of the chosen mechanisms at
        every point, for both series (the density column, computed with the run's constant
        r_run, modelled as r_run n / r_H(T); mu_H = r_H(T) mu). ``"constant"`` (``"run"``
        also read): the run's constant r for both (density n; mu_H = r mu). The API picks
        between them (:func:`freezeout.api.fits.fit_run_record`).
    base
        A density-only fit of the same run and options, if already made (else made here).
    **fit_options
        Passed to :func:`freezeout.fitting.fit.fit_run` (donors, acceptors, statistics,
        degeneracy, fix, bounds, include_flagged, provenance).

    Returns
    -------
    FitResult
        With the joint levels and ``mobility`` set (:class:`MobilityFit`).
    """
    models = check_mechanisms(mobility)
    if "lattice" not in models:
        raise InputError("the joint fit fits the lattice term: include 'lattice' in the "
                         "mobility mechanisms")
    hall_factor = check_hall_factor_source(hall_factor)
    if lattice_mu300 is not None or lattice_exponent is not None:
        check_lattice(models, lattice_mu300 or 1.0, 0.0 if lattice_exponent is None
                      else lattice_exponent)
    mu_all, mu_err_all, measured_from = measured_hall_mobility(run)
    if base is None:
        base = fit_run(run, material, **fit_options)
    used = np.asarray(base.data.used, dtype=bool)
    n_levels, compensated, degeneracy, start = _level_setup(base)
    t = run.temperature[used]
    model = CarrierModel(material, t, run.carrier, n_levels, compensated,
                         base.statistics_model, degeneracy)
    gap = float(material.band_gap(float(np.min(t))))
    fixed, user_bounds = internal_options(model, fit_options.get("fix"),
                                          fit_options.get("bounds"), gap)
    y_n = np.log(run.density[used])
    mu_used = mu_all[used]
    m_ok = np.isfinite(mu_used) & (mu_used > 0)
    if m_ok.sum() < 3:
        raise InputError("fewer than 3 usable mobility points for a joint fit",
                         file=run.source)
    y_mu = np.log(mu_used[m_ok])
    s_n = None if run.density_err is None else (run.density_err / run.density)[used]
    s_mu = None if mu_err_all is None else (mu_err_all[used] / mu_all[used])[m_ok]
    free = [s.internal for s in model.specs if s.internal not in fixed]
    free += ["log10_mu300", "lattice_exponent"]
    lo, hi = [], []
    for name in free:
        if name in _LATTICE_BOUNDS:
            b = _LATTICE_BOUNDS[name]
        elif name in user_bounds:
            b = user_bounds[name]
        elif name.startswith("log10_"):
            b = LOG10_CONCENTRATION_BOUNDS
        else:
            b = (1e-4, 0.9 * gap)
        lo.append(b[0])
        hi.append(b[1])
    lo, hi = np.array(lo), np.array(hi)
    problem = Problem(model, y_n, np.ones_like(y_n))

    def series(values, warm=True):
        res = model.solve(values, warm=warm)
        return model_series(model, values, res, models, hall_factor, run.hall_factor)

    mu0, a0 = _lattice_start(t[m_ok], mu_used[m_ok])
    if lattice_mu300 is not None:
        mu0 = math.log10(lattice_mu300)
    if lattice_exponent is not None:
        a0 = float(lattice_exponent)
    values0 = {**start, **fixed, "log10_mu300": mu0, "lattice_exponent": a0}
    values0 = _scan(model, values0, series, y_n, y_mu, m_ok, s_n, s_mu, fixed)
    sig_n = s_n if s_n is not None else np.full(y_n.size, _rms(series(values0)[0] - y_n))
    sig_mu = (s_mu if s_mu is not None
              else np.full(y_mu.size, _rms(series(values0)[1][m_ok] - y_mu)))

    def residuals(x, sig_n, sig_mu):
        values = {**fixed, **dict(zip(free, x, strict=True))}
        try:
            ln_n, ln_mu, _ = series(values)
        except (RuntimeError, ValueError, FloatingPointError):
            return np.full(y_n.size + y_mu.size, 1e6)
        return problem.guarded(np.concatenate([(ln_n - y_n) / sig_n,
                                               (ln_mu[m_ok] - y_mu) / sig_mu]), values)

    def jacobian(x, sig_n, sig_mu):
        # central differences of every parameter in one batch solve (2 p rows), warm-started
        # from the last solution; the type penalty (piecewise, off near a solution) is left out
        h = 1e-5 * np.maximum(np.abs(x), 1e-2)
        rows = np.concatenate([x + np.diag(h), x - np.diag(h)])
        values = {**fixed, **{k: rows[:, i:i + 1] for i, k in enumerate(free)}}
        try:
            res = model.solve_rows(values)
            ln_n, ln_mu, _ = model_series(model, values, res, models, hall_factor,
                                          run.hall_factor)
        except (RuntimeError, ValueError, FloatingPointError):
            return optimize.approx_derivative(residuals, x, args=(sig_n, sig_mu),
                                              bounds=(lo, hi))
        r = np.concatenate([ln_n / sig_n, ln_mu[:, m_ok] / sig_mu], axis=1)
        p = x.size
        jac = ((r[:p] - r[p:]) / (2.0 * h[:, None])).T
        if not np.all(np.isfinite(jac)):
            return optimize.approx_derivative(residuals, x, args=(sig_n, sig_mu),
                                              bounds=(lo, hi))
        return jac

    x0 = np.clip([values0[k] for k in free], lo + 1e-9, hi - 1e-9)
    out = optimize.least_squares(residuals, x0, jac=jacobian, bounds=(lo, hi), method="trf",
                                 x_scale="jac", args=(sig_n, sig_mu))
    n_tot, p = y_n.size + y_mu.size, len(free)
    if s_n is None or s_mu is None:  # second pass with each series' own scatter
        r = residuals(out.x, sig_n, sig_mu)
        share = max(n_tot - p, 1) / n_tot
        f_n = 1.0 if s_n is not None else _rms(r[:y_n.size]) / math.sqrt(share)
        f_mu = 1.0 if s_mu is not None else _rms(r[y_n.size:]) / math.sqrt(share)
        sig_n, sig_mu = sig_n * f_n, sig_mu * f_mu
        # the weights' ratio decides the solution; their common scale does not
        if abs(f_n / f_mu - 1.0) > 0.02:
            out = optimize.least_squares(residuals, out.x, jac=jacobian, bounds=(lo, hi),
                                         method="trf", x_scale="jac", args=(sig_n, sig_mu))
        else:
            out.fun = residuals(out.x, sig_n, sig_mu)
            out.jac = jacobian(out.x, sig_n, sig_mu)
    if not np.all(np.isfinite(out.fun)) or np.max(np.abs(out.fun)) >= 1e5:
        raise FitError(f"{run.source}: the joint density and mobility fit did not converge "
                       f"({out.message})")
    return build_result(run, base, model, free, fixed, out, series, m_ok, models, hall_factor,
                        measured_from, (sig_n, sig_mu, s_n is None, s_mu is None), (lo, hi))


def _rms(r) -> float:
    return max(float(np.sqrt(np.mean(np.square(r)))), 1e-6)


def _scan(model, values0, series, y_n, y_mu, m_ok, s_n, s_mu, fixed):
    """Best start over a grid of compensation and lattice (mu_300, a), one batch solve.

    Cost: sum over the series of N_k ln(SSR_k / N_k) without stated errors, chi^2 with them
    (the likelihood with each series' variance unknown; common practice, no source).
    """
    cname = model.compensation_name
    if not model.compensated or cname in fixed:
        grid_c = np.array([values0.get(cname, 0.0)])
    else:
        major = math.log10(sum(10.0 ** values0[k] for k in model.major_concentration_names))
        grid_c = np.unique(np.concatenate([[values0[cname]],
                                           major + np.linspace(-4.0, math.log10(0.9), 10)]))
        grid_c = grid_c[grid_c >= LOG10_CONCENTRATION_BOUNDS[0]]
    g_mu = values0["log10_mu300"] + np.linspace(-0.3, 0.3, 5)
    g_a = np.clip(values0["lattice_exponent"] + np.linspace(-0.8, 0.8, 5), 0.1, 4.9)
    mu_grid, a_grid = (g.reshape(-1, 1, 1) for g in np.meshgrid(g_mu, g_a, indexing="ij"))
    vals = {k: v for k, v in values0.items()}
    if cname in vals or model.compensated:
        vals[cname] = grid_c[:, None]
    vals["log10_mu300"] = mu_grid.reshape(-1, 1, 1)
    vals["lattice_exponent"] = a_grid.reshape(-1, 1, 1)
    try:
        ln_n, ln_mu, _ = series(vals, warm=False)
    except (RuntimeError, ValueError, FloatingPointError):
        return values0
    rn = ln_n - y_n  # (C, T)
    rm = ln_mu[..., m_ok] - y_mu  # (G, C, Tm)
    with np.errstate(divide="ignore", invalid="ignore"):
        cost_n = (np.sum((rn / s_n) ** 2, axis=-1) if s_n is not None
                  else y_n.size * np.log(np.mean(rn * rn, axis=-1)))
        cost_m = (np.sum((rm / s_mu) ** 2, axis=-1) if s_mu is not None
                  else y_mu.size * np.log(np.mean(rm * rm, axis=-1)))
    cost = np.where(np.isfinite(cost_n + cost_m), cost_n + cost_m, np.inf)
    cost = np.broadcast_to(cost, (mu_grid.size,) + np.shape(cost)[1:]).reshape(mu_grid.size, -1)
    if not np.isfinite(cost).any():
        return values0
    g, c = np.unravel_index(int(np.argmin(cost)), cost.shape)
    best = dict(values0)
    if model.compensated and cname not in fixed:
        best[cname] = float(grid_c[c])
    best["log10_mu300"] = float(mu_grid.ravel()[g])
    best["lattice_exponent"] = float(a_grid.ravel()[g])
    return best
