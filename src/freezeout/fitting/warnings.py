"""Plain-word warnings of a fit: what the data cannot pin, and why.

Each warning names the parameter, says what the data lack and, where there is one, what
would help (measure colder, fix a parameter, add a level).
"""

from __future__ import annotations

import math

import numpy as np

from freezeout.fitting.model import CarrierModel
from freezeout.fitting.parameters import pow10


def runs_z(residual) -> float | None:
    """z-score of the number of sign runs in the residuals (Wald-Wolfowitz runs test).

    A strongly negative z (fewer runs than chance) marks systematic residuals. Residuals are
    in temperature order. None when there are too few points of each sign.

    References
    ----------
    A. Wald, J. Wolfowitz, Ann. Math. Statist. 11, 147-162 (1940).
    doi:10.1214/aoms/1177731909
    """
    r = np.asarray(residual, dtype=float)
    s = np.sign(r[r != 0])
    n1, n2 = int(np.sum(s > 0)), int(np.sum(s < 0))
    n = n1 + n2
    if n1 < 3 or n2 < 3:
        return None
    runs = 1 + int(np.sum(s[1:] != s[:-1]))
    mean = 2.0 * n1 * n2 / n + 1.0
    var = 2.0 * n1 * n2 * (2.0 * n1 * n2 - n) / (n**2 * (n - 1))
    return float((runs - mean) / math.sqrt(var)) if var > 0 else None


def fit_warnings(model: CarrierModel, out, se: dict[str, float], corr: np.ndarray,
                 public: list[str], values: dict, weighted: bool,
                 profile_upper: float | None, n_maj: float) -> list[str]:
    """Warnings of the retained fit, in a fixed order.

    Parameters
    ----------
    model
        The model on the temperatures used (its warm start, if any, is used and updated).
    out
        The retained lmfit result.
    se
        Standard error of each parameter, internal names (inflated as reported).
    corr
        Correlation matrix of the free parameters, order of ``public``.
    public
        Public names of the free parameters.
    values
        Fitted parameter values, internal names.
    weighted
        True when per-point uncertainties weighted the fit.
    profile_upper
        Upper limit of the compensating log10 concentration from a profile, or None.
    n_maj
        Total majority concentration. [cm^-3]
    """
    params = out.params
    free = list(out.var_names)
    w = []
    res = model.solve(values, warm=model.warm_fermi is not None)
    major_ion = model.majority_ionized(res)
    ms, mn = model.major_symbol, model.minor_symbol
    tmin = float(np.min(model.temperature))
    i_min = int(np.argmin(model.temperature))
    n_min_value = 10.0 ** params[model.compensation_name].value if model.compensated else 0.0
    net = n_maj - n_min_value
    for i in range(model.n_levels):
        ename = f"E_{ms}{i + 1}"
        conc = 10.0 ** params[f"log10_N_{ms}{i + 1}"].value
        frac = float(major_ion[i][i_min])
        # carriers frozen onto this level at the lowest temperature, against the net doping
        # (under heavy compensation a level can be 90 % ionized and still hold most of the
        # free carriers, so the ionized fraction alone does not tell)
        frozen = conc * (1.0 - frac)
        if frozen < 0.1 * min(net, conc):
            w.append(f"no freeze-out: level {ms}{i + 1} holds only {100 * frozen / net:.2g} % "
                     f"of the net doping as neutral centres even at the lowest temperature "
                     f"used ({tmin:g} K), so the data do not constrain its ionization energy "
                     f"{ename}; measure to lower temperature or fix it (--fix {ename}=...)")
        elif ename in free and (not np.isfinite(se[ename])
                                or se[ename] > 0.5 * abs(params[ename].value)):
            w.append(f"{ename} is poorly determined (standard error "
                     f"{se[ename]:.2g} eV on {params[ename].value:.3g} eV)")
    if profile_upper is not None:
        upper = pow10(profile_upper)
        if profile_upper >= params[model.compensation_name].max - 1e-9:
            w.append(f"compensation not constrained: the data do not bound N_{mn} from above "
                     "within the allowed range; measure deeper into freeze-out")
        else:
            w.append(f"compensation only bounded: the data give N_{mn} < {upper:.2g} cm^-3 "
                     f"(95 %, profile of chi^2), so the compensation ratio is below "
                     f"{min(upper / n_maj, 1.0):.2g}; points deeper in freeze-out, where the "
                     f"carrier density falls below N_{mn}, would pin it")
    ln_maj = model.majority_log(res)
    ln_mnr = model.minority_log(res)
    mixed = ln_mnr - ln_maj > math.log(0.01)
    if mixed.any():
        t_mixed = model.temperature[mixed]
        worst = 100 * np.exp(np.max(ln_mnr - ln_maj))
        w.append(f"two-carrier conduction: from {t_mixed.min():g} K the model's minority "
                 f"carriers exceed 1 % of the majority (up to {worst:.2g} %); a single-carrier "
                 "Hall density is biased there by the unknown mobility ratio, even before the "
                 "Hall coefficient changes sign")
    z = runs_z(out.residual)
    if z is not None and z < -3.0:
        more = "--donors" if model.carrier == "n" else "--acceptors"
        w.append(f"the residuals are systematic (runs test z = {z:.1f}: too few changes of "
                 "sign); the model may lack a level or the data hold an effect it leaves out. "
                 f"Try {more} {model.n_levels + 1} and compare the BIC")
    for name in free:
        p = params[name]
        span = (p.max - p.min) if np.isfinite(p.max - p.min) else 1.0
        if abs(p.value - p.min) < 1e-4 * span or abs(p.max - p.value) < 1e-4 * span:
            w.append(f"fit at a bound: {name.removeprefix('log10_')} sits at its limit, so its "
                     "value and uncertainty reflect the bound, not the data")
    if out.covar is None:
        w.append("the uncertainties could not be estimated (singular covariance): some "
                 "parameters are not determined by these data")
    else:
        for a in range(len(public)):
            for b in range(a + 1, len(public)):
                if np.isfinite(corr[a, b]) and abs(corr[a, b]) > 0.95:
                    w.append(f"{public[a]} and {public[b]} are strongly correlated "
                             f"(r = {corr[a, b]:+.3f}): the data constrain a combination of "
                             "them better than each one")
    if weighted and out.nfree > 0 and out.redchi > 2.0:
        w.append(f"reduced chi^2 = {out.redchi:.3g}: the data scatter more than their stated "
                 "uncertainties allow (or the model misses something); the standard errors "
                 f"are inflated by sqrt(reduced chi^2) = {math.sqrt(out.redchi):.3g}")
    return w
