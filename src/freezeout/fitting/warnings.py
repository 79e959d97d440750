"""Plain-word warnings of a fit: what the data cannot pin, and why.

Each warning names the parameter, says what the data lack and, where there is one, what
would help (measure colder, fix a parameter, free a held one, add a level). Each is true of
the data it is shown for: the runs test speaks only when the misfit is significant
(:mod:`freezeout.fitting.adequacy`), a misfit with held values points at them before
suggesting another level, and an unweighted fit is judged by its rms misfit in percent,
never by a reduced chi^2 that only measures the residuals in ln units.
"""

from __future__ import annotations

import math

import numpy as np

from freezeout.fitting.adequacy import (
    MISFIT_RMS_PERCENT,
    RUNS_Z_LIMIT,
    misfit_significant,
    model_inadequate,
    rms_percent,
    runs_z,
)
from freezeout.fitting.host_checks import LevelCheck, host_warnings
from freezeout.fitting.model import CarrierModel
from freezeout.fitting.parameters import pow10, to_public

#: |r| above which two parameters are called strongly correlated (project choice, no source).
CORRELATION_LIMIT = 0.95


def _held(params) -> str:
    """The held parameters of a fit in plain words, e.g. ``E_D1 = 0.08 eV``."""
    out = []
    for name, p in params.items():
        if p.vary:
            continue
        public, value = to_public(name, p.value)
        out.append(f"{public} = {value:.3g} cm^-3" if public.startswith("N_")
                   else f"{public} = {value:.4g} eV")
    return ", ".join(out)


def _g(x: float) -> str:
    """A positive number in two significant figures, without an exponent up to 1e5."""
    return f"{x:.2g}" if x < 100 else f"{x:.0f}"


def _inadequate_text(weighted: bool, redchi: float, rms: float, z: float | None,
                     held: str) -> str:
    """The warning of a model that does not describe the data."""
    size = (f"reduced chi^2 = {redchi:.3g} (residuals {_g(math.sqrt(redchi))} times their "
            "stated uncertainties)" if weighted else
            f"it misses the data by {_g(rms)} % rms (in ln density)")
    shape = ("with residuals in long stretches of one sign" if z is not None
             else "too few points to test the residuals for a pattern")
    fixes = f"; held: {held}" if held else ""
    change = "levels, compensation" + (", the held values" if held else "")
    return (f"the model does not describe the data: {size}, {shape}{fixes}. The fitted "
            "values, the net doping included, are not measurements; change the model "
            f"({change}) before using them")


def fit_warnings(model: CarrierModel, out, se: dict[str, float], corr: np.ndarray,
                 public: list[str], values: dict, weighted: bool,
                 profile_upper: float | None, n_maj: float) -> list[str]:
    """Warnings of the retained fit, in a fixed order.

    Parameters
    ----------
    model
        The model on the temperatures used (its warm start, if any, is used and updated).
    out
        The retained local fit (:class:`freezeout.fitting.local_fit.LocalFit`).
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
    held = _held(params)
    w = []
    z = runs_z(out.residual)
    # unweighted residuals are ln(model) - ln(data) themselves
    rms = rms_percent(out.residual) if not weighted else math.nan
    inadequate = model_inadequate(weighted, out.redchi, rms, z)
    if inadequate:
        w.append(_inadequate_text(weighted, out.redchi, rms, z, held))
    elif not weighted and rms > MISFIT_RMS_PERCENT:
        w.append(f"the model misses the data by {_g(rms)} % rms (in ln density); with no "
                 "per-point uncertainties that cannot be tested against the scatter: judge "
                 "whether the measurement is that noisy or the model lacks something")
    res = model.solve(values, warm=model.warm_fermi is not None)
    major_ion = model.majority_ionized(res)
    ms, mn = model.major_symbol, model.minor_symbol
    tmin = float(np.min(model.temperature))
    i_min = int(np.argmin(model.temperature))
    n_min_value = 10.0 ** params[model.compensation_name].value if model.compensated else 0.0
    net = n_maj - n_min_value
    checks = []
    for i in range(model.n_levels):
        ename = f"E_{ms}{i + 1}"
        conc = 10.0 ** params[f"log10_N_{ms}{i + 1}"].value
        frac = float(major_ion[i][i_min])
        # carriers frozen onto this level at the lowest temperature, against the net doping
        # (under heavy compensation a level can be 90 % ionized and still hold most of the
        # free carriers, so the ionized fraction alone does not tell)
        frozen = conc * (1.0 - frac)
        determined = ename in free
        if frozen < 0.1 * min(net, conc):
            determined = False
            advice = (f"the held value {ename} = {params[ename].value:.4g} eV is not tested "
                      "by them; measure to lower temperature" if ename not in free else
                      f"measure to lower temperature or fix it (--fix {ename}=...)")
            w.append(f"no freeze-out: level {ms}{i + 1} holds only {100 * frozen / net:.2g} % "
                     f"of the net doping as neutral centres even at the lowest temperature "
                     f"used ({tmin:g} K), so the data do not constrain its ionization energy "
                     f"{ename}; {advice}")
        elif ename in free and (not np.isfinite(se[ename])
                                or se[ename] > 0.5 * abs(params[ename].value)):
            determined = False
            w.append(f"{ename} is poorly determined (standard error "
                     f"{se[ename]:.2g} eV on {params[ename].value:.3g} eV)")
        checks.append(LevelCheck(f"{ms}{i + 1}", float(params[ename].value), conc, determined))
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
                 "Hall coefficient changes sign (--carriers both fits R_H and rho with both "
                 "carriers)")
    if (z is not None and z < RUNS_Z_LIMIT
            and misfit_significant(weighted, out.chisqr, out.nfree, rms)):
        runs = f"the residuals are systematic (runs test z = {z:.1f}: too few changes of sign)"
        if held:
            w.append(f"{runs} with {held} held fixed: the fixed value(s) may be what misfits; "
                     "free them (drop --fix) and refit before adding a level")
        else:
            more, less = (("--donors", "--acceptors") if model.carrier == "n"
                          else ("--acceptors", "--donors"))
            comp = "" if model.compensated else f" or {less} 1 (compensation)"
            w.append(f"{runs}; the model may lack a level or the data hold an effect it leaves "
                     f"out. Try {more} {model.n_levels + 1}{comp} and compare the BIC")
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
        w += correlation_warnings(public, corr)
    if weighted and out.nfree > 0 and out.redchi > 2.0:
        model_words = "the model, with its held values," if held else "the model"
        w.append(f"reduced chi^2 = {out.redchi:.3g}: the data scatter more than their stated "
                 f"uncertainties allow (or {model_words} misses something); the standard errors "
                 f"are inflated by sqrt(reduced chi^2) = {math.sqrt(out.redchi):.3g}")
    if not inadequate:
        # the host's effective-mass estimates say nothing about numbers that are not measured
        w += host_warnings(model.material, model.carrier, checks)
    return w


#: Openings of density-only statements that a refit of the same levels on more data (the
#: joint or the two-carrier fit) replaces: its net doping is no longer the plateau's, its
#: intervals are its own, and (two carriers) the mixed points are in the fit.
DENSITY_ONLY_STATEMENTS = ("the net doping and its interval come from the saturation plateau",
                           "no saturation plateau", "compensation only bounded",
                           "compensation not constrained")
MIXED_STATEMENTS = ("two-carrier conduction:", "the hall coefficient changes sign")
#: Openings (and phrases) of statements about the density-only solution itself: its misfit,
#: its bounds, its covariance. A refit says its own.
SOLUTION_STATEMENTS = ("the model does not describe", "the model misses the data",
                       "the residuals are systematic", "fit at a bound",
                       "the uncertainties could not be estimated", "reduced chi^2 = ")
SOLUTION_PHRASES = (" are strongly correlated ", " is poorly determined ")


def kept_after_refit(warnings, *, mixed_fitted: bool = False,
                     own_solution: bool = False) -> tuple[str, ...]:
    """The density-only fit's warnings that still hold for a refit of its levels.

    Parameters
    ----------
    warnings
        The density-only fit's warnings.
    mixed_fitted
        True when the refit models both carriers (the mixed-conduction remarks then go).
    own_solution
        True when the refit states its own misfit, bounds and correlations (the density-only
        solution's statements then go).
    """
    drop = DENSITY_ONLY_STATEMENTS + (MIXED_STATEMENTS if mixed_fitted else ())
    if own_solution:
        drop += SOLUTION_STATEMENTS
    return tuple(w for w in warnings if not w.lower().startswith(drop)
                 and not (own_solution and any(p in w for p in SOLUTION_PHRASES)))


def refit_warnings(public, x, bounds, corr, *, what: str) -> list[str]:
    """A refit's own statements: parameters at a bound and strongly correlated pairs.

    Parameters
    ----------
    public
        Public names of the free parameters.
    x
        Their internal values at the solution.
    bounds
        (lower, upper) internal bounds.
    corr
        Correlation matrix of the free parameters.
    what
        The refit's name in the text ("two-carrier fit").
    """
    w = []
    lo, hi = bounds
    for i, name in enumerate(public):
        span = hi[i] - lo[i]
        if x[i] - lo[i] < 1e-6 * span or hi[i] - x[i] < 1e-6 * span:
            w.append(f"{what} at a bound: {name} sits at its limit, so its interval is not "
                     "set by the data")
    return w + correlation_warnings(public, corr, f" in the {what}")


def correlation_warnings(public, corr, where: str = "") -> list[str]:
    """One statement per pair of parameters correlated beyond :data:`CORRELATION_LIMIT`.

    Parameters
    ----------
    public
        Public names of the free parameters, the order of ``corr``.
    corr
        Their correlation matrix (NaN where not estimated).
    where
        Words naming the fit, after "strongly correlated" (e.g. " in the two-carrier fit").
    """
    corr = np.asarray(corr)
    return [f"{public[a]} and {public[b]} are strongly correlated{where} "
            f"(r = {corr[a, b]:+.3f}): the data constrain a combination of them better than "
            "each one"
            for a in range(len(public)) for b in range(a + 1, len(public))
            if np.isfinite(corr[a, b]) and abs(corr[a, b]) > CORRELATION_LIMIT]
