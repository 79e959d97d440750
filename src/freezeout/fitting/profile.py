"""Profile-likelihood intervals of the fitted parameters, the net doping and the compensation.

The 95 % interval of a quantity x is the set where chi^2_p(x) - chi^2_min <= q u: chi^2_p(x)
is the least chi^2 with x held and every other free parameter refitted, q the 95 % quantile
of chi^2 with one degree of freedom (3.841; F(1, nu) when the variance is fitted, i.e.
unweighted), u the unit of chi^2 (the reduced chi^2 when the errors are inflated or fitted,
else 1). S. S. Wilks, Ann. Math. Statist. 9, 60 (1938); D. J. Venzon, S. H. Moolgavkar,
J. R. Stat. Soc. C 37, 87 (1988) (from memory).

A parameter is held directly. A derived quantity is held by reparametrization: one free
concentration is set from the others and the held value. For the net doping that is the
first free majority concentration, N_maj1 = N_net + N_min - (other N_maj), which stays
positive while the compensation runs down to its floor; for the compensation ratio K it is
the compensating concentration, N_min = K sum(N_maj) (below the floor of N_min it is the
floor: the model cannot tell those apart). Both are profiled in log10.

Every end of every quantity is searched at once (:meth:`Profiler.intervals`): each
vectorized neutrality solve carries one Levenberg-Marquardt step (the Jacobian from the same
solve by implicit differentiation, :mod:`freezeout.fitting.profile_rows`) of the refit under
way at every end, or the candidate starts of a new one; an
end whose refit has converged moves on to its next trial value
(:class:`freezeout.fitting.profile_search.EndSearch`), warm-started from its nearest solved
point moved along the valley, with that point's Fermi levels. Within the refits a free
compensating concentration moves linearly (see :class:`Profiler`). A search that has not
closed within :data:`_SOLVES` solves keeps its best estimate of the end.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from freezeout.fitting.profile_rows import complete_rows
from freezeout.fitting.profile_search import EndSearch

#: 95 % quantile of chi^2 with one degree of freedom (computed here with scipy.stats).
CHI2_95_1DOF = 3.841458820694124

_SOLVES = 50  # vectorized solves of one search at most
_STEPS = 8  # descent steps of one refit before it hands over (and resumes if need be)


@dataclass(frozen=True)
class ProfileInterval:
    """Ends of a profile interval in the coordinate profiled (log10 for concentrations).

    Attributes
    ----------
    lower, upper
        The ends; an open end is the limit of the range searched.
    lower_open, upper_open
        True when the data do not reach the threshold on that side within the range.
    """

    lower: float
    upper: float
    lower_open: bool
    upper_open: bool


@dataclass(frozen=True)
class _Target:
    """One profiled quantity: its kind, the free parameter its held value sets, its range."""

    key: str  # internal parameter name, "net" or "ratio"
    dep: int  # index (among the free parameters) of the parameter the held value sets
    centre: float  # value at the best fit
    se: float  # Wald standard error in the coordinate profiled (NaN when unknown)
    lo: float
    hi: float
    slope: np.ndarray  # d(free parameters)/dx at the best fit, from the covariance


class Profiler:
    """Profiles of one retained fit.

    Parameters
    ----------
    problem
        The residual problem (:class:`freezeout.fitting.problem.Problem`).
    out
        The retained local fit (:class:`freezeout.fitting.local_fit.LocalFit`).
    covar
        Covariance of the free parameters as reported (inflated), or None.
    unit
        Unit of chi^2 differences (1, or the reduced chi^2). [1]
    """

    def __init__(self, problem, out, covar: np.ndarray | None, unit: float) -> None:
        self.problem = problem
        model = problem.model
        self.free = list(out.var_names)
        p = out.params
        self.theta = np.array([p[n].value for n in self.free], dtype=float)
        self.lower = np.array([p[n].min for n in self.free], dtype=float)
        self.upper = np.array([p[n].max for n in self.free], dtype=float)
        # the refits move a free compensating concentration linearly, in units of its best
        # fit (z = N_min / N_min_fit): in log10 the way down to "no compensation" is a flat
        # valley many decades long, linearly it is one step
        self.linear = np.array([n == model.compensation_name and model.compensated
                                for n in self.free])
        self.fixed = {n: float(p[n].value) for n in p if n not in self.free}
        self.covar = covar
        self.unit = float(unit)
        self.major = list(model.major_concentration_names)
        self.minor = model.compensation_name if model.compensated else None
        warm = model.warm_fermi
        r, fermi = self.residuals(self.theta[None, :], None if warm is None else warm[None, :])
        self.fermi0 = fermi[0]
        self.chi2_min = float(np.sum(r[0] ** 2))

    # ---- batched residuals ------------------------------------------------------------
    def _values(self, theta: np.ndarray) -> dict:
        vals = {n: theta[:, i][:, None] for i, n in enumerate(self.free)}
        vals.update(self.fixed)
        return vals

    def residuals(self, theta: np.ndarray, init) -> tuple[np.ndarray, np.ndarray]:
        """Residuals (rows, points) and Fermi levels of parameter rows (free order)."""
        return self.problem.batch_residuals(self._values(theta), init)

    def _conc(self, theta: np.ndarray, name: str) -> np.ndarray:
        if name in self.free:
            return 10.0 ** theta[:, self.free.index(name)]
        return np.full(theta.shape[0], 10.0 ** self.fixed[name])

    # ---- targets ------------------------------------------------------------------------
    def derived(self, key: str, theta: np.ndarray) -> np.ndarray:
        """log10 of the net doping or of the compensation ratio of parameter rows."""
        s_maj = sum(self._conc(theta, n) for n in self.major)
        n_min = self._conc(theta, self.minor) if self.minor else np.zeros(theta.shape[0])
        with np.errstate(divide="ignore", invalid="ignore"):
            if key == "net":
                return np.log10(s_maj - n_min)
            return np.log10(n_min / s_maj)

    def _gradient(self, key: str) -> np.ndarray:
        """d x / d(free parameters) at the best fit."""
        n = len(self.free)
        if key in self.free:
            g = np.zeros(n)
            g[self.free.index(key)] = 1.0
            return g
        h = 1e-6
        g = np.zeros(n)
        for i in range(n):
            up, dn = self.theta.copy(), self.theta.copy()
            up[i] += h
            dn[i] -= h
            g[i] = (self.derived(key, up[None, :])[0] - self.derived(key, dn[None, :])[0]) / (
                2 * h)
        return g

    def target(self, key: str) -> _Target | None:
        """The profile target of a free parameter (internal name), "net" or "ratio".

        None when no free concentration can carry the held derived value.
        """
        if key in self.free:
            dep = self.free.index(key)
            centre, lo, hi = self.theta[dep], self.lower[dep], self.upper[dep]
        else:
            # the net doping sets a majority concentration (N_maj = N_net + N_min - others
            # stays positive while the compensation runs down to its floor); the ratio sets
            # the compensation (N_min = K sum N_maj)
            minor = [self.minor] if self.minor else []
            candidates = self.major + minor if key == "net" else minor + self.major
            free_c = [c for c in candidates if c in self.free]
            if not free_c or (key == "ratio" and not self.minor):
                return None
            dep = self.free.index(free_c[0])
            centre = float(self.derived(key, self.theta[None, :])[0])
            if not np.isfinite(centre):
                return None
            if key == "net":
                conc = [i for i, n in enumerate(self.free) if n.startswith("log10_")]
                lo = float(np.min(self.lower[conc]))
                hi = float(np.max(self.upper[conc])) + math.log10(len(self.major))
            else:
                s_hat = float(np.sum([self._conc(self.theta[None, :], n) for n in self.major]))
                floor = self.lower[self.free.index(self.minor)] if self.minor in self.free \
                    else -math.inf
                lo, hi = floor - math.log10(s_hat), math.log10(0.998)
        g = self._gradient(key)
        se, slope = math.nan, np.zeros(len(self.free))
        if self.covar is not None:
            var = float(g @ self.covar @ g)
            if np.isfinite(var) and var > 0:
                se = math.sqrt(var)
                slope = self.covar @ g / var
        return _Target(key, dep, float(centre), se, float(lo), float(hi), slope)

    def to_z(self, theta: np.ndarray, dep: int) -> np.ndarray:
        """Reduced rows (free minus ``dep``, the compensation linear) of parameter rows."""
        z = np.array(theta, dtype=float)
        lin = self.linear
        z[..., lin] = 10.0 ** (z[..., lin] - self.theta[lin])
        return np.delete(z, dep, axis=-1)

    def z_bounds(self, dep: int) -> tuple[np.ndarray, np.ndarray]:
        """Bounds of the reduced rows of a target whose held value sets ``dep``."""
        return self.to_z(self.lower, dep), self.to_z(self.upper, dep)

    def z_slope(self, t: _Target) -> np.ndarray:
        """d z / d x at the best fit, from the covariance slope of the target."""
        scale = np.where(self.linear, math.log(10.0), 1.0)
        return np.delete(t.slope * scale, t.dep)

    def _evaluate(self, work: list[tuple[_Job, np.ndarray]]) -> list[tuple]:
        """One vectorized solve for the reduced rows of every job, with their Jacobians.

        The Jacobian d r/d z is the residuals' own (implicit differentiation, from the same
        solve) through the chain rule of :func:`freezeout.fitting.profile_rows.complete_rows`.
        Returns per job the residuals (rows, points), Jacobians (rows, points, n_r), Fermi
        levels (rows, points) and bound violations (rows) of its rows.
        """
        parts = [complete_rows(self, job.end.target, z, job.x) for job, z in work]
        init = np.concatenate([np.repeat(job.fermi[None, :], len(z), axis=0)
                               for job, z in work])
        theta = np.concatenate([p.theta for p in parts])
        r, fermi, jac = self.problem.batch_residuals_jacobian(self._values(theta), init,
                                                              self.free)
        viol = np.concatenate([p.violation for p in parts])
        d_theta = np.concatenate([p.d_theta for p in parts])
        d_viol = np.concatenate([p.d_violation for p in parts])
        # a dependent pushed past its bounds counts like the type penalty of Problem
        sign = np.sign(r + 1e-300)
        r = r + 1e3 * viol[:, None] * sign
        jz = np.einsum("rnp,rnk->rpk", jac, d_theta) + 1e3 * sign[:, :, None] * d_viol[:, None, :]
        out, at = [], 0
        for _, z in work:
            m = len(z)
            out.append((r[at:at + m], jz[at:at + m], fermi[at:at + m], viol[at:at + m]))
            at += m
        return out

    @staticmethod
    def _steps(jobs: list[_Job]) -> tuple[np.ndarray, np.ndarray]:
        """Levenberg-Marquardt trial points of jobs and their Gauss-Newton decrements.

        One batch of linear solves for every job (all have the same number of reduced
        coordinates). A parameter on a bound that the descent pushes against is held there.
        The decrement g^T A^-1 g is the chi^2 still to gain near a minimum; a job whose
        system is singular gets its own point back and a decrement of 0.
        """
        z = np.stack([job.z for job in jobs])
        if z.shape[1] == 0:
            return z, np.zeros(len(jobs))
        jac = np.stack([job.jac for job in jobs])  # (jobs, points, n_r)
        res = np.stack([job.res for job in jobs])
        lo = np.stack([job.lo for job in jobs])
        hi = np.stack([job.hi for job in jobs])
        lam = np.array([job.lam for job in jobs])
        a = np.einsum("jpk,jpl->jkl", jac, jac)
        g = np.einsum("jpk,jp->jk", jac, res)
        held = ((z <= lo) & (g > 0)) | ((z >= hi) & (g < 0))
        g = np.where(held, 0.0, g)
        eye = np.eye(z.shape[1])
        a = np.where(held[:, :, None] | held[:, None, :], 0.0, a) + held[:, :, None] * eye
        diag = np.maximum(np.diagonal(a, axis1=1, axis2=2), 1e-300)
        damped = a + lam[:, None, None] * eye * diag[:, None, :]
        trial, gn = z.copy(), np.zeros(len(jobs))
        try:
            gn = np.einsum("jk,jk->j", g, np.linalg.solve(a, g[..., None])[..., 0])
            trial = np.clip(z - np.linalg.solve(damped, g[..., None])[..., 0], lo, hi)
        except np.linalg.LinAlgError:  # one singular system: each on its own
            for i in range(len(jobs)):
                try:
                    gn[i] = float(g[i] @ np.linalg.solve(a[i], g[i]))
                    trial[i] = np.clip(z[i] - np.linalg.solve(damped[i], g[i]), lo[i], hi[i])
                except np.linalg.LinAlgError:
                    trial[i], gn[i] = z[i], 0.0
        return trial, gn

    # ---- the search for the ends -------------------------------------------------------
    def intervals(self, keys: list[str], q: float, sides: tuple[float, ...] = (-1.0, 1.0)
                  ) -> dict[str, ProfileInterval]:
        """Profile intervals of the targets named (free internal names, "net", "ratio").

        Every end is searched at once: each vectorized solve carries one descent step of the
        refit under way at every end (or the candidate starts of a new one), so an end whose
        refit has converged moves on to its next trial value without waiting for the others.

        Parameters
        ----------
        keys
            The quantities; those without a target (see :meth:`target`) are left out.
        q
            Threshold of chi^2 - chi^2_min in units of :attr:`unit` (3.841 for 95 %). [1]
        sides
            The ends searched, -1 (lower) and/or +1 (upper); an end not searched is the
            centre.
        """
        tau = math.sqrt(q)
        targets = [t for t in (self.target(k) for k in keys) if t is not None]
        ends = []
        for t in targets:
            z0 = self.to_z(self.theta, t.dep)
            for side in (-1.0, 1.0):
                limit = (t.centre - t.lo) if side < 0 else (t.hi - t.centre)
                end = EndSearch(t, side, max(limit, 0.0), z0, self.fermi0, tau,
                                self.z_slope(t))
                if side not in sides:
                    end.finished, end.end = True, (0.0, False)
                ends.append(end)
        jobs = [self._job(e) for e in ends if not e.finished]
        for _ in range(_SOLVES):
            work = []
            stepping = [job for job in jobs if job.z is not None]
            trials, gns = self._steps(stepping) if stepping else ((), ())
            steps = {id(job): (trials[i], gns[i]) for i, job in enumerate(stepping)}
            for job in jobs:
                if job.z is not None:
                    trial, gn = steps[id(job)]
                    if not gn > 1e-3 * self.unit or job.lam > 1e8 or job.steps >= _STEPS:
                        # converged, stuck, or out of steps (resumed if above threshold)
                        job = self._close(job, converged=job.steps < _STEPS)
                        if job is None:
                            continue
                    else:
                        job.trial = trial
                        work.append((job, trial[None, :]))
                        continue
                work.append((job, job.starts))
            jobs = [job for job, _ in work]
            if not work:
                break
            for (job, _), (res, jac, fermi, viol) in zip(work, self._evaluate(work),
                                                         strict=True):
                chi2 = np.sum(res**2, axis=1)
                k = int(np.argmin(chi2))
                if job.z is None or chi2[k] < job.chi2:
                    if job.z is not None:
                        job.lam = max(job.lam / 4.0, 1e-9)
                    job.z = job.starts[k] if job.z is None else job.trial
                    job.res, job.jac, job.fermi, job.viol, job.chi2 = (
                        res[k], jac[k], fermi[k], viol[k], float(chi2[k]))
                else:
                    job.lam *= 8.0
                if job.trial is not None:
                    job.steps += 1
        out = {}
        for t in targets:
            lo_end, hi_end = (e for e in ends if e.target is t)
            d_lo, open_lo = lo_end.result()
            d_hi, open_hi = hi_end.result()
            out[t.key] = ProfileInterval(t.centre - d_lo, t.centre + d_hi, open_lo, open_hi)
        return out

    def _job(self, end: EndSearch) -> _Job:
        """The refit of an end's next trial value."""
        x, starts, fermi = end.job()
        t = end.target
        lo, hi = self.z_bounds(t.dep)
        return _Job(end, x, np.clip(starts, lo, hi), fermi, lo, hi)

    def _close(self, job: _Job, converged: bool) -> _Job | None:
        """Hand a finished refit to its end; the end's next refit, or None when it is done."""
        e = job.end
        root = math.sqrt(max(job.chi2 - self.chi2_min, 0.0) / self.unit)
        if converged and root > 2.0 * e.tau and e.first is None:
            # far above the threshold: perhaps a side valley the moved start fell into; once
            # more from the farthest point below the threshold, unmoved, and keep the better
            e.first = (job.chi2, job.z, job.fermi, job.viol)
            near = e.inner[-1]
            return _Job(e, job.x, near[2][None, :], near[3], job.lo, job.hi)
        chi2, z, fermi, viol = job.chi2, job.z, job.fermi, job.viol
        if converged and e.first is not None and e.first[0] < chi2:
            chi2, z, fermi, viol = e.first
            root = math.sqrt(max(chi2 - self.chi2_min, 0.0) / self.unit)
        if converged or root < e.tau:
            e.record(e.trial, root, z, fermi, viol > 1e-6)
        else:  # not yet at the bottom: go on from there
            e.resume = (job.z, job.fermi)
        return None if e.finished else self._job(e)


class _Job:
    """One refit under way: a held value, its candidate starts, and the descent state."""

    def __init__(self, end: EndSearch, x: float, starts: np.ndarray, fermi: np.ndarray,
                 lo: np.ndarray, hi: np.ndarray) -> None:
        self.end, self.x, self.starts, self.fermi = end, x, starts, fermi
        self.lo, self.hi = lo, hi
        self.z: np.ndarray | None = None  # current point (None until the starts are solved)
        self.trial: np.ndarray | None = None
        self.res = self.jac = None
        self.chi2, self.viol, self.lam, self.steps = math.inf, 0.0, 1e-3, 0
