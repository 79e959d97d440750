"""Levenberg-Marquardt steps on a batch of parameter sets, one vectorized solve a step.

Every set of the batch steps at once: a step solves the trial points of the whole batch
(warm from each set's last solve) and takes their Jacobians from that same solve by implicit
differentiation (:meth:`freezeout.fitting.problem.Problem.batch_residuals_jacobian`), so an
accepted step already has the Jacobian of the next. The steps are those of K. Levenberg,
Q. Appl. Math. 2, 164 (1944) and D. W. Marquardt, J. SIAM 11, 431 (1963) (damping scaled
by the diagonal of J^T J), projected onto the bounds: a parameter at a bound that the
gradient pushes outward is held for that step. The global stage's descent
(:func:`freezeout.fitting.guess.descend`, with a loose stop) and the local fits
(:func:`polish`, with the tests of MINPACK's lmdif: relative reduction of chi^2 or relative
step below 1.49e-8, J. J. More et al., "User guide for MINPACK-1", ANL-80-74 (1980)) share
this loop.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from freezeout.fitting.local_fit import LocalFit, Params, covariance, with_errors
from freezeout.fitting.model import CarrierModel
from freezeout.fitting.problem import Problem

#: MINPACK's default tolerances on the relative reduction of chi^2 and the relative step
#: (sqrt of the double-precision epsilon; ANL-80-74, and scipy.optimize.leastsq's defaults).
FTOL = 1.49012e-8
XTOL = 1.49012e-8


@dataclass
class Batch:
    """The state of a batch of parameter sets being stepped.

    ``theta`` (rows, parameters), their residuals ``r`` (rows, points), Fermi levels, chi^2,
    Jacobians (rows, parameters, points), damping, solves made, and per row whether it is
    still stepping and whether it stopped on a convergence test.
    """

    theta: np.ndarray
    r: np.ndarray
    fermi: np.ndarray
    cost: np.ndarray
    jac: np.ndarray
    lam: np.ndarray
    nfev: np.ndarray
    active: np.ndarray
    converged: np.ndarray


@dataclass(frozen=True)
class Stop:
    """When a row stops.

    A step that lowers chi^2 by at most ``gain`` * chi^2 + ``floor``, a step below ``xtol``
    relative, or the damping above ``lam_cap`` with no step that lowers chi^2.
    """

    gain: float
    floor: float
    xtol: float
    lam_cap: float


#: The descent's stop (a loose one: the local fit polishes; project choice, no source).
DESCENT_STOP = Stop(gain=1e-4, floor=1e-12, xtol=0.0, lam_cap=1e5)
#: The local fit's stop (MINPACK's tests).
POLISH_STOP = Stop(gain=FTOL, floor=0.0, xtol=XTOL, lam_cap=1e10)


def batch_solver(problem: Problem, names: list[str], fixed: dict) -> Callable:
    """``solve(theta, init)`` of :func:`run_steps` for the free ``names`` of ``problem``.

    Residuals and Jacobian of the rows of ``theta`` from one solve
    (:meth:`freezeout.fitting.problem.Problem.batch_residuals_jacobian`); a row the model
    cannot be solved for gets an infinite chi^2, so that no step takes it.
    """

    def solve(th: np.ndarray, init):
        values = {k: th[:, j][:, None] for j, k in enumerate(names)} | fixed
        rr, ff, jac = problem.batch_residuals_jacobian(values, init, names, unsolved=np.inf)
        c = np.sum(rr**2, axis=1)
        return rr, ff, np.where(np.isfinite(c), c, np.inf), jac

    return solve


def admissible_map(model: CarrierModel, names: list[str], fixed: dict, lo: np.ndarray,
                   hi: np.ndarray) -> Callable[[np.ndarray], np.ndarray]:
    """Map rows of free parameters into their bounds, the compensation below the majority.

    Non-finite entries go to mid-bound; the compensating species is kept 2e-3 dex below the
    majority total (a run of the other carrier type is not this fit's).
    """
    major = [names.index(k) if k in names else None for k in model.major_concentration_names]
    cname = model.compensation_name
    comp = names.index(cname) if model.compensated and cname in names else None

    def admissible(th: np.ndarray) -> np.ndarray:
        th = np.clip(np.where(np.isfinite(th), th, 0.5 * (lo + hi)), lo, hi)
        if comp is not None:
            logs = [th[:, j] if j is not None else np.full(len(th), fixed[k])
                    for j, k in zip(major, model.major_concentration_names, strict=True)]
            cap = np.log10(np.sum(10.0 ** np.stack(logs), axis=0)) - 2e-3
            th[:, comp] = np.minimum(th[:, comp], cap)
        return th

    return admissible


def run_steps(solve: Callable, theta: np.ndarray, init, lo: np.ndarray, hi: np.ndarray,
              admissible: Callable[[np.ndarray], np.ndarray], stop: Stop, max_steps: int,
              after_step: Callable[[Batch, int], None] | None = None) -> Batch:
    """Step every row of ``theta`` until it stops or ``max_steps`` steps have been taken.

    ``solve(theta, init)`` returns (residuals, Fermi levels, chi^2, Jacobian) of the rows
    (infinite chi^2 where they cannot be solved); ``admissible`` maps trial points onto the
    allowed set; ``after_step(batch, step_no)`` may stop rows after each step.
    """
    r, fermi, cost, jac = solve(theta, init)
    rows, n_par = theta.shape
    b = Batch(theta, r, fermi, cost, jac, np.full(rows, 1e-3), np.ones(rows, dtype=int),
              np.isfinite(cost), np.zeros(rows, dtype=bool))
    eye = np.eye(n_par)[None]
    for step_no in range(max_steps if n_par else 0):
        idx = np.flatnonzero(b.active)
        if idx.size == 0:
            break
        th, j = b.theta[idx], b.jac[idx]
        grad = np.einsum("kpn,kn->kp", j, b.r[idx])
        held = (((th <= lo + 1e-9) & (grad > 0)) | ((th >= hi - 1e-9) & (grad < 0)))
        j = np.where(held[:, :, None], 0.0, j)
        grad = np.where(held, 0.0, grad)
        jtj = j @ j.transpose(0, 2, 1) + held[:, :, None] * eye
        diag = np.diagonal(jtj, axis1=1, axis2=2) + 1e-12
        damped = jtj + (b.lam[idx, None, None] * eye) * diag[:, None, :]
        try:
            step = -np.linalg.solve(damped, grad[..., None])[..., 0]
        except np.linalg.LinAlgError:
            step = -grad / diag
        trial = admissible(th + step)
        rt, ft, ct, jt = solve(trial, b.fermi[idx])
        b.nfev[idx] += 1
        better = ct < b.cost[idx]
        gain = b.cost[idx] - ct
        moved = np.linalg.norm(trial - th, axis=1)
        small = moved <= stop.xtol * (np.linalg.norm(th, axis=1) + stop.xtol)
        ok = (better & (gain <= stop.gain * ct + stop.floor)) | (small & (stop.xtol > 0))
        ok |= ~better & (b.lam[idx] > stop.lam_cap)
        ok |= better & (ct == 0.0)
        upd = idx[better]
        b.theta[upd], b.r[upd], b.fermi[upd] = trial[better], rt[better], ft[better]
        b.cost[upd], b.jac[upd] = ct[better], jt[better]
        b.lam[idx] = np.where(better, np.maximum(b.lam[idx] / 10.0, 1e-7), b.lam[idx] * 10.0)
        b.active[idx[ok]] = False
        b.converged[idx[ok]] = True
        if after_step is not None:
            after_step(b, step_no)
    return b


#: Steps over which a local fit's pace of descent is measured (project choice, no source).
PACE_STEPS = 10


def _out_of_reach(window: float, max_steps: int) -> Callable[[Batch, int], None]:
    """Stop the rows that cannot come within ``window`` of a converged row's chi^2.

    A row still stepping is stopped (not converged) when, at the pace of its last
    :data:`PACE_STEPS` steps, the steps left would not bring its chi^2 down to the lowest
    converged chi^2 plus ``window``: a slow valley far above a found minimum is neither the
    fit nor one of its alternatives.
    """
    history: list[np.ndarray] = []

    def check(b: Batch, step_no: int) -> None:
        history.append(b.cost.copy())
        done = b.converged & np.isfinite(b.cost)
        if not done.any() or len(history) <= PACE_STEPS:
            return
        pace = (history[-1 - PACE_STEPS] - b.cost) / PACE_STEPS
        left = max_steps - step_no - 1
        gap = b.cost - (float(np.min(b.cost[done])) + window)
        b.active &= ~(gap > pace * left)

    return check


def polish(problem: Problem, starts: list[Params], fermi: np.ndarray | None, max_nfev: int,
           scale_covar: bool, window: float | None = None) -> list[LocalFit]:
    """Local least-squares fits of several starts (same holds and bounds), stepped together.

    Each start's free parameters are fitted within their bounds (the compensating species
    kept below the majority total) until MINPACK's tests stop it (:data:`POLISH_STOP`) or
    ``max_nfev`` solves have been made; ``fermi`` holds each start's warm Fermi levels
    (rows, points) or None. With ``window`` (chi^2 units), a start that cannot come within
    it of a converged start's chi^2 is stopped early, not converged (:func:`_out_of_reach`).
    The covariance is (J J^T)^-1 at the end, times the reduced chi^2 when ``scale_covar``
    (unweighted fits).
    """
    first = starts[0]
    names = first.free
    fixed = {k: float(p.value) for k, p in first.items() if not p.vary}
    lo = np.array([first[n].min for n in names])
    hi = np.array([first[n].max for n in names])
    admissible = admissible_map(problem.model, names, fixed, lo, hi)
    solve = batch_solver(problem, names, fixed)
    theta = admissible(np.array([[st[n].value for n in names] for st in starts], dtype=float))
    steps = max(max_nfev - 1, 0)
    b = run_steps(solve, theta, fermi, lo, hi, admissible, POLISH_STOP, steps,
                  None if window is None else _out_of_reach(window, steps))
    out = []
    for i, st in enumerate(starts):
        params = st.copy()
        for k, v in zip(names, b.theta[i], strict=True):
            params[k].value = float(v)
        if not np.isfinite(b.cost[i]):
            out.append(LocalFit(params, np.full(problem.y.shape, 1e6), int(b.nfev[i]), False,
                                "the model could not be solved at the start", None))
            continue
        r = b.r[i].copy()
        covar = covariance(b.jac[i])
        nfree = r.size - len(names)
        if covar is not None and scale_covar and nfree > 0:
            covar = covar * (float(np.sum(r**2)) / nfree)  # times the reduced chi^2
        message = (f"converged: relative reduction of chi^2 or relative step below {FTOL:.3g}"
                   if b.converged[i] else f"not converged after {int(b.nfev[i])} model solves")
        out.append(LocalFit(with_errors(params, covar), r, int(b.nfev[i]),
                            bool(b.converged[i]), message, covar, fermi=b.fermi[i].copy()))
    return out
