"""The FitResult of a joint density and mobility fit (see :mod:`freezeout.fitting.joint`).

Standard errors from the Jacobian at the solution, cov = (J^T J)^-1 scaled by
max(chi^2/dof, 1); Wald intervals, in log space for concentrations and mu_300, clipped to the
parameter's range. The model is also evaluated at every point of the run (used or not: the
model densities and the Hall factor applied to the density there) and on a grid over the
run's temperatures (the model mu_H, r_H and each mechanism's own mobility, for the figure).
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from freezeout.fitting.mobility_model import (
    MobilityFit,
    applied_hall_factor,
    mechanism_mobilities,
    model_series,
)
from freezeout.fitting.model import CarrierModel
from freezeout.fitting.result import FitResult
from freezeout.fitting.wald import RefitEstimates
from freezeout.fitting.warnings import kept_after_refit

_LN10 = math.log(10.0)

#: Points of the figure grid of the model mobility (project choice, no source).
CURVE_POINTS = 160


def _on_grid(model: CarrierModel, temperature, values, models, source, r_run):
    """(ln density model, ln mu_H, CarrierMobility) of ``values`` at other temperatures."""
    other = CarrierModel(model.material, temperature, model.carrier, model.n_levels,
                         model.compensated, model.statistics, model.degeneracy)
    res = other.solve(values, warm=False)
    return model_series(other, values, res, models, source, r_run)


def build_result(run, base: FitResult, model: CarrierModel, free, fixed, out, series, m_ok,
                 models, hall_factor, measured_from, sigmas, bounds) -> FitResult:
    """The FitResult of the joint solution ``out`` (module docstrings)."""
    sig_n, sig_mu, est_n, est_mu = sigmas
    lo, hi = bounds
    x = out.x
    n_tot = out.fun.size
    dof = max(n_tot - x.size, 1)
    chi2 = float(out.fun @ out.fun)
    scale = max(chi2 / dof, 1.0)
    try:
        cov = np.linalg.pinv(out.jac.T @ out.jac) * scale
    except np.linalg.LinAlgError:
        cov = np.full((x.size, x.size), np.nan)
    se = np.sqrt(np.maximum(np.diag(cov), 0.0))
    # the thickness scales n and leaves mu_H = R_H / rho alone: it moves the concentrations
    sol = RefitEstimates(tuple(free), fixed, x, se, dof, (lo, hi), float(run.scale_uncertainty))
    values, est = sol.values, sol.estimate
    levels = sol.levels(base.levels)
    net, comp = sol.net_and_ratio(model, cov)
    ln_n, ln_mu, cm = series(values)
    d = np.sqrt(np.maximum(np.diag(cov), 1e-300))
    corr = cov / np.outer(d, d)
    names = tuple(k.removeprefix("log10_") for k in free)
    r_run = float(run.hall_factor)
    # every point of the run, used or not: the model of the measured density there
    t_all = np.asarray(base.data.temperature, dtype=float)
    ln_all, _, cm_all = _on_grid(model, t_all, values, models, hall_factor, r_run)
    model_density = np.exp(ln_all)
    model_density[np.asarray(base.data.used, dtype=bool)] = np.exp(ln_n)
    t_grid = np.geomspace(float(t_all.min()), float(t_all.max()), CURVE_POINTS)
    _, ln_grid, cm_grid = _on_grid(model, t_grid, values, models, hall_factor, r_run)
    minor = [lv for lv in base.levels if lv.energy is None]
    joint = MobilityFit(
        carrier=run.carrier, models=models, lattice_mu300=est("log10_mu300"),
        lattice_exponent=est("lattice_exponent"), hall_factor_source=hall_factor,
        measured_from=measured_from, sigma_ln_density=float(np.median(sig_n)),
        sigma_ln_mobility=float(np.median(sig_mu)),
        sigma_from={"density": "scatter" if est_n else "stated",
                    "mobility": "scatter" if est_mu else "stated"},
        n_density_points=int(ln_n.size), n_mobility_points=int(m_ok.sum()), chi2=chi2,
        density_only_compensation=minor[0].concentration if minor else None,
        temperature=model.temperature[m_ok], model_hall_mobility=np.exp(ln_mu[m_ok]),
        model_hall_factor=applied_hall_factor(cm, hall_factor, r_run)[m_ok],
        run_hall_factor=r_run,
        point_hall_factor=applied_hall_factor(cm_all, hall_factor, r_run),
        curve_temperature=t_grid, curve_hall_mobility=np.exp(ln_grid),
        curve_hall_factor=applied_hall_factor(cm_grid, hall_factor, r_run),
        mechanism_mobility=mechanism_mobilities(cm_grid, models))
    warnings = kept_after_refit(base.warnings)
    how = ("r_H(T) from the scattering applied to both series: the density column "
           f"(computed with r = {r_run:g}) is modelled as {r_run:g} n / r_H(T)"
           if hall_factor == "scattering" else
           f"the run's constant r = {r_run:g} for both series")
    warnings += (f"joint fit of ln n and ln mu_H ({'+'.join(models)}; {how}): the levels and "
                 "their Wald intervals are those of the joint fit",)
    if hall_factor == "scattering" and "hall_factor_varies" in run.metadata:
        warnings += ("the run says its R_H carries a temperature-dependent r_H (a simulated "
                     "run): if its density column is the carrier density n itself rather than "
                     f"{r_run:g} / (q |R_H|), the r_H(T) applied to it biases the levels",)
    return replace(base, levels=tuple(levels), net_doping=net, compensation_ratio=comp,
                   parameter_names=names, correlation=corr, warnings=warnings,
                   data=replace(base.data, model_density=model_density),
                   optimizer_message=str(out.message), mobility=joint, raw=out)
