"""Straight-line fits of the readings of one configuration, and the uncertainty rule.

Per configuration a straight line ``V = R I + V_0`` goes through all readings (both current
directions, every current); its slope is free of thermoelectric offsets.

Uncertainty rule: the standard uncertainty of a configuration's resistance is the standard
error of the fitted slope (for repeated readings at one current this is the standard
uncertainty of the mean, std/sqrt(n)). When any configuration entering a combined value
was read only once per current direction (no spread of its own), the combined value's
uncertainty is instead the standard uncertainty of the mean of its equivalent
configurations, ``|R - R'| / 2`` for the two reciprocal resistances or the two Hall
diagonals (:func:`combine`). Uncertainties of the thickness (and, for a Hall bar, of width
and spacing) and of the mean field are added in quadrature, and all are propagated to first
order (JCGM 100:2008, Eq. 10). The Hall mobility does not depend on the thickness, so its
uncertainty does not either.

References
----------
.. [1] JCGM 100:2008, Evaluation of measurement data - Guide to the expression of
   uncertainty in measurement (GUM).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from freezeout.reduction.quality.metrics import linear_nonlinearity, relative_difference

__all__ = ["CURRENT_LEVEL_TOLERANCE", "LineFit", "combine", "current_levels", "fit_line",
           "relative_error"]

#: Currents whose magnitudes differ by less than this fraction are the same current. [1]
CURRENT_LEVEL_TOLERANCE = 0.02


@dataclass(frozen=True)
class LineFit:
    """Straight-line fit V = slope I + intercept of one configuration at one field class."""

    slope: float
    slope_err: float  # NaN when the configuration has no spread of its own
    intercept: float
    field: float
    field_err: float
    fewest: int
    asymmetry: float
    nonlinearity: float
    rows: np.ndarray


def current_levels(magnitude: np.ndarray) -> np.ndarray:
    """Current level of each reading, 0 for the smallest current.

    Magnitudes within :data:`CURRENT_LEVEL_TOLERANCE` of the smallest of a level are one
    current.
    """
    order = np.argsort(magnitude)
    level = np.empty(magnitude.size, dtype=int)
    current_level, ref = -1, -math.inf
    for i in order:
        if magnitude[i] > ref * (1.0 + CURRENT_LEVEL_TOLERANCE):
            current_level += 1
            ref = magnitude[i]
        level[i] = current_level
    return level


def fit_line(i_c: np.ndarray, v_c: np.ndarray, b: np.ndarray, rows: np.ndarray) -> LineFit:
    """Fit ``V = R I + V_0`` through one configuration's readings at one field class.

    Parameters
    ----------
    i_c, v_c
        Currents and voltages in the configuration's canonical orientation. [A], [V]
    b
        Field of each reading. [T]
    rows
        Indices of the readings, kept for messages.

    Returns
    -------
    LineFit
        Slope with its standard error (NaN without repeats), mean field with its standard
        uncertainty, fewest readings of one current direction, the largest current-reversal
        asymmetry and the non-linearity (NaN with one current).
    """
    n = i_c.size
    design = np.column_stack([i_c, np.ones(n)])
    (slope, intercept), *_ = np.linalg.lstsq(design, v_c, rcond=None)
    n_pos = int(np.sum(i_c > 0))
    n_neg = int(np.sum(i_c < 0))
    fewest = min(n_pos, n_neg)
    if max(n_pos, n_neg) >= 2 and n > 2:
        residual = v_c - design @ np.array([slope, intercept])
        sxx = float(np.sum((i_c - i_c.mean()) ** 2))
        slope_err = math.sqrt(float(np.sum(residual**2)) / (n - 2) / sxx)
    else:
        slope_err = math.nan
    levels = current_levels(np.abs(i_c))
    asym = []
    for lev in range(int(levels.max()) + 1):
        at = levels == lev
        pos = at & (i_c > 0)
        neg = at & (i_c < 0)
        if pos.any() and neg.any():
            r_pos = float(np.mean(v_c[pos] / i_c[pos]))
            r_neg = float(np.mean(v_c[neg] / i_c[neg]))
            asym.append(float(relative_difference(r_pos, r_neg)))
    nonlin = linear_nonlinearity(i_c, v_c) if levels.max() >= 1 else math.nan
    field_err = float(np.std(b, ddof=1) / math.sqrt(n)) if n > 1 else 0.0
    return LineFit(float(slope), slope_err, float(intercept), float(np.mean(b)), field_err,
                 fewest, max(asym) if asym else math.nan, nonlin, rows)


def combine(values: Sequence[float], errs: Sequence[float]) -> tuple[float, float]:
    """Mean of equivalent estimates and its uncertainty by the rule of this module.

    Parameters
    ----------
    values
        Equivalent estimates of one quantity.
    errs
        Their standard uncertainties, NaN where an estimate has none of its own.

    Returns
    -------
    mean, uncertainty : float
        The mean; the quadrature sum of the uncertainties over n when all are finite, else
        the standard uncertainty of the mean of the estimates (NaN for a single one).
    """
    v = np.asarray(values, dtype=float)
    e = np.asarray(errs, dtype=float)
    mean = float(np.mean(v))
    if np.all(np.isfinite(e)):
        return mean, float(np.sqrt(np.sum(e**2)) / v.size)
    if v.size >= 2:
        return mean, float(np.std(v, ddof=1) / math.sqrt(v.size))
    return mean, math.nan


def relative_error(err: float, value: float) -> float:
    """``|err / value|``, infinite for a zero value. [1]"""
    return abs(err / value) if value != 0 else math.inf
