"""How well the model describes the data: rms misfit, runs test, when a misfit counts.

Residuals are ln(model density) - ln(measured density) of the points used, in temperature
order; the rms misfit is their root mean square times 100 ("percent", exact for small
misfits). The thresholds are project choices, stated once here:

* a misfit is *significant* when chi^2 exceeds its 99 % quantile for the degrees of freedom
  (weighted fits) or, with no per-point uncertainties, when the rms misfit exceeds
  :data:`RUNS_GATE_RMS_PERCENT`; only then can the pattern of signs (runs test) mean more
  than round-off or noise;
* an unweighted fit that misses by more than :data:`MISFIT_RMS_PERCENT` rms is warned;
* the model is *not adequate* (its numbers are not measurements) when the misfit is gross,
  reduced chi^2 above :data:`INADEQUATE_REDUCED_CHI2` (weighted) or rms above
  :data:`INADEQUATE_RMS_PERCENT` (unweighted), and the residuals are not random (runs-test
  z below :data:`INADEQUATE_RUNS_Z`, or too few points to tell). A right model with
  understated uncertainties has random residuals and is not marked.
"""

from __future__ import annotations

import math

import numpy as np

from freezeout.fitting.quantiles import chi2_quantile

#: Runs-test z below which the residuals count as systematic. [1]
RUNS_Z_LIMIT = -3.0
#: Quantile of the chi^2 distribution a weighted fit must exceed to be a significant misfit.
CHI2_QUANTILE = 0.99
#: rms misfit above which an unweighted fit's residual signs are tested. [%]
RUNS_GATE_RMS_PERCENT = 2.0
#: rms misfit of an unweighted fit above which it is warned. [%]
MISFIT_RMS_PERCENT = 5.0
#: Reduced chi^2 of a weighted fit above which the model may be plainly wrong. [1]
INADEQUATE_REDUCED_CHI2 = 100.0
#: rms misfit of an unweighted fit above which the model may be plainly wrong. [%]
INADEQUATE_RMS_PERCENT = 20.0
#: Runs-test z below which a gross misfit is taken as the model's, not the noise's. [1]
INADEQUATE_RUNS_Z = -2.5


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


def rms_percent(ln_residual) -> float:
    """Root mean square of ln-density residuals, times 100. [%]"""
    r = np.asarray(ln_residual, dtype=float)
    return float(100.0 * math.sqrt(np.mean(r**2))) if r.size else math.nan


def misfit_significant(weighted: bool, chi2: float, dof: int, rms: float) -> bool:
    """True when the residuals are larger than their errors (or a few percent) allow.

    Parameters
    ----------
    weighted
        True when per-point uncertainties weighted the fit.
    chi2
        Weighted sum of squared residuals. [1]
    dof
        Degrees of freedom of the fit. [1]
    rms
        rms misfit. [%]
    """
    if weighted:
        return dof > 0 and np.isfinite(chi2) and chi2 > chi2_quantile(CHI2_QUANTILE, dof)
    return bool(np.isfinite(rms) and rms > RUNS_GATE_RMS_PERCENT)


def model_inadequate(weighted: bool, reduced_chi2: float, rms: float,
                     z: float | None) -> bool:
    """True when the misfit is gross and systematic: the model does not describe the data.

    Parameters
    ----------
    weighted
        True when per-point uncertainties weighted the fit.
    reduced_chi2
        Reduced chi^2 of the fit. [1]
    rms
        rms misfit. [%]
    z
        Runs-test z of the residuals, or None when it cannot be computed. [1]
    """
    if weighted:
        gross = np.isfinite(reduced_chi2) and reduced_chi2 > INADEQUATE_REDUCED_CHI2
    else:
        gross = np.isfinite(rms) and rms > INADEQUATE_RMS_PERCENT
    return bool(gross and (z is None or z < INADEQUATE_RUNS_Z))
