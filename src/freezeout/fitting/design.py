"""Optimal design of a run's temperatures: Fisher information and an exchange algorithm.

The measured quantity is ln n(T) with a relative error sigma per point (a standard
deviation of ln n), so the Fisher information of the fit's internal parameters theta
(log10 concentrations, energies in eV) for a set of temperatures T_i is

    F = J^T J / sigma^2,   J_ij = d ln n(T_i) / d theta_j,

and F^-1 is the covariance a least-squares fit of such a run would report (the asymptotic,
linearised covariance; common practice, no source). The sensitivities come from central
differences of the carrier model in one batch solve (:func:`log_density_sensitivities`).

Only some parameters may matter (the *targets*); the others are estimated too, so the
information about the targets is the Schur complement F_tt - F_to F_oo^-1 F_ot, whose
inverse is the target block of F^-1. The criteria (V. V. Fedorov, Theory of Optimal
Experiments, Academic Press 1972, ch. 2; from memory):

* ``D``: maximise det of that Schur complement (minimise the volume of the targets' joint
  confidence ellipsoid); invariant to the units of the parameters.
* ``A``: minimise the trace of the target block of F^-1. The parameters are first scaled
  by their standard errors under a reference plan (project choice, no source: the raw trace
  would add variances in log10 cm^-3 and eV), so the value is the sum over the targets of
  (variance / reference variance), and the reference plan scores the number of targets.

:func:`exchange_design` picks N distinct temperatures from a candidate grid (no repeats,
project choice: a run measures each temperature once) by Fedorov's exchange: from a start
plan, swap the one plan point and one candidate whose exchange improves the criterion most,
until no swap improves it.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from freezeout.fitting.model import CarrierModel

#: Criteria understood by :func:`criterion_values`.
CRITERIA = ("D", "A")

#: Largest number of exchange steps (each one improves the criterion; project choice).
MAX_EXCHANGES = 500

#: Relative improvement below which an exchange is not made (project choice). [1]
IMPROVEMENT_TOLERANCE = 1e-9


def log_density_sensitivities(model: CarrierModel, values: dict[str, float],
                              free: list[str] | tuple[str, ...], rel_step: float = 1e-5
                              ) -> tuple[np.ndarray, np.ndarray]:
    """ln n on the model's grid and its derivatives by the free internal parameters.

    Central differences of every free parameter in one batch solve (2 p rows), warm-started
    from the solution at ``values``, the same pattern as the joint fit's Jacobian.

    Parameters
    ----------
    model
        The carrier model on the temperatures wanted. [K]
    values
        Internal parameter values (``log10_N_D1``, ``E_D1``, ...) of every model parameter.
    free
        Internal names of the parameters to differentiate by, in column order.
    rel_step
        Step relative to max(|theta_j|, 0.01).

    Returns
    -------
    (ln_n, jac)
        ln of the majority-carrier density (m,) [ln cm^-3] and d ln n / d theta (m, p).
    """
    ln_n = model.log_density(values, warm=True)
    x0 = np.array([float(values[k]) for k in free])
    h = rel_step * np.maximum(np.abs(x0), 1e-2)
    rows = np.concatenate([x0 + np.diag(h), x0 - np.diag(h)])
    batch = {**{k: float(v) for k, v in values.items()},
             **{k: rows[:, i:i + 1] for i, k in enumerate(free)}}
    ln_rows = model.majority_log(model.solve_rows(batch))
    p = x0.size
    jac = ((ln_rows[:p] - ln_rows[p:]) / (2.0 * h[:, None])).T
    if not (np.all(np.isfinite(jac)) and np.all(np.isfinite(ln_n))):
        raise FloatingPointError("the carrier model gave a non-finite density or sensitivity")
    return ln_n, jac


def fisher_information(jac: np.ndarray, sigma: float) -> np.ndarray:
    """F = J^T J / sigma^2 for rows of d ln n / d theta and a relative error ``sigma``. [1]"""
    j = np.asarray(jac, dtype=float)
    return j.T @ j / float(sigma) ** 2


def covariance(fisher: np.ndarray) -> np.ndarray:
    """F^-1, with inf on the diagonal when F is singular (a parameter the plan cannot set)."""
    try:
        cov = np.linalg.inv(fisher)
    except np.linalg.LinAlgError:
        cov = np.full_like(fisher, np.nan)
        np.fill_diagonal(cov, np.inf)
        return cov
    if not np.all(np.isfinite(cov)) or np.any(np.diag(cov) <= 0):
        cov = np.full_like(fisher, np.nan)
        np.fill_diagonal(cov, np.inf)
    return cov


def criterion_values(fisher: np.ndarray, targets: np.ndarray, criterion: str) -> np.ndarray:
    """Loss of a stack of Fisher matrices (..., p, p): smaller is better.

    ``D``: -log det of the targets' Schur complement, = log det F_oo - log det F (the
    others' block ``oo``). ``A``: trace of the target block of F^-1. A singular matrix
    scores +inf.
    """
    f = np.asarray(fisher, dtype=float)
    t = np.asarray(targets, dtype=int)
    p = f.shape[-1]
    others = np.setdiff1d(np.arange(p), t)
    if criterion == "D":
        sign, logdet = np.linalg.slogdet(f)
        if others.size:
            s_o, ld_o = np.linalg.slogdet(f[..., others[:, None], others[None, :]])
        else:
            s_o, ld_o = np.ones_like(sign), np.zeros_like(logdet)
        with np.errstate(invalid="ignore"):  # a singular matrix: -inf - -inf
            loss = ld_o - logdet
        bad = (sign <= 0) | (s_o <= 0) | ~np.isfinite(loss)
        return np.where(bad, np.inf, loss)
    if criterion == "A":
        try:
            inv = np.linalg.inv(f)
        except np.linalg.LinAlgError:  # one singular matrix in the stack: one at a time
            flat = f.reshape(-1, p, p)
            inv = np.stack([covariance(x) for x in flat]).reshape(f.shape)
        diag = np.diagonal(inv, axis1=-2, axis2=-1)[..., t]
        with np.errstate(invalid="ignore"):
            loss = diag.sum(axis=-1)
        bad = np.any(~(diag > 0), axis=-1) | ~np.isfinite(loss)
        return np.where(bad, np.inf, loss)
    raise ValueError(f"criterion must be one of {CRITERIA}, got {criterion!r}")


@dataclass(frozen=True)
class Design:
    """A plan of N distinct candidate temperatures chosen by the exchange algorithm.

    Attributes
    ----------
    indices
        Candidate indices of the plan, ascending in candidate order.
    criterion
        ``"D"`` or ``"A"``.
    loss, start_loss
        Criterion loss (smaller is better, :func:`criterion_values`) of the plan and of the
        start plan, in the scaled parameters. [1]
    exchanges
        Number of exchanges made.
    converged
        True when no exchange improved the plan (False: stopped at :data:`MAX_EXCHANGES`).
    """

    indices: tuple[int, ...]
    criterion: str
    loss: float
    start_loss: float
    exchanges: int
    converged: bool
    n_targets: int

    @property
    def efficiency(self) -> float:
        """Criterion gain over the start plan, as a ratio of equivalent plan sizes. [1]

        D: (det ratio)^(1/k) for k targets; A: start loss / loss. Both say how many times
        more points the start plan would need to match (for a linear model).
        """
        if not (np.isfinite(self.loss) and np.isfinite(self.start_loss)):
            return float("nan")
        if self.criterion == "D":
            return float(np.exp((self.start_loss - self.loss) / max(self.n_targets, 1)))
        return float(self.start_loss / self.loss)

    def to_dict(self) -> dict:
        """JSON form."""
        eff = self.efficiency
        return {"criterion": self.criterion, "candidate_indices": list(self.indices),
                "loss": float(self.loss), "start_loss": float(self.start_loss),
                "efficiency_vs_start": None if not np.isfinite(eff) else eff,
                "exchanges": self.exchanges, "converged": self.converged,
                "repeats": False}


def exchange_design(jac: np.ndarray, start: list[int] | np.ndarray, targets,
                    criterion: str = "D", scale: np.ndarray | None = None) -> Design:
    """Fedorov exchange over candidate rows of d ln n / d theta (no repeated candidate).

    Parameters
    ----------
    jac
        Sensitivities on the candidate grid (m, p); the common error scale drops out.
    start
        Candidate indices of the start plan (distinct; their count is the plan size N).
    targets
        Column indices of the target parameters.
    criterion
        ``"D"`` or ``"A"``.
    scale
        Per-parameter scale s (p,): the parameters are measured in units of s (the columns
        multiplied by s), e.g. the reference plan's standard errors; None for no scaling.

    Returns
    -------
    Design
    """
    if criterion not in CRITERIA:
        raise ValueError(f"criterion must be one of {CRITERIA}, got {criterion!r}")
    j = np.asarray(jac, dtype=float)
    if scale is not None:
        j = j * np.asarray(scale, dtype=float)[None, :]
    t = np.asarray(targets, dtype=int)
    plan = np.array(sorted(set(int(i) for i in start)), dtype=int)
    if plan.size != len(start):
        raise ValueError("the start plan repeats a candidate")
    m = j.shape[0]
    outer = j[:, :, None] * j[:, None, :]  # (m, p, p) rank-one terms
    fisher = outer[plan].sum(axis=0)
    loss = float(criterion_values(fisher, t, criterion))
    start_loss, exchanges, converged = loss, 0, False
    for _ in range(MAX_EXCHANGES):
        out = np.setdiff1d(np.arange(m), plan)
        # every swap (plan point i out, candidate c in) at once: F - j_i j_i^T + j_c j_c^T
        trial = fisher[None, None] - outer[plan][:, None] + outer[out][None, :]
        losses = criterion_values(trial, t, criterion)
        k = np.unravel_index(int(np.argmin(losses)), losses.shape)
        best = float(losses[k])
        if not best < loss - IMPROVEMENT_TOLERANCE * max(abs(loss), 1.0):
            converged = True
            break
        plan = np.sort(np.concatenate([np.delete(plan, k[0]), [out[k[1]]]]))
        fisher = outer[plan].sum(axis=0)  # re-summed: no drift from repeated updates
        loss = float(criterion_values(fisher, t, criterion))
        exchanges += 1
    return Design(tuple(int(i) for i in plan), criterion, loss, start_loss, exchanges,
                  converged, int(t.size))
