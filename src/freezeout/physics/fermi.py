"""Complete Fermi-Dirac integrals of order 1/2 and -1/2, normalized, vectorized.

The normalized integral is

    F_j(eta) = 1/Gamma(j+1) * integral_0^inf t^j / (1 + exp(t - eta)) dt,

so that n = N_c F_1/2(eta_c) and the Boltzmann limit is F_j(eta) -> exp(eta).
F_j = -Li_{j+1}(-e^eta) (polylogarithm) and dF_1/2/deta = F_-1/2.

Three regions, each accurate to about 1e-14 relative:

* eta < -2: the alternating series sum_k (-1)^(k+1) e^(k eta) / k^(j+1) [1], evaluated as
  exp(eta) times a sum near 1 so that the logarithm never underflows;
* -2 <= eta < 26: Chebyshev expansions of ln F_j on unit intervals, generated from mpmath
  polylogarithm values by ``scripts/make_fd_tables.py`` (stored in ``data/``);
* eta >= 26: the Sommerfeld asymptotic expansion [2]
  F_j(eta) = eta^(j+1)/Gamma(j+2) [1 + sum_k 2 (1 - 2^(1-2k)) zeta(2k) Gamma(j+2)/Gamma(j+2-2k)
  eta^(-2k)], whose cos(pi j) F_j(-eta) correction vanishes for half-integer j.

References
----------
.. [1] DLMF 25.12(iii), Fermi-Dirac and Bose-Einstein integrals. https://dlmf.nist.gov/25.12
.. [2] J. S. Blakemore, *Semiconductor Statistics* (Pergamon, 1962), App. C; R. B. Dingle,
   Appl. Sci. Res. B 6, 225 (1957). doi:10.1007/BF02920379
"""

from __future__ import annotations

import json
import math
from functools import cache
from importlib import resources

import numpy as np
from scipy import special

_SERIES_MAX = -2.0
_ASYMPTOTIC_MIN = 26.0
_N_CHEB = 16
_N_ASYMPTOTIC = 12


@cache
def chebyshev_tables() -> dict:
    """The stored Chebyshev rows of ln F_1/2 and ln F_-1/2, with the grid's start and width.

    Keys ``"1/2"`` and ``"-1/2"``: arrays (order, interval) of the first 16 coefficients on
    each unit interval of [-2, 26); ``"lower"`` and ``"width"``: the grid. [1]
    """
    text = resources.files("freezeout.data").joinpath("fermi_dirac_chebyshev.json").read_text()
    raw = json.loads(text)
    lower, upper, width = raw["lower"], raw["upper"], raw["width"]
    if (lower, upper) != (_SERIES_MAX, _ASYMPTOTIC_MIN):
        raise RuntimeError("Fermi-Dirac table domain does not match the code")  # pragma: no cover
    out = {"lower": float(lower), "width": float(width)}
    for name, table in raw["orders"].items():
        # stored transposed, one contiguous row per Chebyshev order, for fast gathers
        out[name] = np.ascontiguousarray(np.asarray(table, dtype=float)[:, :_N_CHEB].T)
    return out


@cache
def asymptotic_coefficients(j: float) -> np.ndarray:
    """The 12 Sommerfeld coefficients of F_j, those of eta^-2k in the bracket above. [1]"""
    k = np.arange(1, _N_ASYMPTOTIC + 1)
    # Gamma(j+2)/Gamma(j+2-2k) as a running product, sign included
    falling = np.empty(k.size)
    acc = 1.0
    for i, kk in enumerate(k):
        acc *= (j + 2 - 2 * kk + 1) * (j + 2 - 2 * kk)
        falling[i] = acc
    return 2.0 * (1.0 - 2.0 ** (1.0 - 2.0 * k)) * special.zeta(2.0 * k) * falling


def _log_series(eta: np.ndarray, *orders: float) -> list[np.ndarray]:
    """ln F_j for eta < -2, one array per order j.

    ln F_j = eta + ln(sum_k (-1)^(k+1) e^((k-1) eta) / k^(j+1)); the sum is near 1, so the
    result never underflows.
    """
    if eta.size == 0:
        return [eta.copy() for _ in orders]
    worst = float(np.max(eta))
    # terms kept so that the first one left out, e^(K worst), is below 1e-17
    n_terms = int(min(max(np.ceil(39.2 / max(-worst, 1e-300)), 1), 24))
    if n_terms == 1:
        return [eta.copy() for _ in orders]
    x = np.exp(eta)
    totals = [np.ones_like(eta) for _ in orders]
    power = np.ones_like(eta)
    for k in range(2, n_terms + 1):
        power = power * x
        sign = -1.0 if k % 2 == 0 else 1.0
        for total, j in zip(totals, orders, strict=True):
            total += (sign / k ** (j + 1.0)) * power
    return [eta + np.log(total) for total in totals]


def _log_chebyshev(name: str, eta: np.ndarray) -> np.ndarray:
    tables = chebyshev_tables()
    coefs = tables[name]
    pos = (eta - tables["lower"]) / tables["width"]
    idx = np.minimum(pos.astype(np.intp), coefs.shape[1] - 1)
    x = 2.0 * (pos - idx) - 1.0
    # Clenshaw recurrence, vectorized over points with their own coefficient rows
    two_x = 2.0 * x
    b1 = coefs[_N_CHEB - 1].take(idx)
    b2 = np.zeros_like(x)
    for m in range(_N_CHEB - 2, 0, -1):
        b1, b2 = two_x * b1 - b2 + coefs[m].take(idx), b1
    return x * b1 - b2 + coefs[0].take(idx)


def _log_asymptotic(j: float, eta: np.ndarray) -> np.ndarray:
    a = asymptotic_coefficients(j)
    inv2 = 1.0 / (eta * eta)
    total = np.zeros_like(eta)
    for coef in a[::-1]:
        total = (total + coef) * inv2
    return (j + 1.0) * np.log(eta) - special.gammaln(j + 2.0) + np.log1p(total)


def _log_fd(name: str, j: float, eta) -> np.ndarray:
    eta = np.asarray(eta, dtype=float)
    shape = eta.shape
    flat = eta.ravel()
    if np.isnan(flat).any():
        raise ValueError("Fermi-Dirac integral: eta contains NaN")
    out = np.empty_like(flat)
    low = flat < _SERIES_MAX
    high = flat >= _ASYMPTOTIC_MIN
    mid = ~(low | high)
    if low.all():
        (out,) = _log_series(flat, j)
    elif mid.all():
        out = _log_chebyshev(name, flat)
    else:
        if low.any():
            (out[low],) = _log_series(flat[low], j)
        if mid.any():
            out[mid] = _log_chebyshev(name, flat[mid])
        if high.any():
            out[high] = _log_asymptotic(j, flat[high])
    return out.reshape(shape)


def log_fermi_dirac_pair(eta) -> tuple[np.ndarray, np.ndarray]:
    """ln F_1/2 and ln F_-1/2 together, from :func:`log_fermi_dirac_half_ratio`.

    The neutrality solver uses the ratio form itself; this one is its log-log reading
    (ln F_-1/2 = ln F_1/2 + ln(F_-1/2 / F_1/2)), checked against mpmath in the tests.

    Parameters
    ----------
    eta
        Reduced Fermi level, scalar or array. [1]

    Returns
    -------
    tuple of numpy.ndarray
        (ln F_1/2(eta), ln F_-1/2(eta)), each of the shape of ``eta``. [1]
    """
    lhalf, ratio = log_fermi_dirac_half_ratio(eta)
    return lhalf, lhalf + np.log(ratio)


@cache
def _paired_tables() -> np.ndarray:
    """The Chebyshev rows of F_1/2 then of F_-1/2 side by side: one Clenshaw for both."""
    tables = chebyshev_tables()
    return np.ascontiguousarray(np.concatenate([tables["1/2"], tables["-1/2"]], axis=1))


@cache
def _series_coefficients(n_terms: int) -> tuple[np.ndarray, np.ndarray]:
    """Powers 1..n_terms-1 and the (2, n_terms-1) coefficients of the series of F_1/2, F_-1/2."""
    k = np.arange(2, n_terms + 1, dtype=float)
    sign = np.where(k % 2 == 0, -1.0, 1.0)
    return (k - 1.0)[:, None], np.stack([sign / k**1.5, sign / k**0.5])


def _series_sums(eta: np.ndarray, worst: float | None = None
                 ) -> tuple[np.ndarray, np.ndarray] | None:
    """Sums S_j = e^(-eta) F_j(eta) of the series for j = 1/2 and -1/2, eta < -2.

    S_j = sum_k (-1)^(k+1) x^(k-1) / k^(j+1), x = e^eta, with as many terms as
    :func:`_log_series` keeps (both sums in one matrix product). None when one term is
    enough (both sums are 1). ``worst`` is eta's largest element if already at hand.
    """
    if worst is None:
        worst = float(eta.max())
    n_terms = int(min(max(math.ceil(39.2 / max(-worst, 1e-300)), 1), 24))
    if n_terms == 1:
        return None
    exponents, coefs = _series_coefficients(n_terms)
    x = np.exp(eta)
    if eta.size < 256:
        powers = x[None, :] ** exponents
    else:  # long rows: one product per power is cheaper than pow
        powers = np.empty((n_terms - 1, eta.size))
        powers[0] = x
        for i in range(1, n_terms - 1):
            np.multiply(powers[i - 1], x, out=powers[i])
    sums = coefs @ powers + 1.0
    return sums[0], sums[1]


def log_fermi_dirac_half_ratio(eta) -> tuple[np.ndarray, np.ndarray]:
    """ln F_1/2 and F_-1/2 / F_1/2 (= d ln F_1/2 / d eta), for the neutrality solver.

    The same expansions as :func:`log_fermi_dirac_pair` (series, Chebyshev tables,
    Sommerfeld), with the work of both orders shared: one logarithm for the series, one
    Clenshaw recurrence for both tables.

    Parameters
    ----------
    eta
        Reduced Fermi level, scalar or array. [1]

    Returns
    -------
    tuple of numpy.ndarray
        (ln F_1/2(eta), F_-1/2(eta) / F_1/2(eta)), each of the shape of ``eta``. [1]
    """
    eta = np.asarray(eta, dtype=float)
    shape = eta.shape
    flat = eta.ravel()
    worst = float(flat.max()) if flat.size else math.inf
    if worst < _SERIES_MAX:
        # every element on the series (the common case of a band far from E_F)
        sums = _series_sums(flat, worst)
        if sums is None:
            return eta.copy(), np.ones(shape)
        lf, ratio = flat + np.log(sums[0]), sums[1] / sums[0]
        return (lf, ratio) if eta.ndim == 1 else (lf.reshape(shape), ratio.reshape(shape))
    if np.isnan(flat).any():
        raise ValueError("Fermi-Dirac integral: eta contains NaN")
    lf = np.empty_like(flat)
    ratio = np.empty_like(flat)
    low = flat < _SERIES_MAX
    high = flat >= _ASYMPTOTIC_MIN
    mid = ~(low | high)
    if low.any():
        e = flat[low]
        sums = _series_sums(e)
        if sums is None:
            lf[low], ratio[low] = e, 1.0
        else:
            lf[low], ratio[low] = e + np.log(sums[0]), sums[1] / sums[0]
    if mid.any():
        e = flat[mid]
        tables = chebyshev_tables()
        coefs = _paired_tables()
        n_int = tables["1/2"].shape[1]
        pos = (e - tables["lower"]) / tables["width"]
        idx = np.minimum(pos.astype(np.intp), n_int - 1)
        x = 2.0 * (pos - idx) - 1.0
        idx2 = np.concatenate([idx, idx + n_int])
        x2 = np.concatenate([x, x])
        two_x = 2.0 * x2
        b1 = coefs[_N_CHEB - 1].take(idx2)
        b2 = np.zeros_like(x2)
        for m in range(_N_CHEB - 2, 0, -1):
            b1, b2 = two_x * b1 - b2 + coefs[m].take(idx2), b1
        both = x2 * b1 - b2 + coefs[0].take(idx2)
        lf[mid] = both[:e.size]
        ratio[mid] = np.exp(both[e.size:] - both[:e.size])
    if high.any():
        e = flat[high]
        lh = _log_asymptotic(0.5, e)
        lf[high], ratio[high] = lh, np.exp(_log_asymptotic(-0.5, e) - lh)
    return lf.reshape(shape), ratio.reshape(shape)


def log_fermi_dirac_half(eta):
    """Natural logarithm of the normalized Fermi-Dirac integral F_1/2.

    Finite for every finite eta (no underflow for very negative eta, where it tends to eta).

    Parameters
    ----------
    eta
        Reduced Fermi level (E_F - E_c)/kT, scalar or array. [1]

    Returns
    -------
    numpy.ndarray
        ln F_1/2(eta), same shape as ``eta``. [1]
    """
    return _log_fd("1/2", 0.5, eta)


def log_fermi_dirac_minus_half(eta):
    """Natural logarithm of the normalized Fermi-Dirac integral F_-1/2 (= dF_1/2/deta).

    Parameters
    ----------
    eta
        Reduced Fermi level, scalar or array. [1]

    Returns
    -------
    numpy.ndarray
        ln F_-1/2(eta), same shape as ``eta``. [1]
    """
    return _log_fd("-1/2", -0.5, eta)


def fermi_dirac_half(eta):
    """Normalized complete Fermi-Dirac integral of order 1/2 (2/sqrt(pi) prefactor).

    Parameters
    ----------
    eta
        Reduced Fermi level (E_F - E_c)/kT, scalar or array. [1]

    Returns
    -------
    numpy.ndarray
        F_1/2(eta); underflows to 0 only below eta of about -745. [1]

    Notes
    -----
    Relative error below 1e-13 on [-100, 200] against mpmath's polylogarithm
    (tests/test_fermi.py).
    """
    return np.exp(log_fermi_dirac_half(eta))


def fermi_dirac_minus_half(eta):
    """Normalized complete Fermi-Dirac integral of order -1/2 (1/sqrt(pi) prefactor).

    Parameters
    ----------
    eta
        Reduced Fermi level, scalar or array. [1]

    Returns
    -------
    numpy.ndarray
        F_-1/2(eta). [1]
    """
    return np.exp(log_fermi_dirac_minus_half(eta))
