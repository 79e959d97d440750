"""The residual problem of one fit: residuals in ln(density), batch costs, chi^2 profiles.

Residuals are ln(model density) - ln(measured density), divided by the uncertainty of
ln(density) (= density_err/density) when the run gives per-point uncertainties, else by 1.
"""

from __future__ import annotations

import math

import numpy as np

from freezeout.fitting.jacobian import majority_log_jacobian
from freezeout.fitting.model import CarrierModel
from freezeout.fitting.profile import Profiler
from freezeout.physics.neutrality import BandState, solve_levels

#: Largest magnitude kept in a residual Jacobian (project choice, no source): where the
#: neutrality residual is nearly flat in E_F (a level at the band edge, a far start) implicit
#: differentiation gives derivatives past 1e170, which would overflow J^T J; a forward
#: difference there gives a large finite slope, and so does this bound. [1 per unit]
JACOBIAN_BOUND = 1e10


def bounded_jacobian(jac: np.ndarray) -> np.ndarray:
    """``jac`` with every entry clipped to +-:data:`JACOBIAN_BOUND`."""
    return np.clip(jac, -JACOBIAN_BOUND, JACOBIAN_BOUND)


class Problem:
    """Residuals and bookkeeping for one fit.

    Parameters
    ----------
    model
        The model on the temperatures of the points used.
    y
        ln of the measured densities (cm^-3) of those points. [1]
    sigma
        Standard uncertainty of each ``y`` (1 for an unweighted fit). [1]
    """

    def __init__(self, model: CarrierModel, y: np.ndarray, sigma: np.ndarray) -> None:
        self.model = model
        self.y = y
        self.sigma = sigma
        self._major = list(model.major_concentration_names)
        self._minor = model.compensation_name if model.compensated else None

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

    def residual(self, params) -> np.ndarray:
        """Weighted residuals at a fit's parameters (1e6 where the model cannot be solved).

        ``params`` is a :class:`freezeout.fitting.local_fit.Params`.
        """
        values = params.valuesdict()
        try:
            ln_model = self.model.log_density(values)
        except (RuntimeError, ValueError, FloatingPointError):
            return np.full(self.y.shape, 1e6)
        return self.guarded((ln_model - self.y) / self.sigma, values)

    def guarded(self, r, values: dict) -> np.ndarray:
        """Residuals ``r`` of ``values`` with the carrier-type penalty added, non-finite -> 1e6.

        Shared by every least-squares problem built on this model (the density fit, the
        joint and the two-carrier fits): a parameter set of the wrong carrier type is pushed
        back by 1e3 times its penalty on every residual, away from zero.
        """
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
            out.append(model.majority_log(model.solve(values, bands=bands, warm=False)))
        return (out[0] - out[1]) / (2.0 * h)

    def include_temperature(self, values: dict, base_sigma: np.ndarray,
                            temperature_err: np.ndarray) -> None:
        """Effective variance sigma^2 + (d ln n/dT u_T)^2, the slope from the model at values.

        The uncertainty of the independent variable is carried into the residual by the
        law of propagation of uncertainty (ISO/IEC Guide 98-3 (GUM), 5.1.2) applied to the
        model's temperature dependence: the effective-variance method of least squares
        (J. Orear, "Least squares when both variables have uncertainties", Am. J. Phys. 50,
        912 (1982); from memory).
        """
        slope = self.log_slope(values)
        self.sigma = np.sqrt(base_sigma**2 + (slope * temperature_err) ** 2)

    def batch_cost(self, starts: list[dict]) -> tuple[np.ndarray, np.ndarray]:
        """Sum of squared residuals for many starts in one vectorized solve.

        Returns the cost of each start (inf where not finite) and the Fermi levels of the
        solve, one row per start (each a warm start for a local fit of that start).
        """
        names = starts[0].keys()
        batch = {k: np.array([s[k] for s in starts])[:, None] for k in names}
        res = self.model.solve(batch, bands=self.model.row_bands, warm=False)
        r = (self.model.majority_log(res) - self.y[None, :]) / self.sigma[None, :]
        cost = np.sum(r * r, axis=1)
        return np.where(np.isfinite(cost), cost, np.inf), res.fermi_level

    def batch_residuals(self, values: dict, init=None) -> tuple[np.ndarray, np.ndarray]:
        """Weighted residuals of many parameter sets in one vectorized solve.

        Parameters
        ----------
        values
            Internal name -> column of values (rows, 1) or one number for every row.
        init
            Starting Fermi levels E_F - E_v, one row per set, or None (cold). [eV]

        Returns
        -------
        tuple
            Residuals (rows, points), with the type penalty of :meth:`residual` and 1e6
            where not finite, and the Fermi levels of the solve (rows, points). [1], [eV]
        """
        r, fermi, _ = self._batch(values, init, None)
        return r, fermi

    def batch_residuals_jacobian(self, values: dict, init, names: list[str], *,
                                 unsolved: float = 1e6
                                 ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """:meth:`batch_residuals` with their Jacobian by the internal ``names``.

        The Jacobian (rows, names, points) comes from the same solve by implicit
        differentiation (:func:`freezeout.fitting.jacobian.majority_log_jacobian`), with the
        type penalty's own slope where it is active; zero where the residual is not finite.
        ``unsolved`` is the residual given where the model cannot be solved (inf for a
        Levenberg-Marquardt step to refuse that point outright).
        """
        return self._batch(values, init, names, unsolved)

    def _batch(self, values: dict, init, names: list[str] | None, unsolved: float = 1e6):
        """Residuals, Fermi levels and (with ``names``) the Jacobian of a batch."""
        model = self.model
        t = model.temperature
        try:
            with np.errstate(all="ignore"):
                donors, acceptors = model.levels(values)
                res = solve_levels(model.row_bands, donors, acceptors, model.statistics, init)
        except (RuntimeError, ValueError, FloatingPointError):
            rows = max((np.shape(v)[0] for v in values.values() if np.ndim(v)), default=1)
            if rows == 1:
                jac = None if names is None else np.zeros((1, len(names), t.size))
                return np.full((1, t.size), unsolved), np.zeros((1, t.size)), jac
            # one set the solver cannot take must not spoil the others: one at a time
            parts = [self._batch(
                {k: (v[i:i + 1] if np.ndim(v) else v) for k, v in values.items()},
                None if init is None else np.asarray(init)[i:i + 1], names, unsolved)
                for i in range(rows)]
            return (np.concatenate([p[0] for p in parts]),
                    np.concatenate([p[1] for p in parts]),
                    None if names is None else np.concatenate([p[2] for p in parts]))
        jac = None
        with np.errstate(invalid="ignore", over="ignore"):
            r = (model.majority_log(res) - self.y[None, :]) / self.sigma[None, :]
            if names is not None:
                jac = majority_log_jacobian(model, model.row_bands, values, res, names,
                                            (donors, acceptors))
                jac = jac / self.sigma
            if self._minor is not None:
                conc = {k: 10.0 ** np.asarray(values[k], dtype=float) for k in self._major}
                total = sum(conc.values())
                excess = np.asarray(values[self._minor]) - np.log10(total) + 1e-3
                sign = np.sign(r + 1e-300)
                if jac is not None and np.any(excess > 0):
                    # the penalty's slope: d excess / d log10 N_min = 1, / d log10 N_k =
                    # -N_k / sum N_maj, on every residual with its sign
                    active = np.broadcast_to(excess > 0, (r.shape[0], 1))
                    d_excess = {self._minor: 1.0} | {k: -c / total for k, c in conc.items()}
                    for j, k in enumerate(names):
                        if k in d_excess:
                            slope = np.broadcast_to(d_excess[k], (r.shape[0], 1))
                            jac[:, j, :] += np.where(active, 1e3 * slope * sign, 0.0)
                r = r + 1e3 * np.maximum(excess, 0.0) * sign
        ok = np.isfinite(r)
        if jac is not None:
            jac = bounded_jacobian(np.where(ok[:, None, :] & np.isfinite(jac), jac, 0.0))
        return np.where(ok, r, unsolved), res.fermi_level, jac


def profile_upper(problem: Problem, best, name: str, weighted: bool) -> float:
    """Upper 95 % limit of one log10 concentration by profiling chi^2.

    The parameter is held at trial values above its best fit while the others are refitted;
    the limit is where chi^2 rises by 2.71 (a one-sided 95 % limit for one parameter; the
    rise is scaled by the reduced chi^2 when the fit is unweighted or when it exceeds 1,
    as the standard errors are). Returns the upper bound of the parameter when the data
    never exclude larger values. The refits are those of
    :class:`freezeout.fitting.profile.Profiler`, warm-started along the profile.
    """
    # in units of the residual variance: the stated one (weighted fit, inflated when the
    # reduced chi^2 exceeds 1) or the fitted one (unweighted)
    scale = max(best.redchi, 1.0) if weighted else max(best.redchi, 1e-300)
    covar = None
    if best.covar is not None:
        covar = best.covar * (scale if weighted else 1.0)
    profiler = Profiler(problem, best, covar, scale)
    return profiler.intervals([name], 2.71, sides=(1.0,))[name].upper
