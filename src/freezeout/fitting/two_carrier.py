"""Two-carrier fit: R_H(T) and rho(T) with electrons and holes, through the sign reversal.

A hot run conducts with both carriers: the intrinsic minority carrier, often the more
mobile one, pulls R_H through zero and lowers rho. The density-only fit must leave those
points out; this fit uses them. Model: the levels of the density fit (charge neutrality
gives n and p at each T), each carrier's drift mobility and Hall factor from the scattering
mechanisms with its own lattice term mu_300 (T/300 K)^-a
(:func:`freezeout.physics.two_carrier.both_carriers`), and the two-carrier R_H and
sigma = 1/rho.

Residuals: (R_model - R) / sigma_R and (ln rho_model - ln rho) / sigma_ln_rho. R_H is
fitted on its linear, signed scale (it passes through zero); its weights are the stated
uncertainties, or, without them, s_R sqrt(R^2 + (0.05 rho mu_ref)^2), where mu_ref is the
median measured |R_H| / rho: relative near a single carrier, with a floor proportional to
rho near the reversal, where the Hall signal is small against the resistive (misalignment)
voltage that scales with rho (project choice, no source). Without stated errors each
series' scale s is estimated from its own scatter (a first pass, then a refit with the
weights' ratio fixed), as in :mod:`freezeout.fitting.joint`.

Start: the density-only fit's levels; a batch scan over the compensation ratio at the
density fit's net doping (with the majority energies halved or doubled: n(T) alone often
leaves the compensation basin open), then over both lattice terms (the majority's around
the mobility of the colder points, the minority's at 0.7 to 2.8 times it); then a bounded
trust-region least squares (scipy.optimize.least_squares, "trf") with a central-difference
Jacobian computed in one batch solve. Standard errors from (J^T J)^-1 scaled by
max(chi^2/dof, 1); Wald intervals (in log space for concentrations and mu_300). The
reversal temperature's error is by the delta method, dT*/dtheta = -(dR/dtheta) / (dR/dT)
at T*.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
from scipy import optimize

from freezeout.errors import FitError, InputError
from freezeout.fitting.fit import fit_run
from freezeout.fitting.model import CarrierModel
from freezeout.fitting.parameters import LOG10_CONCENTRATION_BOUNDS, internal_options
from freezeout.fitting.problem import Problem
from freezeout.fitting.result import FitResult
from freezeout.fitting.two_carrier_model import TwoCarrierModel
from freezeout.fitting.two_carrier_summary import build_result, rms
from freezeout.physics.majority_mobility import check_mechanisms
from freezeout.records.run import RunData

LATTICE_NAMES = ("log10_mu300_n", "lattice_exponent_n", "log10_mu300_p", "lattice_exponent_p")
_BOUNDS = {"log10_mu300": (0.0, 6.0), "lattice_exponent": (0.0, 5.0)}
_FLOOR = 0.05  # floor of the R_H weights, as a fraction of rho mu_ref (project choice)


def _data(run: RunData, include_flagged: bool):
    if run.hall_coefficient is None or run.resistivity is None:
        raise InputError("a two-carrier fit needs the signed Hall coefficient "
                         "(an R_H column, or raw readings) and the resistivity (a rho column)",
                         file=run.source)
    rh = np.asarray(run.hall_coefficient, dtype=float)
    rho = np.asarray(run.resistivity, dtype=float)
    ok = np.isfinite(rh) & np.isfinite(rho) & (rho > 0)
    if run.severe is not None and not include_flagged:
        ok &= ~np.asarray(run.severe, dtype=bool)
    u_r = None if run.hall_coefficient_err is None else np.asarray(run.hall_coefficient_err)
    u_rho = None if run.resistivity_err is None else np.asarray(run.resistivity_err)
    if u_r is not None and not np.all(u_r[ok] > 0):
        u_r = None
    if u_rho is not None and not np.all(u_rho[ok] > 0):
        u_rho = None
    return ok, rh, rho, u_r, u_rho


def _lattice_start(t, rh, rho, carrier):
    """Majority mu_300 and a from the majority-signed colder half, mu_H ~ T^-a."""
    sign = 1.0 if carrier == "p" else -1.0
    mu = sign * rh / rho
    keep = mu > 0
    cold = keep & (t <= np.quantile(t[keep], 0.75)) & (t >= np.quantile(t[keep], 0.25))
    if cold.sum() >= 3 and np.ptp(np.log(t[cold])) > 0:
        slope, icpt = np.polyfit(np.log(t[cold] / 300.0), np.log(mu[cold]), 1)
        return float(icpt / math.log(10.0)), float(np.clip(-slope, 0.5, 4.0))
    return float(np.log10(np.median(mu[keep]))), 2.0


def fit_run_two_carrier(run: RunData, material, *, mobility: Sequence[str] | str,
                        hall_factor: float | str | None = None, base: FitResult | None = None,
                        include_flagged: bool = False, **fit_options) -> FitResult:
    """Fit the run's signed R_H(T) and rho(T) with electrons and holes.

    Parameters
    ----------
    run
        The run; needs the signed Hall coefficient and the resistivity.
    material
        Host (both conductivity masses and the permittivity).
    mobility
        Scattering mechanisms of both carriers (must include ``"lattice"``).
    hall_factor
        None or ``"scattering"``: each carrier's r_H(T) from the scattering; a number: that
        constant for both carriers. [1]
    base
        A density-only fit of the same run and options, if already made (else made here).
    include_flagged
        Keep points that failed a severe data-quality check.
    **fit_options
        Passed to :func:`freezeout.fitting.fit.fit_run` (donors, acceptors, statistics,
        degeneracy, fix, bounds, provenance).

    Returns
    -------
    FitResult
        With the two-carrier levels and ``two_carrier`` set (:class:`TwoCarrierFit`).
    """
    models = check_mechanisms(mobility)
    if isinstance(hall_factor, str):
        if hall_factor.strip().lower() != "scattering":
            raise InputError(f"unknown hall factor {hall_factor!r}: a number or 'scattering'")
        hall_factor = None
    if "lattice" not in models:
        raise InputError("the two-carrier fit fits each carrier's lattice term: include "
                         "'lattice' in the mobility mechanisms")
    ok, rh_all, rho_all, u_r_all, u_rho_all = _data(run, include_flagged)
    if base is None:
        base = fit_run(run, material, include_flagged=include_flagged, start_only=True,
                       **fit_options)
    n_levels = sum(1 for lv in base.levels if lv.energy is not None)
    compensated = n_levels < len(base.levels)
    major = next(lv for lv in base.levels if lv.energy is not None)
    t, rh, rho = run.temperature[ok], rh_all[ok], rho_all[ok]
    model = CarrierModel(material, t, run.carrier, n_levels, compensated,
                         base.statistics_model, major.degeneracy)
    tc = TwoCarrierModel(model, models, hall_factor)
    gap = float(material.band_gap(float(np.min(t))))
    fixed, user_bounds = internal_options(model, fit_options.get("fix"),
                                          fit_options.get("bounds"), gap)
    free = [s.internal for s in model.specs if s.internal not in fixed] + list(LATTICE_NAMES)
    if 2 * t.size < len(free) + 3:
        raise InputError(f"too few usable points ({t.size}) for a two-carrier "
                         f"fit of {len(free)} parameters", file=run.source)
    bounds = [_BOUNDS[k.rsplit("_", 1)[0]] if k in LATTICE_NAMES else user_bounds.get(
        k, LOG10_CONCENTRATION_BOUNDS if k.startswith("log10_") else (1e-4, 0.9 * gap))
        for k in free]
    lo, hi = np.array([b[0] for b in bounds]), np.array([b[1] for b in bounds])
    scale_r = np.sqrt(rh * rh + (_FLOOR * rho * np.median(np.abs(rh) / rho)) ** 2)
    base_r = u_r_all[ok] if u_r_all is not None else scale_r
    s_rho = None if u_rho_all is None else u_rho_all[ok] / rho
    problem = Problem(model, np.log(rho), np.ones_like(rho))

    start = {f"log10_N_{lv.name}": math.log10(max(lv.concentration.value, 1e8))
             for lv in base.levels}
    start.update({f"E_{lv.name}": lv.energy.value for lv in base.levels
                  if lv.energy is not None})
    mu0, a0 = _lattice_start(t, rh, rho, run.carrier)
    values0 = {**start, **fixed}
    values0 = _scan(tc, values0, (mu0, a0), rh, np.log(rho), (base_r, u_r_all is not None),
                    s_rho, fixed)

    def residuals(x, w_r, w_rho):
        values = {**fixed, **dict(zip(free, x, strict=True))}
        try:
            r_m, lr_m, _ = tc.series(values)
        except (RuntimeError, ValueError, FloatingPointError):
            return np.full(2 * t.size, 1e6)
        return problem.guarded(np.concatenate([(r_m - rh) / w_r,
                                               (lr_m - np.log(rho)) / w_rho]), values)

    def jacobian(x, w_r, w_rho):
        # central differences of every parameter in one batch solve
        h = 1e-5 * np.maximum(np.abs(x), 1e-2)
        rows = np.concatenate([x + np.diag(h), x - np.diag(h)])
        values = {**fixed, **{k: rows[:, i:i + 1] for i, k in enumerate(free)}}
        try:
            r_m, lr_m = tc.rows(values)
        except (RuntimeError, ValueError, FloatingPointError):
            r_m = lr_m = np.full((rows.shape[0], t.size), np.nan)
        r = np.concatenate([r_m / w_r, lr_m / w_rho], axis=1)
        jac = ((r[:x.size] - r[x.size:]) / (2.0 * h[:, None])).T
        if not np.all(np.isfinite(jac)):
            return optimize.approx_derivative(residuals, x, args=(w_r, w_rho),
                                              bounds=(lo, hi))
        return jac

    w_r = base_r * (1.0 if u_r_all is not None else 0.05)
    w_rho = s_rho if s_rho is not None else np.full(t.size, 0.05)
    x0 = np.clip([values0[k] for k in free], lo + 1e-9, hi - 1e-9)
    out = optimize.least_squares(residuals, x0, jac=jacobian, bounds=(lo, hi), method="trf",
                                 x_scale="jac", args=(w_r, w_rho))
    scale = {"hall": 1.0, "resistivity": 1.0}
    if u_r_all is None or s_rho is None:  # the scatter sets each unstated series' weight
        share = math.sqrt(max(2 * t.size - x0.size, 1) / (2 * t.size))
        for _ in range(3):
            r = residuals(out.x, w_r, w_rho)
            f_r = 1.0 if u_r_all is not None else rms(r[:t.size]) / share
            f_rho = 1.0 if s_rho is not None else rms(r[t.size:]) / share
            w_r, w_rho = w_r * f_r, w_rho * f_rho
            scale["hall"] *= f_r
            scale["resistivity"] *= f_rho
            if abs(f_r / f_rho - 1.0) < 0.02:
                break
            out = optimize.least_squares(residuals, out.x, jac=jacobian, bounds=(lo, hi),
                                         method="trf", x_scale="jac", args=(w_r, w_rho))
        out.fun = residuals(out.x, w_r, w_rho)
        out.jac = jacobian(out.x, w_r, w_rho)
    if not np.all(np.isfinite(out.fun)) or np.max(np.abs(out.fun)) >= 1e5:
        raise FitError(f"{run.source}: the two-carrier fit of R_H and rho did not converge "
                       f"({out.message})")
    sigma_from = {"hall": "stated" if u_r_all is not None else "scatter",
                  "resistivity": "stated" if s_rho is not None else "scatter"}
    scale = {k: v * (0.05 if sigma_from[k] == "scatter" else 1.0) for k, v in scale.items()}
    return build_result(run, base, tc, free, fixed, out, (lo, hi), ok,
                   (rh, rho, scale_r, sigma_from, scale))


def _scan(tc, values0, lattice0, rh, ln_rho, weight_r, s_rho, fixed):
    """Best start over compensation and both lattice terms, in two batch evaluations.

    First every level row (:func:`_level_grid`) with the majority's lattice term at its
    start and six minority terms; then the best row with the whole lattice grid (majority
    mu_300 x 0.5-2, a +-0.6; minority mu_300 0.7-2.8 times the majority's, a 1.2 or 2).
    Cost: N ln(SSR/N) per series without stated errors, chi^2 with them (as in the joint fit).
    """
    model = tc.model
    mu0, a0 = lattice0
    major_names, minor_names = ((LATTICE_NAMES[:2], LATTICE_NAMES[2:]) if model.carrier == "n"
                                else (LATTICE_NAMES[2:], LATTICE_NAMES[:2]))
    names = (*major_names, *minor_names)
    best = dict(values0)
    best.update(zip(names, (mu0, a0, mu0 + 0.3, 1.7), strict=True))
    level_rows = _level_grid(model, values0, fixed)
    if level_rows:
        g = [np.array([x]).reshape(-1, 1, 1) for x in (mu0, a0)] + [
            x.reshape(-1, 1, 1) for x in np.meshgrid(mu0 + np.log10([0.7, 1.4, 2.8]),
                                                     [1.2, 2.0], indexing="ij")]
        found = _best_of(tc, {**values0, **{k: v[:, None] for k, v in level_rows.items()}},
                         names, g, rh, ln_rho, weight_r, s_rho)
        if found is None:
            return best
        best.update({k: float(v[found[1]]) for k, v in level_rows.items()})
    g = [x.reshape(-1, 1, 1) for x in np.meshgrid(
        mu0 + np.linspace(-0.3, 0.3, 3), np.clip(a0 + np.linspace(-0.6, 0.6, 3), 0.1, 4.9),
        mu0 + np.log10([0.7, 1.4, 2.8]), [1.2, 2.0], indexing="ij")]
    found = _best_of(tc, best, names, g, rh, ln_rho, weight_r, s_rho)
    if found is not None:
        best.update({name: float(np.ravel(grid)[found[0]]) for name, grid in zip(
            names, np.broadcast_arrays(*g), strict=True)})
    return best


def _best_of(tc, vals, names, grids, rh, ln_rho, weight_r, s_rho):
    """(lattice index, level row) of the lowest cost of a batch, or None when none is finite."""
    base_r, r_stated = weight_r
    vals = {**vals, **dict(zip(names, grids, strict=True))}
    try:
        r_m, lr_m, _ = tc.series(vals, warm=False)  # (G, C, T)
    except (RuntimeError, ValueError, FloatingPointError):
        return None
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        e_r = (r_m - rh) / base_r
        e_rho = lr_m - ln_rho
        cost_r = (np.sum(e_r ** 2, axis=-1) if r_stated
                  else rh.size * np.log(np.mean(e_r ** 2, axis=-1)))
        cost_rho = (np.sum((e_rho / s_rho) ** 2, axis=-1) if s_rho is not None
                    else rh.size * np.log(np.mean(e_rho ** 2, axis=-1)))
    cost = np.where(np.isfinite(cost_r + cost_rho), cost_r + cost_rho, np.inf)
    cost = np.atleast_2d(cost)
    cost = np.broadcast_to(cost, (np.broadcast_arrays(*grids)[0].size, cost.shape[-1]))
    if not np.isfinite(cost).any():
        return None
    i, c = np.unravel_index(int(np.argmin(cost)), cost.shape)
    return int(i), int(c)


#: Energy factors of the start scan: where the density fit chose heavy compensation, the
#: freeze-out slope is E, and at light compensation E/2 (so E doubles), and the reverse
#: (common practice, no source: the two limits of the freeze-out slope).
_ENERGY_FACTORS = (0.5, 1.0, 2.0)


def _level_grid(model, values0, fixed) -> dict[str, np.ndarray]:
    """Start rows over the compensation ratio at the density fit's net doping.

    n(T) alone sets the net doping well and the compensation poorly, so the density fit may
    sit in the wrong compensation basin: each row keeps the net doping, sets K = N_comp /
    N_major from 1e-4 to 0.9 (the majority levels scaled together) and scales the majority
    energies by 0.5, 1 or 2 (within their bounds). The density fit's own point is the first
    row. Empty when the compensation is fixed or absent.
    """
    cname = model.compensation_name
    names = model.major_concentration_names
    if not model.compensated or cname in fixed or any(k in fixed for k in names):
        return {}
    major = sum(10.0 ** values0[k] for k in names)
    net = major - 10.0 ** values0[cname]
    if not net > 0:
        return {}
    energies = [k for k in (f"E_{model.major_symbol}{i}" for i in range(1, model.n_levels + 1))
                if k not in fixed]
    rows = [dict(values0)]
    for ratio in np.geomspace(1e-4, 0.9, 6):
        scale = net / (1.0 - ratio) / major
        for f in _ENERGY_FACTORS:
            row = dict(values0)
            row.update({k: values0[k] + math.log10(scale) for k in names})
            row[cname] = math.log10(ratio * net / (1.0 - ratio))
            row.update({k: float(np.clip(values0[k] * f, 2e-4, 0.45 * float(
                model.bands.band_gap.min()))) for k in energies})
            rows.append(row)
    keys = [cname, *names, *energies]
    out = {k: np.array([r[k] for r in rows], dtype=float) for k in keys}
    lo, hi = LOG10_CONCENTRATION_BOUNDS
    keep = np.all([(out[k] >= lo) & (out[k] <= hi) for k in (cname, *names)], axis=0)
    return {k: v[keep] for k, v in out.items()}
