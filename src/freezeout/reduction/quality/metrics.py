"""The measures the data-quality checks grade: relative difference and non-linearity."""

from __future__ import annotations

import math

import numpy as np

__all__ = ["linear_nonlinearity", "relative_difference"]


def relative_difference(a, b):
    """Relative difference ``|a - b| / |(a + b) / 2|``.

    Parameters
    ----------
    a, b
        Two estimates of the same quantity (any unit, the same for both).

    Returns
    -------
    ndarray
        The relative difference. [1]
    """
    a = np.asarray(a, dtype=float)
    b = np.asarray(b, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.abs(a - b) / np.abs(0.5 * (a + b))


def linear_nonlinearity(current, voltage):
    """Departure of V(I) from a straight line, relative to the signal.

    Fits ``V = R I + V_0`` by least squares and returns
    ``max |residual| / (|R| max |I|)``.

    Parameters
    ----------
    current
        Signed currents of one configuration (canonical orientation). [A]
    voltage
        Voltages at those currents. [V]

    Returns
    -------
    float
        The relative non-linearity; NaN with fewer than three readings. [1]
    """
    i = np.asarray(current, dtype=float)
    v = np.asarray(voltage, dtype=float)
    if i.size < 3:
        return math.nan
    design = np.column_stack([i, np.ones_like(i)])
    coef, *_ = np.linalg.lstsq(design, v, rcond=None)
    residual = v - design @ coef
    scale = abs(coef[0]) * np.max(np.abs(i))
    if scale == 0.0:
        return math.inf
    return float(np.max(np.abs(residual)) / scale)
