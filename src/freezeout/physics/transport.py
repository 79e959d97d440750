"""Two-carrier Hall coefficient and conductivity, and the temperature where R_H changes sign.

With electrons (n, mu_n, r_n) and holes (p, mu_p, r_p) in parallel, in the weak-field limit

    R_H = (r_p p mu_p^2 - r_n n mu_n^2) / (q (p mu_p + n mu_n)^2),
    sigma = q (n mu_n + p mu_p)   [1]_, [2]_.

R_H tends to r_p / (q p) without electrons and to -r_n / (q n) without holes, and changes
sign where r_p p mu_p^2 = r_n n mu_n^2 (in a p-type sample, when electrons are excited
across the gap on heating).

Units: densities in cm^-3, mobilities in cm^2/(V s); then R_H comes out in cm^3/C and
sigma in S/cm.

References
----------
.. [1] E. H. Putley, *The Hall Effect and Semiconductor Physics* (Dover, 1968), ch. 4
   (from memory).
.. [2] K. Seeger, *Semiconductor Physics: An Introduction*, 9th ed. (Springer, 2004),
   ch. 7 (from memory).
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from freezeout.errors import InputError
from freezeout.physics.constants import Q


def hall_coefficient(n, p, mobility_n, mobility_p, hall_factor_n=1.0, hall_factor_p=1.0):
    """Two-carrier weak-field Hall coefficient.

    Parameters
    ----------
    n, p
        Electron and hole densities. [cm^-3]
    mobility_n, mobility_p
        Drift mobilities. [cm^2/(V s)]
    hall_factor_n, hall_factor_p
        Hall scattering factors r_n, r_p. [1]

    Returns
    -------
    numpy.ndarray
        R_H (negative when electrons dominate). [cm^3/C]

    References
    ----------
    .. [1] E. H. Putley, *The Hall Effect and Semiconductor Physics* (1968), ch. 4 (from
       memory).
    """
    n = np.asarray(n, dtype=float)
    p = np.asarray(p, dtype=float)
    sn = n * mobility_n  # n mu_n
    sp = p * mobility_p  # p mu_p
    numerator = (hall_factor_p * sp * mobility_p  # r_p p mu_p^2
                 - hall_factor_n * sn * mobility_n)  # - r_n n mu_n^2
    return numerator / (Q * (sp + sn) ** 2)  # R_H = (...) / (q (p mu_p + n mu_n)^2)


def conductivity(n, p, mobility_n, mobility_p):
    """Conductivity sigma = q (n mu_n + p mu_p).

    Parameters
    ----------
    n, p
        Electron and hole densities. [cm^-3]
    mobility_n, mobility_p
        Drift mobilities. [cm^2/(V s)]

    Returns
    -------
    numpy.ndarray
        Conductivity. [S/cm]

    References
    ----------
    .. [1] K. Seeger, *Semiconductor Physics*, ch. 4 (from memory).
    """
    return Q * (np.asarray(n, dtype=float) * mobility_n  # sigma = q (n mu_n
                + np.asarray(p, dtype=float) * mobility_p)  # + p mu_p)


def resistivity(n, p, mobility_n, mobility_p):
    """Resistivity rho = 1 / (q (n mu_n + p mu_p)).

    Parameters
    ----------
    n, p
        Electron and hole densities. [cm^-3]
    mobility_n, mobility_p
        Drift mobilities. [cm^2/(V s)]

    Returns
    -------
    numpy.ndarray
        Resistivity. [ohm cm]

    References
    ----------
    .. [1] K. Seeger, *Semiconductor Physics*, ch. 4 (from memory).
    """
    return 1.0 / conductivity(n, p, mobility_n, mobility_p)  # rho = 1 / sigma


def hall_sign_change_temperature(model: Callable[[np.ndarray], np.ndarray], temperatures
                                 ) -> float | None:
    """Lowest temperature of the grid's range where a model R_H(T) changes sign.

    The model is evaluated once on the whole grid; the first interval (from the low end)
    whose ends have opposite signs brackets the root. The bracket is then narrowed by three
    rounds of a 33-point sub-grid, each one batch call of the model (a bracket 32^3 times
    narrower), and the root is the secant through the last bracket's ends: the error is of
    the order of the bracket width squared times R_H''/R_H', below 1e-9 of the root for any
    smooth model on a grid a few per cent apart (project choice, no source; it replaces a
    scalar Brent search of about ten single-temperature calls). A grid point where R_H is
    exactly 0 is returned as is. Intervals with a non-finite end are skipped.

    Parameters
    ----------
    model
        R_H as a function of temperature; takes and returns arrays. [K] -> [cm^3/C]
    temperatures
        Strictly increasing grid of at least two finite temperatures. [K]

    Returns
    -------
    float or None
        Temperature of the sign change, or None if R_H keeps one sign on the grid. [K]

    Raises
    ------
    InputError
        If the grid is not strictly increasing, not finite, or shorter than two points.

    References
    ----------
    .. [1] R. P. Brent, *Algorithms for Minimization without Derivatives* (Prentice-Hall,
       1973), ch. 4.
    """
    t = np.asarray(temperatures, dtype=float)
    if t.ndim != 1 or t.size < 2 or not np.all(np.isfinite(t)) or np.any(np.diff(t) <= 0):
        raise InputError("the temperature grid for the Hall sign change must be a strictly "
                         "increasing list of at least two finite temperatures")
    r = np.asarray(model(t), dtype=float)
    if r.shape != t.shape:
        raise InputError(f"the R_H model returned shape {r.shape} for a grid of {t.shape}")
    finite = np.isfinite(r)
    sign = np.sign(r)
    for i in range(t.size - 1):
        if finite[i] and sign[i] == 0:
            return float(t[i])
        if finite[i] and finite[i + 1] and sign[i] * sign[i + 1] < 0:
            return _refine(model, t[i], t[i + 1], r[i], r[i + 1])
    if finite[-1] and sign[-1] == 0:
        return float(t[-1])
    return None


_SUB_POINTS = 33  # points of each refining sub-grid (project choice, no source)
_ROUNDS = 3


def _refine(model, lo, hi, r_lo, r_hi) -> float:
    """The root in [lo, hi] (r_lo, r_hi of opposite signs): sub-grids, then the secant."""
    for _ in range(_ROUNDS):
        sub = np.linspace(lo, hi, _SUB_POINTS)
        r = np.asarray(model(sub), dtype=float)
        r[0], r[-1] = r_lo, r_hi
        if np.any(r == 0.0):
            return float(sub[int(np.flatnonzero(r == 0.0)[0])])
        change = np.flatnonzero(np.isfinite(r[:-1]) & np.isfinite(r[1:])
                                & (np.sign(r[:-1]) * np.sign(r[1:]) < 0))
        if change.size == 0:  # a non-finite value hides the sign change: keep the bracket
            break
        j = int(change[0])
        lo, hi, r_lo, r_hi = sub[j], sub[j + 1], r[j], r[j + 1]
    return float(lo - r_lo * (hi - lo) / (r_hi - r_lo))
