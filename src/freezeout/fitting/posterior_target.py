"""The log-posterior of a density fit, on many parameter sets at once.

Likelihood, from the fit's own residuals in ln(density) (:mod:`freezeout.fitting.problem`):

* with stated per-point uncertainties, ln L = -chi^2 / (2 s), s the fit's variance
  inflation (its reduced chi^2 when that exceeds 1, else 1: the Birge ratio the Wald and
  profile intervals use);
* without them, the variance is unknown and integrated out under a 1/sigma prior:
  ln L = -(N/2) ln(SSR), SSR the sum of squared residuals, N the points used.

Priors (project choice, no source): flat in log10 of every concentration within
:data:`~freezeout.fitting.parameters.LOG10_CONCENTRATION_BOUNDS` and flat in every level
energy within 1e-4 eV .. 0.9 E_g(T_min), the fit's own bounds (the user's ``--bound`` where
given); the compensating species below the majority total (the run's carrier type); with
several majority levels, their energies in the order the fit found them (the levels are
otherwise interchangeable and the chain would swap their labels). Held parameters stay held.
"""

from __future__ import annotations

import math

import numpy as np

from freezeout.fitting.model import CarrierModel
from freezeout.fitting.parameters import LOG10_CONCENTRATION_BOUNDS, to_internal
from freezeout.fitting.problem import Problem
from freezeout.fitting.result import FitResult
from freezeout.records.run import RunData

_LN10 = math.log(10.0)


class PosteriorTarget:
    """The log-posterior of a fit on many parameter sets at once (emcee ``vectorize``).

    Rebuilds the fit's residual problem: a :class:`CarrierModel` on the temperatures of the
    points used, ln(density) and sigma = density_err/density there (1 unweighted), with the
    run's temperature uncertainties added as the fit adds them. Rows are internal values of
    the free parameters, in the order of :attr:`names`.
    """

    def __init__(self, result: FitResult, run: RunData | None) -> None:
        used = np.asarray(result.data.used, dtype=bool)
        majors = [lv for lv in result.levels if lv.energy is not None]
        compensated = len(majors) < len(result.levels)
        t = np.asarray(result.data.temperature, dtype=float)[used]
        model = CarrierModel(result.material, t, result.carrier, len(majors), compensated,
                             result.statistics_model, majors[0].degeneracy)
        density = np.asarray(result.data.density, dtype=float)[used]
        if result.weighted:
            sigma = np.asarray(result.data.density_err, dtype=float)[used] / density
        else:
            sigma = np.ones(density.size)
        self.problem = Problem(model, np.log(density), sigma)
        gap = float(result.material.band_gap(float(np.min(t))))
        self.best = {}
        for lv in result.levels:
            self.best[f"log10_N_{lv.name}"] = math.log10(lv.concentration.value)
            if lv.energy is not None:
                self.best[f"E_{lv.name}"] = float(lv.energy.value)
        if (run is not None and result.weighted and run.temperature_err is not None
                and np.any(np.asarray(run.temperature_err)[used] > 0)):
            # the fit's effective variance (Problem.include_temperature) at its best values
            self.problem.include_temperature(self.best, sigma,
                                             np.asarray(run.temperature_err)[used])
        self.held = dict(to_internal(k, v, gap) for k, v in result.fixed.items())
        user = (result.provenance.get("options") or {}).get("bounds") or {}
        user = {to_internal(k, lo, gap)[0]: (to_internal(k, lo, gap)[1],
                                             to_internal(k, hi, gap)[1])
                for k, (lo, hi) in user.items()}
        self.names = [s.internal for s in model.specs if s.internal not in self.held]
        self.bounds = np.array([user.get(n, LOG10_CONCENTRATION_BOUNDS
                                         if n.startswith("log10_") else (1e-4, 0.9 * gap))
                                for n in self.names], dtype=float)
        self.major = list(model.major_concentration_names)
        self.minor = model.compensation_name if compensated else None
        energies = [f"E_{lv.name}" for lv in majors]
        self.energy_order = sorted(energies, key=lambda e: self.best[e])
        self.weighted = result.weighted
        self.unit = float(result.error_inflation) ** 2 if result.weighted else 1.0
        self.n_points = int(density.size)
        _, self.fermi = self.problem.batch_residuals(
            {k: np.array([[v]]) for k, v in self.best.items()})

    def values(self, coords: np.ndarray) -> dict:
        """Internal name -> (rows, 1) column (held values as numbers)."""
        out = {n: coords[:, j:j + 1] for j, n in enumerate(self.names)}
        out.update({k: float(v) for k, v in self.held.items()})
        return out

    def in_prior(self, coords: np.ndarray) -> np.ndarray:
        """True for the rows inside the prior's support."""
        ok = np.all((coords > self.bounds[:, 0]) & (coords < self.bounds[:, 1]), axis=1)
        vals = self.values(coords)
        col = {k: np.broadcast_to(np.asarray(v, dtype=float).reshape(-1),
                                  coords.shape[:1]) for k, v in vals.items()}
        for lo, hi in zip(self.energy_order, self.energy_order[1:], strict=False):
            ok &= col[lo] < col[hi]
        if self.minor is not None:
            major = np.log10(sum(10.0 ** col[k] for k in self.major))
            ok &= col[self.minor] - major + 1e-3 <= 0.0  # the fit's type rule (problem.py)
        return ok

    def __call__(self, coords: np.ndarray) -> np.ndarray:
        """ln posterior (up to a constant) of each row of ``coords``; -inf outside."""
        coords = np.atleast_2d(np.asarray(coords, dtype=float))
        out = np.full(coords.shape[0], -np.inf)
        ok = self.in_prior(coords)
        if not np.any(ok):
            return out
        inside = coords[ok]
        init = np.broadcast_to(self.fermi, (inside.shape[0], self.fermi.shape[1]))
        r, _ = self.problem.batch_residuals(self.values(inside), init)
        ssr = np.sum(r * r, axis=1)
        bad = np.any(np.abs(r) >= 1e6, axis=1) | ~np.isfinite(ssr)
        if self.weighted:
            ln_l = -0.5 * ssr / self.unit
        else:
            ln_l = -0.5 * self.n_points * np.log(np.maximum(ssr, 1e-300))
        out[ok] = np.where(bad, -np.inf, ln_l)
        return out

    def ball(self, result: FitResult, walkers: int, rng: np.random.Generator) -> np.ndarray:
        """Walkers in a small ball (a tenth of the fit's standard errors) around the fit."""
        se = {}
        for lv in result.levels:
            c = lv.concentration
            se[f"log10_N_{lv.name}"] = c.stderr / (c.value * _LN10) if c.value > 0 else math.nan
            if lv.energy is not None:
                se[f"E_{lv.name}"] = lv.energy.stderr
        centre = np.array([self.best[n] for n in self.names])
        scale = np.array([0.1 * se[n] if np.isfinite(se[n]) and se[n] > 0 else
                          (1e-3 if n.startswith("log10_") else 1e-4) for n in self.names])
        lo, hi = self.bounds[:, 0], self.bounds[:, 1]
        centre = np.clip(centre, lo + 1e-9 * (hi - lo), hi - 1e-9 * (hi - lo))
        p0 = centre + scale * rng.standard_normal((walkers, centre.size))
        for _ in range(20):  # redraw the walkers that start outside the support
            bad = ~np.isfinite(self(p0))
            if not bad.any():
                return p0
            p0[bad] = centre + 0.5 * scale * rng.standard_normal((int(bad.sum()), centre.size))
            scale = 0.5 * scale
        p0[~np.isfinite(self(p0))] = centre
        return p0
