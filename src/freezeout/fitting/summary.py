"""From the retained local fit to a FitResult: estimates, intervals, derived quantities.

Standard errors of a weighted fit are inflated by sqrt(reduced chi^2) when that exceeds 1
(the Birge ratio, common practice); 95 % intervals use Student's t with the fit's degrees of
freedom, in log10 space for concentrations (so they are asymmetric in cm^-3).
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from freezeout.fitting.adequacy import model_inadequate, rms_percent, runs_z
from freezeout.fitting.intervals import apply_profiles, profile_threshold, wald_unreliable
from freezeout.fitting.model import CarrierModel
from freezeout.fitting.parameters import LOG10_CONCENTRATION_BOUNDS, pow10, to_public
from freezeout.fitting.plateau import plateau_net_doping
from freezeout.fitting.problem import Problem
from freezeout.fitting.profile import Profiler
from freezeout.fitting.quantiles import t_quantile
from freezeout.fitting.result import Estimate, FitData, FitResult, LevelEstimate
from freezeout.fitting.warnings import fit_warnings
from freezeout.physics.materials import Material
from freezeout.records.run import RunData

_LN10 = math.log(10.0)


def estimate_log10(value_log10: float, se_log10: float, tq: float,
                   bounds: tuple[float, float] = LOG10_CONCENTRATION_BOUNDS) -> Estimate:
    """Estimate of a concentration fitted as log10.

    The interval is clipped to the bounds (beyond them the data say nothing).
    """
    v = pow10(value_log10)
    se = v * _LN10 * se_log10 if np.isfinite(se_log10) else math.nan
    if np.isfinite(se_log10) and np.isfinite(tq):
        lo = max(value_log10 - tq * se_log10, bounds[0])
        hi = min(value_log10 + tq * se_log10, bounds[1])
        ci = (pow10(lo), pow10(hi))
    else:
        ci = (math.nan, math.nan)
    return Estimate(v, se, ci, "wald-log")


def estimate_linear(value: float, se: float, tq: float, lower: float | None = None,
                    upper: float | None = None) -> Estimate:
    """Estimate with a symmetric interval value +- tq se, cut at ``lower``/``upper``."""
    ok = np.isfinite(se) and np.isfinite(tq)
    ci = (value - tq * se, value + tq * se) if ok else (math.nan, math.nan)
    if lower is not None and ok:
        ci = (max(ci[0], lower), ci[1])
    if upper is not None and ok:
        ci = (ci[0], min(ci[1], upper))
    return Estimate(value, se if np.isfinite(se) else math.nan, ci, "wald-linear")


def information_criteria(out, weighted: bool) -> tuple[float, float]:
    """AIC and BIC of a fit, up to a constant shared by models of the same data.

    With stated uncertainties the log-likelihood is -chi^2/2, so AIC = chi^2 + 2k and
    BIC = chi^2 + k ln N; without them the variance is estimated too and the usual
    N ln(chi^2/N) forms apply. H. Akaike, IEEE Trans. Autom. Control 19, 716 (1974);
    G. Schwarz, Ann. Stat. 6, 461 (1978).
    """
    if not weighted:
        return float(out.aic), float(out.bic)
    k, n = int(out.nvarys), int(out.ndata)
    return float(out.chisqr + 2 * k), float(out.chisqr + k * math.log(n))


def fit_data(run: RunData, used: np.ndarray, model_density: np.ndarray) -> FitData:
    """The typed record of a run's points, the model at them and which were used."""
    n = run.n_points
    return FitData(
        carrier=run.carrier,
        temperature=np.asarray(run.temperature, dtype=float),
        density=np.asarray(run.density, dtype=float),
        density_err=None if run.density_err is None else np.asarray(run.density_err,
                                                                      dtype=float),
        model_density=model_density,
        used=np.asarray(used, dtype=bool),
        point_carrier=tuple(run.point_carrier),
        flags=tuple(run.flags) if run.flags else ("",) * n,
        severe=(np.asarray(run.severe, dtype=bool) if run.severe is not None
                else np.zeros(n, dtype=bool)),
        resistivity=run.resistivity,
        resistivity_err=run.resistivity_err,
        mobility=run.mobility,
        mobility_err=run.mobility_err,
        hall_coefficient=run.hall_coefficient,
        findings=tuple(run.findings),
        scale_uncertainty=float(run.scale_uncertainty),
    )


def build_result(run: RunData, material: Material, model_all: CarrierModel,
                 problem: Problem, out, used: np.ndarray, weighted: bool,
                 internal_fix: dict[str, float], provenance: dict,
                 profile_upper: float | None = None, *, profiles: bool = True) -> FitResult:
    """The FitResult of the retained local fit ``out``.

    ``out`` is a :class:`freezeout.fitting.local_fit.LocalFit`.

    Parameters
    ----------
    run
        The run fitted.
    material
        Host material.
    model_all
        The model on every temperature of the run (used or not).
    problem
        The residual problem (its model is on the temperatures used).
    out
        The retained local fit (:class:`freezeout.fitting.local_fit.LocalFit`).
    used
        True for the points fitted.
    weighted
        True when per-point uncertainties weighted the fit.
    internal_fix
        Held parameters, internal names.
    provenance
        Provenance dict to carry into the result.
    profile_upper
        Upper 95 % limit of the compensating log10 concentration from a chi^2 profile, when
        the data only bound it.
    profiles
        False keeps the Wald intervals even where they are unreliable (a start for another
        fit).
    """
    model_used = problem.model
    params = out.params
    free = list(out.var_names)
    covar = out.covar if out.covar is not None else None
    # Weighted fits keep the stated uncertainties, but a reduced chi^2 above 1 shows that they
    # miss part of the point-to-point scatter: then the covariance is inflated by it (never
    # shrunk), the usual Birge-ratio practice.
    inflation = 1.0
    if weighted and out.nfree > 0 and np.isfinite(out.redchi) and out.redchi > 1.0:
        inflation = float(out.redchi)
        if covar is not None:
            covar = covar * inflation
    dof = out.nfree
    tq = t_quantile(0.975, dof) if dof > 0 else math.nan
    se = {n: (params[n].stderr * math.sqrt(inflation) if params[n].stderr is not None
              else math.nan) for n in params}
    for n in internal_fix:
        se[n] = 0.0
    # a relative uncertainty common to every density (thickness) moves all concentrations
    # together: add it to each log10 concentration (energies and ratios do not change)
    scale = float(run.scale_uncertainty)
    if scale > 0:
        for n in se:
            if n.startswith("log10_") and n not in internal_fix:
                se[n] = math.hypot(se[n], scale / _LN10)
    ms, mn = model_used.major_symbol, model_used.minor_symbol
    cname_min = model_used.compensation_name
    gap = float(material.band_gap(float(np.min(model_used.temperature))))

    def held(est: Estimate, name: str) -> Estimate:
        return replace(est, method="fixed") if name in internal_fix else est

    levels = []
    for i in range(1, model_used.n_levels + 1):
        cname, ename = f"log10_N_{ms}{i}", f"E_{ms}{i}"
        levels.append(LevelEstimate(
            model_used.major_kind,
            held(estimate_log10(params[cname].value, se[cname], tq), cname),
            held(estimate_linear(params[ename].value, se[ename], tq, lower=0.0, upper=gap),
                 ename),
            model_used.degeneracy,
            f"{ms}{i}", model_used.excited, model_used.lowering))
    if model_used.compensated:
        est = estimate_log10(params[cname_min].value, se[cname_min], tq)
        if profile_upper is not None:
            # only bounded: the interval runs from the floor to the profile limit
            est = Estimate(est.value, est.stderr,
                           (pow10(LOG10_CONCENTRATION_BOUNDS[0]), pow10(profile_upper)))
        levels.append(LevelEstimate(model_used.minor_kind, held(est, cname_min), None, None,
                                    mn))

    # derived quantities with first-order propagation through the covariance (internal space)
    maj = np.array([10.0 ** params[name].value for name in model_used.major_concentration_names])
    n_maj = float(maj.sum())
    n_min = 10.0 ** params[cname_min].value if model_used.compensated else 0.0
    grad_net = {}
    grad_lnk = {}
    for i, name in enumerate(model_used.major_concentration_names):
        grad_net[name] = _LN10 * maj[i]
        grad_lnk[name] = -_LN10 * maj[i] / n_maj
    if model_used.compensated:
        grad_net[cname_min] = -_LN10 * n_min
        grad_lnk[cname_min] = _LN10

    def propagate(grad: dict) -> float:
        if covar is None:
            return math.nan
        vec = np.array([grad.get(n, 0.0) for n in free])
        return float(math.sqrt(max(vec @ covar @ vec, 0.0)))

    net = n_maj - n_min
    net_se = math.hypot(propagate(grad_net), scale * net)
    net_est = estimate_linear(net, net_se, tq, lower=0.0)
    plateau_note = None
    res_used = model_used.solve(params.valuesdict(), warm=model_used.warm_fermi is not None)
    cold = int(np.argmin(model_used.temperature))
    no_freezeout = any(c * (1.0 - float(ion[cold])) < 0.1 * min(net, c)
                       for c, ion in zip(maj, model_used.majority_ionized(res_used),
                                         strict=True))
    rms = rms_percent(out.residual) if not weighted else math.nan
    inadequate = model_inadequate(weighted, out.redchi, rms, runs_z(out.residual))
    if no_freezeout or inadequate or not (np.isfinite(net_se) and net_se < 0.1 * net):
        # the levels are under-determined (no freeze-out), or the model does not describe
        # the data (its standard errors say little): a flat plateau still pins N_net, value
        # and interval both (fitting/plateau.py); points that rise are no plateau
        plateau = plateau_net_doping(problem, res_used, weighted, scale)
        if plateau is not None and not plateau.flat:
            plateau_note = plateau.note()
        elif plateau is not None and not (np.isfinite(net_se) and net_se < plateau.stderr):
            net_est = Estimate(plateau.value, plateau.stderr, plateau.ci95)
            plateau_note = plateau.note()
    if plateau_note and net_est.method == "unspecified":
        net_est = replace(net_est, method="plateau")  # the plateau's interval
    if model_used.compensated:
        k = n_min / n_maj
        se_lnk = propagate(grad_lnk)
        if profile_upper is not None:
            ci = (0.0, min(pow10(profile_upper) / n_maj, 1.0))
        elif np.isfinite(se_lnk) and np.isfinite(tq):
            half = min(tq * se_lnk, 700.0)
            ci = (k * math.exp(-half), min(k * math.exp(half), 1.0))
        else:
            ci = (math.nan, math.nan)
        comp = Estimate(k, k * se_lnk if np.isfinite(se_lnk) else math.nan, ci, "wald-log")
    else:
        comp = Estimate(0.0, 0.0, (0.0, 0.0), "fixed")
    if not free or all(n in internal_fix for n in (*model_used.major_concentration_names,
                                                   cname_min) if n in params):
        net_est, comp = replace(net_est, method="fixed"), replace(comp, method="fixed")
    # profile-likelihood intervals where the covariance may not describe chi^2 over the
    # interval (fitting/intervals.py); the compensation bound of the warnings follows them
    if profiles and free and wald_unreliable(out, covar, tq, profile_upper is not None):
        q = profile_threshold(weighted, dof)
        unit = inflation if weighted else float(out.redchi)
        ivs = Profiler(problem, out, covar, unit).intervals([*free, "net", "ratio"], q)
        levels, net_est, comp, profile_upper = apply_profiles(
            levels, net_est, comp, ivs, params, gap, scale, math.sqrt(q))

    if covar is not None:
        sd = np.sqrt(np.clip(np.diag(covar), 0, None))
        with np.errstate(divide="ignore", invalid="ignore"):
            corr = covar / np.outer(sd, sd)
    else:
        corr = np.full((len(free), len(free)), math.nan)
    public = [n.removeprefix("log10_") for n in free]

    # model at every point of the run (used or not), warm from the fit when on the same grid
    values = params.valuesdict()
    if model_all.temperature.shape == model_used.temperature.shape and (
            model_used.warm_fermi is not None):
        model_all.warm_start(model_used.warm_fermi)
    res_all = model_all.solve(values, warm=model_all.warm_fermi is not None)

    warnings = list(run.notes)
    warnings += fit_warnings(model_used, out, se, corr, public, values, weighted,
                             profile_upper, n_maj)
    if plateau_note:
        warnings.append(plateau_note)
    if scale > 0:
        warnings.append(f"a {100 * scale:.2g} % uncertainty common to every point (sample "
                        "thickness) is added to the concentrations; it does not weight the "
                        "fit")
    aic, bic = information_criteria(out, weighted)
    return FitResult(
        carrier=run.carrier,
        levels=tuple(levels),
        compensation_ratio=comp,
        net_doping=net_est,
        chi2=float(out.chisqr),
        reduced_chi2=float(out.redchi),
        aic=aic,
        bic=bic,
        n_points=int(out.ndata),
        n_parameters=int(out.nvarys),
        weighted=weighted,
        parameter_names=tuple(public),
        correlation=corr,
        warnings=tuple(warnings),
        hall_factor=float(provenance.get("hall_factor", 1.0)),
        statistics_model=model_used.statistics,
        material=material,
        provenance=provenance,
        data=fit_data(run, used, np.exp(model_all.majority_log(res_all))),
        fixed=dict(to_public(k, v) for k, v in internal_fix.items()),
        optimizer_message=str(out.message),
        error_inflation=math.sqrt(inflation),
        raw=out,
    )
