"""The records of one local fit: its parameters (value, bounds, hold, standard error) and result.

The density fit's local least squares (:func:`freezeout.fitting.batch_lm.polish`) returns a
:class:`LocalFit`: the parameters at the end, the residuals there, chi^2 and the counts it
is judged by, the covariance of the free parameters and whether it converged. The names of
its fields follow the usual ones of least-squares results (chisqr, redchi, nfree, covar,
aic, bic), so that the summary, the profiles and the warnings read one kind of result.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np


@dataclass
class Param:
    """One fit parameter of a local fit.

    Attributes
    ----------
    value
        Its value (internal units: log10 cm^-3 or eV).
    min, max
        Its bounds (internal units).
    vary
        False when the parameter is held at ``value``.
    stderr
        Its standard error from the covariance (internal units), or None when the
        covariance could not be computed or the parameter is held.
    """

    value: float
    min: float = -math.inf
    max: float = math.inf
    vary: bool = True
    stderr: float | None = None


class Params(dict):
    """Parameters of a local fit by internal name, in the model's order."""

    def valuesdict(self) -> dict[str, float]:
        """Internal name -> value, every parameter (free and held)."""
        return {k: p.value for k, p in self.items()}

    def copy(self) -> Params:
        """An independent copy (the :class:`Param` records copied too)."""
        return Params({k: replace(p) for k, p in self.items()})

    @property
    def free(self) -> list[str]:
        """The names of the free parameters, in order."""
        return [k for k, p in self.items() if p.vary]


@dataclass
class LocalFit:
    """The end of one local least-squares fit.

    Attributes
    ----------
    params
        The parameters at the end (standard errors set when the covariance exists).
    residual
        The weighted residuals there. [1]
    nfev
        Model solves made (each gives the residuals and their Jacobian).
    success
        True when a convergence test was met (see ``message``).
    message
        How the fit ended.
    covar
        Covariance of the free parameters (in ``var_names`` order), scaled by the reduced
        chi^2 when the fit is unweighted; None when the Jacobian is rank-deficient.
    fermi
        The Fermi levels E_F - E_v of the last solve at the end (a warm start), or None. [eV]
    """

    params: Params
    residual: np.ndarray
    nfev: int
    success: bool
    message: str
    covar: np.ndarray | None
    fermi: np.ndarray | None = None

    @property
    def var_names(self) -> list[str]:
        """The free parameters, in the order of the covariance."""
        return self.params.free

    @property
    def chisqr(self) -> float:
        """Sum of squared residuals. [1]"""
        return float(np.sum(self.residual**2))

    @property
    def ndata(self) -> int:
        """Number of residuals."""
        return int(self.residual.size)

    @property
    def nvarys(self) -> int:
        """Number of free parameters."""
        return len(self.var_names)

    @property
    def nfree(self) -> int:
        """Degrees of freedom, residuals less free parameters."""
        return self.ndata - self.nvarys

    @property
    def redchi(self) -> float:
        """chi^2 per degree of freedom (nan with none). [1]"""
        return self.chisqr / self.nfree if self.nfree > 0 else math.nan

    def _neg2_log_likelihood(self) -> float:
        # N ln(chi^2/N): -2 ln L with the residual variance estimated (unweighted fits)
        return self.ndata * math.log(max(self.chisqr, 1e-300) / self.ndata)

    @property
    def aic(self) -> float:
        """Akaike information criterion with the variance estimated, N ln(chi^2/N) + 2k."""
        return self._neg2_log_likelihood() + 2 * self.nvarys

    @property
    def bic(self) -> float:
        """Bayesian information criterion with the variance estimated, N ln(chi^2/N) + k ln N."""
        return self._neg2_log_likelihood() + math.log(self.ndata) * self.nvarys


def covariance(jac: np.ndarray) -> np.ndarray | None:
    """(J J^T)^-1 of a Jacobian J (parameters, residuals); None when J is rank-deficient.

    The rank is that of J by singular values, with numpy's default cut (largest singular
    value times machine epsilon times the larger dimension; numpy.linalg.matrix_rank).
    """
    if jac.shape[0] == 0:
        return np.zeros((0, 0))
    if not np.all(np.isfinite(jac)):
        return None
    u, s, vt = np.linalg.svd(jac.T, full_matrices=False)
    if s[-1] <= s[0] * np.finfo(float).eps * max(jac.shape):
        return None
    return (vt.T / s**2) @ vt


def with_errors(params: Params, covar: np.ndarray | None) -> Params:
    """``params`` with the standard errors of ``covar`` set on the free ones."""
    out = params.copy()
    free = out.free
    for i, k in enumerate(free):
        var = math.nan if covar is None else float(covar[i, i])
        out[k].stderr = math.sqrt(var) if var >= 0.0 else None
    return out
