"""The FitResult of a two-carrier fit: covariance, the Hall sign reversal, misfit, record.

Standard errors from (J^T J)^-1 of the parameters the data set, scaled by max(chi^2/dof, 1);
a parameter the data do not set (a minority carrier that never conducts, a parameter at a
bound) gets no standard error and its whole range as its interval. Wald intervals, in log
space for concentrations and mu_300. The reversal temperature's error is by the delta
method, dT*/dtheta = -(dR/dtheta) / (dR/dT) at T*.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from freezeout.fitting.model import CarrierModel
from freezeout.fitting.quantiles import t_quantile
from freezeout.fitting.result import Estimate, FitResult
from freezeout.fitting.two_carrier_model import TwoCarrierModel
from freezeout.fitting.two_carrier_result import CarrierLattice, TwoCarrierFit
from freezeout.fitting.wald import RefitEstimates
from freezeout.fitting.warnings import kept_after_refit, refit_warnings
from freezeout.physics.transport import hall_sign_change_temperature


def rms(r) -> float:
    """Root mean square of ``r`` (at least 1e-12, a safe divisor)."""
    return max(float(np.sqrt(np.mean(np.square(r)))), 1e-12)


def _covariance(jac, x, lo, hi, scale):
    """Covariance of the parameters the data set; masks of those unset and those held.

    A parameter is *unset* when its Jacobian column, times its range, is below 1e-8 of the
    largest (the data do not move with it: a minority carrier that never conducts): no
    standard error, its whole range as its interval, and an infinite error in anything
    that moves with it. A parameter at a bound is *held* there: the others' covariance is
    conditional on it (project choice, no source). Rows of both are 0 in the covariance
    returned; the rest come from (J^T J)^-1 of the others.
    """
    span = hi - lo
    col = np.linalg.norm(jac, axis=0) * span
    unset = col <= 1e-8 * np.max(col)
    held = ~unset & ((x - lo < 1e-6 * span) | (hi - x < 1e-6 * span))
    cov = np.zeros((x.size, x.size))
    keep = np.flatnonzero(~(unset | held))
    if keep.size:
        j = jac[:, keep]
        cov[np.ix_(keep, keep)] = np.linalg.pinv(j.T @ j) * scale
    return cov, unset, held


def _reversal(tc, values, t, free, covariance, dof):
    """The model's R_H sign change in [T_min/2, 2 T_max] (gap open), and its Wald interval.

    Its error is infinite when it moves with a parameter the data do not set.
    """
    cov, lost, span = covariance  # lost: the unset parameters
    mat = tc.model.material
    grid = np.geomspace(0.5 * float(np.min(t)), min(2.0 * float(np.max(t)), 5000.0), 240)
    grid = grid[np.asarray(mat.band_gap(grid), dtype=float) > 0.05]
    if grid.size < 2:
        return None, None

    def r_of_t(temps):
        return tc.at(np.asarray(temps, dtype=float), values)[0]

    t_star = hall_sign_change_temperature(r_of_t, grid)
    if t_star is None:
        return None, None
    dt = 1e-4 * t_star
    r_pm = r_of_t([t_star - dt, t_star + dt])
    d_t = (r_pm[1] - r_pm[0]) / (2 * dt)
    x = np.array([values[k] for k in free])
    h = 1e-5 * np.maximum(np.abs(x), 1e-2)
    rows = np.concatenate([x + np.diag(h), x - np.diag(h)])
    m = tc.model
    one = TwoCarrierModel(CarrierModel(mat, np.array([t_star]), m.carrier, m.n_levels,
                                        m.compensated, m.statistics, m.degeneracy),
                           tc.mechanisms, tc.hall_factor)
    r_rows = one.rows({**values, **{k: rows[:, i:i + 1] for i, k in enumerate(free)}})[0][:, 0]
    grad = -(r_rows[:x.size] - r_rows[x.size:]) / (2 * h) / d_t
    if not (np.isfinite(d_t) and d_t) or np.any(np.abs(grad[lost] * span[lost]) > 1e-3):
        se = math.inf
    else:
        se = float(np.sqrt(max(grad @ cov @ grad, 0.0)))
    q = t_quantile(0.975, dof)
    return t_star, Estimate(t_star, se, (t_star - q * se, t_star + q * se), "wald-linear")


#: rms misfits above which the two-carrier model is said to miss the data, ln rho and R_H
#: relative to its weight scale (project choice, no source).
MISFIT_RMS = {"resistivity": 5.0, "hall": 10.0}


def _misfit(two: TwoCarrierFit, dof) -> tuple[str, ...]:
    """A plain statement when the model misses R_H or rho by more than MISFIT_RMS."""
    rms = two.rms_percent
    stated = all(v == "stated" for v in two.sigma_from.values())
    bad = [k for k, v in rms.items() if v > MISFIT_RMS[k]]
    if stated and two.chi2 / dof > 4.0:
        bad = bad or list(rms)
    if not bad:
        return ()
    what = " and ".join(f"{'R_H' if k == 'hall' else 'rho'} by {rms[k]:.2g} % rms" for k in bad)
    return (f"the two-carrier model misses the data ({what}; chi^2/dof = "
            f"{two.chi2 / dof:.3g}): another level, another scattering mechanism or a "
            "different host may be needed before the numbers are used",)


def build_result(run, base, tc, free, fixed, out, bounds, ok, data) -> FitResult:
    """The FitResult of the two-carrier solution."""
    rh, rho, scale_r, sigma_from, sigma_scale = data
    lo, hi = bounds
    x = out.x
    dof = max(out.fun.size - x.size, 1)
    chi2 = float(out.fun @ out.fun)
    cov, lost, held = _covariance(out.jac, x, lo, hi, max(chi2 / dof, 1.0))
    se = np.sqrt(np.maximum(np.diag(cov), 0.0))
    se[lost] = math.inf  # not set by the data: the interval is the parameter's whole range
    se[held] = math.nan  # at a bound: the warnings say so
    # an uncertainty common to every point (the thickness) scales R_H and rho alike: it moves
    # every concentration (1/(q R_H)) and leaves the mobilities (R_H/rho) alone
    sol = RefitEstimates(tuple(free), fixed, x, se, dof, (lo, hi), float(run.scale_uncertainty))
    idx, values, est = sol.idx, sol.values, sol.estimate
    levels = sol.levels(base.levels)
    net, comp = sol.net_and_ratio(tc.model, cov)
    if any(lost[i] for k, i in idx.items() if k.startswith("log10_N_")):
        net = Estimate(net.value, math.inf, (0.0, math.inf), net.method)
        comp = Estimate(comp.value, math.inf, (0.0, 1.0), comp.method)
    r_m, lr_m, bc = tc.series(values)
    t = tc.model.temperature
    t_star, reversal = _reversal(tc, values, t, free, (cov, lost, hi - lo), dof)
    unset_reversal = None
    if (t_star is not None and not math.isfinite(reversal.stderr)
            and not float(np.min(t)) <= t_star <= float(np.max(t))):
        unset_reversal, t_star, reversal = t_star, None, None
    curve_t = np.geomspace(float(np.min(t)), float(np.max(t)), 200)
    if t_star is not None:  # a dense stretch where |R_H| dives to zero
        near = t_star * (1.0 + np.linspace(-0.04, 0.04, 41))
        curve_t = np.unique(np.concatenate([curve_t, near[(near > t.min()) & (near < t.max())]]))
    r_c, lr_c, _ = tc.at(curve_t, values)

    def carrier(c, cm):
        return CarrierLattice(est(f"log10_mu300_{c}"), est(f"lattice_exponent_{c}"),
                              np.asarray(cm.drift, dtype=float),
                              np.asarray(cm.hall_factor, dtype=float))

    hall_source = "scattering" if tc.hall_factor is None else f"{tc.hall_factor:g}"
    misfit = {"hall": 100 * rms((r_m - rh) / scale_r),
              "resistivity": 100 * rms(lr_m - np.log(rho))}
    two = TwoCarrierFit(
        models=tc.mechanisms, hall_factor_source=hall_source,
        electron=carrier("n", bc.electron), hole=carrier("p", bc.hole), reversal_K=t_star,
        reversal=reversal, sigma_from=sigma_from, sigma_scale=sigma_scale, chi2=chi2,
        n_points=int(t.size), n_parameters=int(x.size), temperature=t, hall_coefficient=rh,
        resistivity=rho, rms_percent=misfit, model_hall_coefficient=r_m,
        model_resistivity=np.exp(lr_m),
        curve_temperature=curve_t, curve_hall_coefficient=r_c,
        curve_resistivity=np.exp(lr_c))
    d = np.sqrt(np.maximum(np.diag(cov), 1e-300))
    names = tuple(k.removeprefix("log10_") for k in free)
    majority = bc.n if run.carrier == "n" else bc.p
    model_density = np.array(base.data.model_density, dtype=float)
    model_density[ok] = majority
    corr = cov / np.outer(d, d)
    corr[lost | held, :] = np.nan
    corr[:, lost | held] = np.nan
    warnings = kept_after_refit(base.warnings, mixed_fitted=True, own_solution=True)
    warnings += tuple(refit_warnings(names, x, (lo, hi), corr, what="two-carrier fit"))
    warnings += _misfit(two, dof)
    n_mixed = int(np.sum(run.mixed[ok]))
    warnings += (f"two-carrier fit of R_H and rho ({'+'.join(tc.mechanisms)}, "
                 f"{int(t.size)} points, {n_mixed} of them of the opposite Hall sign): the "
                 "levels and their Wald intervals are those of this fit",)
    if unset_reversal is not None:
        warnings += (f"the model's R_H changes sign at {unset_reversal:.4g} K, outside the "
                     "measured range, but that temperature moves with a parameter the data "
                     "do not set (the minority carrier's mobility): no reversal temperature "
                     "is reported; measure into the mixed conduction to pin it",)
    elif t_star is None:
        warnings += ("the model's R_H keeps one sign from half the lowest to twice the "
                     "highest measured temperature: no Hall sign reversal",)
    return replace(base, levels=levels, net_doping=net, compensation_ratio=comp,
                   parameter_names=names, correlation=corr,
                   warnings=warnings, data=replace(base.data, model_density=model_density),
                   optimizer_message=str(out.message), two_carrier=two, raw=out)
