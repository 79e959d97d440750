"""Fitting a run to the carrier model: starting values, a global stage, a local lmfit fit.

Residuals are ln(model density) - ln(measured density), divided by the uncertainty of
ln(density) (= density_err/density) when the run gives per-point uncertainties. Concentrations
are fitted as log10. The global stage evaluates a grid of starts around the data-driven guess
in one vectorized solve and refines the best few locally; the lowest chi^2 wins.
"""

from __future__ import annotations

import math
from collections.abc import Mapping

import lmfit
import numpy as np
from scipy import stats

from freezeout.errors import FitError, InputError
from freezeout.fitting.model import CarrierModel
from freezeout.fitting.result import Estimate, FitResult, LevelEstimate
from freezeout.records.run import RunData
from freezeout.physics.bands import thermal_energy
from freezeout.physics.materials import Material
from freezeout.physics.neutrality import BandState

LOG10_CONCENTRATION_BOUNDS = (8.0, 22.0)
#: Model evaluations allowed to one local fit before it counts as not converged.
MAX_EVALUATIONS = 1500
_LN10 = math.log(10.0)


def guess(temperature: np.ndarray, density: np.ndarray, material: Material) -> dict:
    """Starting values from the data: saturation plateau and freeze-out slope.

    Parameters
    ----------
    temperature
        Temperatures, ascending. [K]
    density
        Majority-carrier density. [cm^-3]
    material
        Host, for the intrinsic density that marks points to leave out of the plateau.

    Returns
    -------
    dict
        ``net_doping`` [cm^-3], ``energy`` [eV] (from -2 k d ln(n T^-3/4)/d(1/T) on the
        freeze-out points, the uncompensated slope rule), ``has_freezeout`` (bool).
    """
    ni = material.intrinsic_density(temperature)
    extrinsic = ni < 0.05 * density
    plateau_pool = density[extrinsic] if extrinsic.any() else density
    net = float(np.max(plateau_pool))
    frozen = (density < 0.5 * net) & extrinsic
    # only the low-temperature side of the plateau
    t_peak = temperature[extrinsic][np.argmax(plateau_pool)] if extrinsic.any() else np.inf
    frozen &= temperature < t_peak
    energy = 0.05
    has_freezeout = int(frozen.sum()) >= 2
    if has_freezeout:
        x = 1.0 / temperature[frozen]
        y = np.log(density[frozen] * temperature[frozen] ** -0.75)
        slope = np.polyfit(x, y, 1)[0]  # [K]
        energy = float(np.clip(-2.0 * slope * thermal_energy(1.0), 1e-3,
                               0.45 * material.band_gap(300.0)))
    return {"net_doping": net, "energy": energy, "has_freezeout": has_freezeout}


def _start_grid(model: CarrierModel, g: dict, fixed: Mapping[str, float]) -> list[dict]:
    """Candidate starting points (internal parameter values) around the guess."""
    k_levels = model.n_levels
    e0 = g["energy"]
    if k_levels == 1:
        energy_sets = [(e0 * f,) for f in (0.5, 1.0, 2.0)]
        split_sets = [(1.0,)]
    else:
        spread = np.geomspace(0.5, 2.5, k_levels)
        energy_sets = [tuple(e0 * spread * f) for f in (0.6, 1.0, 1.6)]
        split_sets = [tuple(np.full(k_levels, 1.0 / k_levels))]
        w = np.geomspace(3.0, 1.0, k_levels)
        split_sets.append(tuple(w / w.sum()))
        split_sets.append(tuple(w[::-1] / w.sum()))
    ratios = (1e-4, 1e-2, 0.2, 0.6) if model.compensated else (0.0,)
    ms = "D" if model.carrier == "n" else "A"
    mn = "A" if model.carrier == "n" else "D"
    out = []
    for es in energy_sets:
        for split in split_sets:
            for r in ratios:
                major_total = g["net_doping"] / (1.0 - r)
                v = {}
                for i in range(k_levels):
                    v[f"log10_N_{ms}{i + 1}"] = math.log10(major_total * split[i])
                    v[f"E_{ms}{i + 1}"] = es[i]
                if model.compensated:
                    v[f"log10_N_{mn}"] = math.log10(max(r * major_total, 1e8))
                out.append(v)
    for v in out:
        v.update(fixed)
    return out


class _Problem:
    """Residuals and bookkeeping for one fit."""

    def __init__(self, model: CarrierModel, y: np.ndarray, sigma: np.ndarray) -> None:
        self.model = model
        self.y = y
        self.sigma = sigma
        ms = "D" if model.carrier == "n" else "A"
        mn = "A" if model.carrier == "n" else "D"
        self._major = [f"log10_N_{ms}{i}" for i in range(1, model.n_levels + 1)]
        self._minor = f"log10_N_{mn}" if model.compensated else None

    def type_penalty(self, values) -> float:
        """Positive when the compensating species reaches the majority total.

        That would be a run of the other carrier type, which a single-carrier fit of this
        type must not wander into.
        """
        if self._minor is None:
            return 0.0
        major = math.log10(sum(10.0 ** values[k] for k in self._major))
        excess = values[self._minor] - major + 1e-3  # keep N_min below 0.998 N_maj
        return max(excess, 0.0)

    def residual(self, params: lmfit.Parameters) -> np.ndarray:
        values = params.valuesdict()
        try:
            ln_model = self.model.log_density(values)
        except (RuntimeError, ValueError, FloatingPointError):
            return np.full(self.y.shape, 1e6)
        r = (ln_model - self.y) / self.sigma
        penalty = self.type_penalty(values)
        if penalty > 0:
            r = r + 1e3 * penalty * np.sign(r + 1e-300)
        return np.where(np.isfinite(r), r, 1e6)

    def log_slope(self, values: dict) -> np.ndarray:
        """d ln(density)/dT of the model at the data temperatures, by central difference."""
        model = self.model
        t = model.temperature
        h = 1e-4 * t
        out = []
        for tt in (t + h, t - h):
            bands = BandState.from_material(model.material, tt)
            res = model.solve(values, bands=bands, warm=False)
            out.append(res.log_n if model.carrier == "n" else res.log_p)
        return (out[0] - out[1]) / (2.0 * h)

    def include_temperature(self, values: dict, base_sigma: np.ndarray,
                            temperature_err: np.ndarray) -> None:
        """Effective variance sigma^2 + (d ln n/dT u_T)^2, the slope from the model at values.

        The uncertainty of the independent variable is carried into the residual by the
        law of propagation of uncertainty (ISO/IEC Guide 98-3 (GUM), 5.1.2) applied to the
        model's temperature dependence.
        """
        slope = self.log_slope(values)
        self.sigma = np.sqrt(base_sigma**2 + (slope * temperature_err) ** 2)

    def batch_cost(self, starts: list[dict]) -> np.ndarray:
        """Sum of squared residuals for many starts in one vectorized solve."""
        names = starts[0].keys()
        batch = {k: np.array([s[k] for s in starts])[:, None] for k in names}
        t = self.model.temperature
        bands = self.model.bands
        bb = BandState(t[None, :], bands.kt[None, :], bands.band_gap[None, :],
                       bands.log_nc[None, :], bands.log_nv[None, :])
        res = self.model.solve(batch, bands=bb, warm=False)
        ln_model = res.log_n if self.model.carrier == "n" else res.log_p
        r = (ln_model - self.y[None, :]) / self.sigma[None, :]
        cost = np.sum(r * r, axis=1)
        return np.where(np.isfinite(cost), cost, np.inf), res.fermi_level


def _parameters(model: CarrierModel, start: dict, fixed: Mapping[str, float],
                bounds: Mapping[str, tuple[float, float]]) -> lmfit.Parameters:
    params = lmfit.Parameters()
    gap = float(model.material.band_gap(float(np.min(model.temperature))))
    for spec in model.specs:
        if spec.quantity == "concentration":
            lo, hi = LOG10_CONCENTRATION_BOUNDS
        else:
            lo, hi = 1e-4, 0.9 * gap
        if spec.internal in bounds:
            lo, hi = bounds[spec.internal]
        value = float(np.clip(start[spec.internal], lo + 1e-9 * abs(lo or 1),
                              hi - 1e-9 * abs(hi or 1)))
        if spec.internal in fixed:
            params.add(spec.internal, value=float(fixed[spec.internal]), vary=False)
        else:
            params.add(spec.internal, value=value, min=lo, max=hi)
    return params


def to_internal(name: str, value: float, band_gap: float = math.inf) -> tuple[str, float]:
    """Map a public parameter value (N in cm^-3, E in eV) to its internal name and value.

    Concentrations must lie within the fit's range (1e8 to 1e22 cm^-3) and energies between
    0 and the band gap (at the lowest temperature of the run); anything else is bad input.
    """
    if name.startswith("N_"):
        lo, hi = (10.0**b for b in LOG10_CONCENTRATION_BOUNDS)
        if not (np.isfinite(value) and lo <= value <= hi):
            raise InputError(f"{name} = {value!r} cm^-3 is outside the range the model covers "
                             f"({lo:g} to {hi:g} cm^-3)")
        return f"log10_{name}", math.log10(value)
    if name.startswith("E_"):
        if not (np.isfinite(value) and 0 < value < band_gap):
            raise InputError(f"{name} = {value!r} eV must be above 0 and below the band gap "
                             f"({band_gap:.4g} eV)")
        return name, float(value)
    raise InputError(f"unknown parameter {name!r}")


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
    if run.carrier == "n":
        n_levels, n_comp = donors, acceptors
    else:
        n_levels, n_comp = acceptors, donors
    major_word = "donors" if run.carrier == "n" else "acceptors"
    minor_word = "acceptors" if run.carrier == "n" else "donors"
    if n_levels < 1:
        raise InputError(f"an {run.carrier}-type run needs at least one level of {major_word}"
                         f" (--{major_word} 1 or more)")
    if n_levels > 4:
        raise InputError(f"--{major_word} {n_levels}: at most 4 levels can be fitted")
    if n_comp not in (0, 1):
        raise InputError(f"--{minor_word} {n_comp}: for an {run.carrier}-type run the minority "
                         "species is one fully ionized compensating concentration (0 or 1); "
                         "several of them cannot be told apart by the data")
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
    internal_fix = dict(to_internal(k, v, gap) for k, v in (fix or {}).items())
    internal_bounds = {}
    for k, (lo, hi) in (bounds or {}).items():
        ik, ilo = to_internal(k, lo, gap)
        _, ihi = to_internal(k, hi, gap)
        if not ilo < ihi:
            raise InputError(f"bound of {k}: low {lo!r} is not below high {hi!r}")
        internal_bounds[ik] = (ilo, ihi)
    known = {s.internal for s in model.specs}
    for ik in (*internal_fix, *internal_bounds):
        if ik not in known:
            public = ik.removeprefix("log10_")
            raise InputError(f"unknown parameter {public!r}; this model has "
                             f"{', '.join(model.names)}")
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
    problem = _Problem(model_used, y, sigma)

    g = guess(t_used, run.density[used], material)
    starts = _start_grid(model_used, g, internal_fix)
    for s in starts:
        for k, (lo, hi) in internal_bounds.items():
            s[k] = float(np.clip(s[k], lo, hi))
    costs, start_fermi = problem.batch_cost(starts)
    order = np.argsort(costs)
    u_t = None
    if weighted and run.temperature_err is not None and np.any(run.temperature_err[used] > 0):
        u_t = run.temperature_err[used]
        base_sigma = sigma.copy()
        problem.include_temperature(starts[order[0]], base_sigma, u_t)
        costs, start_fermi = problem.batch_cost(starts)
        order = np.argsort(costs)
    best = None
    stalled = None  # best of the starts that stopped without converging
    failures = []
    for idx in order[: 4 if n_levels > 1 else 3]:
        if not np.isfinite(costs[idx]):
            continue
        params = _parameters(model_used, starts[idx], internal_fix, internal_bounds)
        model_used._last_fermi = start_fermi[idx].copy()  # warm start from the global stage
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
    profile_upper = None
    mn = "A" if run.carrier == "n" else "D"
    cname = f"log10_N_{mn}"
    if model_used.compensated and cname not in internal_fix:
        se_c = best.params[cname].stderr
        at_floor = best.params[cname].value <= best.params[cname].min + 0.05
        if se_c is None or not np.isfinite(se_c) or se_c > 0.5 or at_floor:
            profile_upper = _profile_upper(problem, best, cname, weighted)
            model_used._last_fermi = None
    result = _build_result(run, material, model, model_used, best, used, weighted, statistics,
                           internal_fix, g, provenance or {}, profile_upper, problem)
    if not_converged:
        from dataclasses import replace

        result = replace(result, warnings=result.warnings + (
            "the optimizer did not converge: the chi^2 surface is flat along some directions, "
            "so those parameters are not determined by these data (see the other warnings); "
            "the values shown are one point of that flat valley",))
    return result


def _profile_upper(problem: _Problem, best, name: str, weighted: bool) -> float:
    """Upper 95 % limit of one log10 concentration by profiling chi^2.

    The parameter is held at trial values above its best fit while the others are refitted;
    the limit is where chi^2 rises by 2.71 (a one-sided 95 % limit for one parameter; the
    rise is scaled by the reduced chi^2 when the fit is unweighted or when it exceeds 1,
    as the standard errors are). Returns the
    upper bound of the parameter when the data never exclude larger values.
    """
    base = best.params
    # in units of the residual variance: the stated one (weighted fit, inflated when the
    # reduced chi^2 exceeds 1) or the fitted one (unweighted)
    scale = max(best.redchi, 1.0) if weighted else max(best.redchi, 1e-300)
    threshold = best.chisqr + 2.71 * scale
    hi_bound = base[name].max

    def chi2_at(x: float) -> float:
        params = base.copy()
        params[name].set(value=x, vary=False)
        problem.model._last_fermi = None
        out = lmfit.minimize(problem.residual, params, method="leastsq")
        return float(out.chisqr)

    lo = base[name].value
    x = lo
    while True:
        x = min(x + 0.5, hi_bound)
        if chi2_at(x) > threshold:
            hi = x
            break
        lo = x
        if x >= hi_bound:
            return hi_bound
    for _ in range(7):
        mid = 0.5 * (lo + hi)
        if chi2_at(mid) > threshold:
            hi = mid
        else:
            lo = mid
    return 0.5 * (lo + hi)


def _pow10(x: float) -> float:
    return 10.0 ** float(np.clip(x, -300.0, 300.0))


def _estimate_log10(value_log10: float, se_log10: float, tq: float,
                    bounds: tuple[float, float] = LOG10_CONCENTRATION_BOUNDS) -> Estimate:
    """Estimate of a concentration fitted as log10.

    The interval is clipped to the bounds (beyond them the data say nothing).
    """
    v = _pow10(value_log10)
    se = v * _LN10 * se_log10 if np.isfinite(se_log10) else math.nan
    if np.isfinite(se_log10) and np.isfinite(tq):
        lo = max(value_log10 - tq * se_log10, bounds[0])
        hi = min(value_log10 + tq * se_log10, bounds[1])
        ci = (_pow10(lo), _pow10(hi))
    else:
        ci = (math.nan, math.nan)
    return Estimate(v, se, ci)


def _estimate_linear(value: float, se: float, tq: float, lower: float | None = None
                     ) -> Estimate:
    ok = np.isfinite(se) and np.isfinite(tq)
    ci = (value - tq * se, value + tq * se) if ok else (math.nan, math.nan)
    if lower is not None and ok:
        ci = (max(ci[0], lower), ci[1])
    return Estimate(value, se if np.isfinite(se) else math.nan, ci)


def _plateau_net_doping(problem: _Problem, res, run_carrier: str, weighted: bool,
                        scale: float) -> tuple[float, int]:
    """Standard error of the net doping from the saturation plateau alone.

    Where every majority level is at least 99 % ionized and the minority carriers are below
    1 % of the majority, n (or p) equals |N_D - N_A|: the net doping is then the weighted
    mean of those points, determined even when the levels themselves are not. Returns the
    standard error of that mean (inflated by the scatter when it exceeds the stated
    uncertainties, and with the common scale uncertainty) and the number of points; NaN when
    fewer than two points qualify.
    """
    major_ion = res.donor_ionized if run_carrier == "n" else res.acceptor_ionized
    ionized = np.all(np.stack(major_ion) >= 0.99, axis=0) if major_ion else True
    ln_maj = res.log_n if run_carrier == "n" else res.log_p
    ln_min = res.log_p if run_carrier == "n" else res.log_n
    plateau = ionized & (ln_min - ln_maj < math.log(0.01))
    k = int(np.sum(plateau))
    if k < 2:
        return math.nan, k
    y = np.exp(problem.y[plateau])
    s = problem.sigma[plateau] * y if weighted else np.full(k, np.std(y, ddof=1))
    w = 1.0 / s**2
    mean = float(np.sum(w * y) / np.sum(w))
    se = float(math.sqrt(1.0 / np.sum(w)))
    chi2 = float(np.sum(w * (y - mean) ** 2)) / (k - 1)
    if weighted and chi2 > 1.0:
        se *= math.sqrt(chi2)
    return math.hypot(se, scale * mean), k


def _build_result(run, material, model_all, model_used, out, used, weighted, statistics,
                  internal_fix, g, provenance, profile_upper=None, problem=None) -> FitResult:
    params = out.params
    free = [n for n in out.var_names]
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
    tq = float(stats.t.ppf(0.975, dof)) if dof > 0 else math.nan
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
    ms = "D" if run.carrier == "n" else "A"
    mn = "A" if run.carrier == "n" else "D"
    major_kind = "donor" if run.carrier == "n" else "acceptor"
    minor_kind = "acceptor" if run.carrier == "n" else "donor"
    levels = []
    for i in range(1, model_used.n_levels + 1):
        cname, ename = f"log10_N_{ms}{i}", f"E_{ms}{i}"
        levels.append(LevelEstimate(
            major_kind, _estimate_log10(params[cname].value, se[cname], tq),
            _estimate_linear(params[ename].value, se[ename], tq, lower=0.0),
            model_used.degeneracy,
            f"{ms}{i}"))
    if model_used.compensated:
        cname = f"log10_N_{mn}"
        est = _estimate_log10(params[cname].value, se[cname], tq)
        if profile_upper is not None:
            # only bounded: the interval runs from the floor to the profile limit
            est = Estimate(est.value, est.stderr,
                           (_pow10(LOG10_CONCENTRATION_BOUNDS[0]), _pow10(profile_upper)))
        levels.append(LevelEstimate(minor_kind, est, None, None, mn))

    # derived quantities with first-order propagation through the covariance (internal space)
    maj = np.array([10.0 ** params[f"log10_N_{ms}{i}"].value
                    for i in range(1, model_used.n_levels + 1)])
    n_maj = float(maj.sum())
    n_min = 10.0 ** params[f"log10_N_{mn}"].value if model_used.compensated else 0.0
    grad_net = {}
    grad_lnk = {}
    for i in range(1, model_used.n_levels + 1):
        name = f"log10_N_{ms}{i}"
        grad_net[name] = _LN10 * maj[i - 1]
        grad_lnk[name] = -_LN10 * maj[i - 1] / n_maj
    if model_used.compensated:
        grad_net[f"log10_N_{mn}"] = -_LN10 * n_min
        grad_lnk[f"log10_N_{mn}"] = _LN10

    def propagate(grad: dict) -> float:
        if covar is None:
            return math.nan
        vec = np.array([grad.get(n, 0.0) for n in free])
        return float(math.sqrt(max(vec @ covar @ vec, 0.0)))

    net = n_maj - n_min
    net_se = math.hypot(propagate(grad_net), scale * net)
    plateau_note = None
    if problem is not None and not (np.isfinite(net_se) and net_se < 0.1 * net):
        # the levels are under-determined (no freeze-out): the plateau still pins N_net
        res_used = model_used.solve(params.valuesdict(), warm=model_used._last_fermi is not None)
        se_plateau, k_plateau = _plateau_net_doping(problem, res_used, run.carrier, weighted,
                                                    scale)
        if np.isfinite(se_plateau) and not (np.isfinite(net_se) and net_se < se_plateau):
            net_se = se_plateau
            plateau_note = (f"the net doping and its uncertainty come from the saturation "
                            f"plateau ({k_plateau} points where the levels are fully ionized), "
                            "which determines N_D - N_A even where the levels are not")
    net_est = _estimate_linear(net, net_se, tq, lower=0.0)
    if model_used.compensated:
        k = n_min / n_maj
        se_lnk = propagate(grad_lnk)
        if profile_upper is not None:
            ci = (0.0, min(_pow10(profile_upper) / n_maj, 1.0))
        elif np.isfinite(se_lnk) and np.isfinite(tq):
            half = min(tq * se_lnk, 700.0)
            ci = (k * math.exp(-half), min(k * math.exp(half), 1.0))
        else:
            ci = (math.nan, math.nan)
        comp = Estimate(k, k * se_lnk if np.isfinite(se_lnk) else math.nan, ci)
    else:
        comp = Estimate(0.0, 0.0, (0.0, 0.0))

    if covar is not None:
        sd = np.sqrt(np.clip(np.diag(covar), 0, None))
        with np.errstate(divide="ignore", invalid="ignore"):
            corr = covar / np.outer(sd, sd)
    else:
        corr = np.full((len(free), len(free)), math.nan)
    public = [n.removeprefix("log10_") for n in free]

    # model at every point of the run (used or not)
    values = params.valuesdict()
    if model_all.temperature.shape == model_used.temperature.shape:
        model_all._last_fermi = model_used._last_fermi  # same grid: warm start
    res_all = model_all.solve(values, warm=model_all._last_fermi is not None)
    ln_all = res_all.log_n if run.carrier == "n" else res_all.log_p

    warnings = list(run.notes)
    warnings += _warnings(run, model_used, out, params, se, free, corr, public, values, g, tq,
                          weighted, profile_upper, n_maj)
    if plateau_note:
        warnings.append(plateau_note)
    if scale > 0:
        warnings.append(f"a {100 * scale:.2g} % uncertainty common to every point (sample "
                        "thickness) is added to the concentrations; it does not weight the "
                        "fit")
    data = {
        "temperature_K": run.temperature.tolist(),
        "density_cm3": run.density.tolist(),
        "density_err_cm3": None if run.density_err is None else run.density_err.tolist(),
        "model_density_cm3": np.exp(ln_all).tolist(),
        "used": used.tolist(),
        "point_carrier": list(run.point_carrier),
        "flags": list(run.flags) if run.flags else [""] * run.n_points,
        "severe": ([bool(x) for x in run.severe] if run.severe is not None
                   else [False] * run.n_points),
        "resistivity_ohm_cm": _list_or_none(run.resistivity),
        "resistivity_err_ohm_cm": _list_or_none(run.resistivity_err),
        "mobility_cm2_per_Vs": _list_or_none(run.mobility),
        "mobility_err_cm2_per_Vs": _list_or_none(run.mobility_err),
        "hall_coefficient_cm3_per_C": _list_or_none(run.hall_coefficient),
        "findings": [f.to_dict() for f in run.findings],
        "scale_uncertainty": scale,
    }
    return FitResult(
        carrier=run.carrier,
        levels=tuple(levels),
        compensation_ratio=comp,
        net_doping=net_est,
        chi2=float(out.chisqr),
        reduced_chi2=float(out.redchi),
        aic=_information_criteria(out, weighted)[0],
        bic=_information_criteria(out, weighted)[1],
        n_points=int(out.ndata),
        n_parameters=int(out.nvarys),
        weighted=weighted,
        parameter_names=tuple(public),
        correlation=corr,
        warnings=tuple(warnings),
        hall_factor=float(provenance.get("hall_factor", 1.0)),
        statistics_model=statistics,
        material=material.to_dict(),
        provenance=provenance,
        data=data,
        fixed={k.removeprefix("log10_"): (10.0 ** v if k.startswith("log10_") else v)
               for k, v in internal_fix.items()},
        optimizer_message=str(out.message),
        error_inflation=math.sqrt(inflation),
        raw=out,
    )


def _runs_z(residual) -> float | None:
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


def _information_criteria(out, weighted: bool) -> tuple[float, float]:
    """AIC and BIC of a fit, up to a constant shared by models of the same data.

    With stated uncertainties the log-likelihood is -chi^2/2, so AIC = chi^2 + 2k and
    BIC = chi^2 + k ln N; without them the variance is estimated too and the usual
    N ln(chi^2/N) forms apply (lmfit's). H. Akaike, IEEE Trans. Autom. Control 19, 716 (1974);
    G. Schwarz, Ann. Stat. 6, 461 (1978).
    """
    if not weighted:
        return float(out.aic), float(out.bic)
    k, n = int(out.nvarys), int(out.ndata)
    return float(out.chisqr + 2 * k), float(out.chisqr + k * math.log(n))


def _list_or_none(a):
    if a is None:
        return None
    return [None if not np.isfinite(x) else float(x) for x in a]


def _warnings(run, model, out, params, se, free, corr, public, values, g, tq, weighted,
              profile_upper, n_maj):
    w = []
    res = model.solve(values, warm=model._last_fermi is not None)
    major_ion = res.donor_ionized if run.carrier == "n" else res.acceptor_ionized
    ms = "D" if run.carrier == "n" else "A"
    mn = "A" if run.carrier == "n" else "D"
    tmin = float(np.min(model.temperature))
    i_min = int(np.argmin(model.temperature))
    n_min_value = 10.0 ** params[f"log10_N_{mn}"].value if model.compensated else 0.0
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
        upper = _pow10(profile_upper)
        if profile_upper >= params[f"log10_N_{mn}"].max - 1e-9:
            w.append(f"compensation not constrained: the data do not bound N_{mn} from above "
                     "within the allowed range; measure deeper into freeze-out")
        else:
            w.append(f"compensation only bounded: the data give N_{mn} < {upper:.2g} cm^-3 "
                     f"(95 %, profile of chi^2), so the compensation ratio is below "
                     f"{min(upper / n_maj, 1.0):.2g}; points deeper in freeze-out, where the "
                     f"carrier density falls below N_{mn}, would pin it")
    ln_maj = res.log_n if run.carrier == "n" else res.log_p
    ln_mnr = res.log_p if run.carrier == "n" else res.log_n
    mixed = ln_mnr - ln_maj > math.log(0.01)
    if mixed.any():
        t_mixed = model.temperature[mixed]
        worst = 100 * np.exp(np.max(ln_mnr - ln_maj))
        w.append(f"two-carrier conduction: from {t_mixed.min():g} K the model's minority "
                 f"carriers exceed 1 % of the majority (up to {worst:.2g} %); a single-carrier "
                 "Hall density is biased there by the unknown mobility ratio, even before the "
                 "Hall coefficient changes sign")
    runs_z = _runs_z(out.residual)
    if runs_z is not None and runs_z < -3.0:
        more = "--donors" if run.carrier == "n" else "--acceptors"
        w.append(f"the residuals are systematic (runs test z = {runs_z:.1f}: too few changes of "
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
