"""Hall scattering factor and drift mobility from the energy-resolved relaxation time.

In a non-degenerate parabolic band (Maxwell-Boltzmann distribution) with relaxation time
tau(E) the drift mobility is mu = q <tau> / m_c and the Hall factor r_H = <tau^2> / <tau>^2,
with the averages

    <tau^k> = int tau^k x^(3/2) e^(-x) dx / int x^(3/2) e^(-x) dx,   x = E / kT   [1]_, [2]_.

Each mechanism i has tau_i = tau_0i x^(s_i): acoustic lattice s = -1/2, ionized impurity
(Brooks-Herring, the slow logarithm held at its E = 3 kT value) s = +3/2, neutral impurity
s = 0. A single mechanism gives <tau_i> = tau_0i Gamma(s_i + 5/2) / Gamma(5/2), so the
prefactor that reproduces its mobility mu_i (from :mod:`freezeout.physics.mobility`) is

    q tau_0i / m_c = mu_i Gamma(5/2) / Gamma(s_i + 5/2)

(lattice: mu_L 3 sqrt(pi) / 4; ionized impurity: mu_I sqrt(pi) / 8; neutral: mu_N). The
combined time tau = (sum_i 1 / tau_i)^-1 is then averaged; q / m_c cancels, so everything
runs in mobility units and needs no mass. For one mechanism r_H = Gamma(2 s + 5/2)
Gamma(5/2) / Gamma(s + 5/2)^2: 3 pi / 8, 315 pi / 512 and 1 for the three above.

Quadrature: the integrands carry half-integer powers of x, for which a Gauss-Laguerre rule
in x converges only algebraically. In u = sqrt(x) the weight becomes 2 u^4 e^(-u^2) du and
every single-mechanism integrand is a polynomial in u, so a Gauss rule for the Laguerre-type
weight e^(-u^2) on [0, inf) (half-range Hermite) is exact for them and converges
geometrically for mixtures (:data:`QUADRATURE_NODES` = 64 nodes). Its nodes come once
(about 10 ms, cached) from the Lanczos (discretized Stieltjes) procedure [3]_ applied to a
Gauss-Legendre discretization of the weight.

References
----------
.. [1] E. H. Putley, *The Hall Effect and Semiconductor Physics* (Dover, 1968), ch. 4
   (from memory).
.. [2] K. Seeger, *Semiconductor Physics: An Introduction*, 9th ed. (Springer, 2004),
   ch. 4 (from memory).
.. [3] W. Gautschi, *Orthogonal Polynomials: Computation and Approximation* (Oxford, 2004),
   sec. 2.2 (discretized Stieltjes / Lanczos) and 3.1 (Golub-Welsch).
"""

from __future__ import annotations

from collections.abc import Sequence
from functools import cache
from typing import NamedTuple

import numpy as np
from scipy import special

from freezeout.errors import InputError

#: Energy exponent s of tau ~ E^s for acoustic-phonon (deformation-potential) scattering. [1]
LATTICE_EXPONENT = -0.5
#: Energy exponent of ionized-impurity scattering (Brooks-Herring, logarithm held). [1]
IONIZED_IMPURITY_EXPONENT = 1.5
#: Energy exponent of neutral-impurity scattering (Erginsoy). [1]
NEUTRAL_IMPURITY_EXPONENT = 0.0

#: Number of quadrature nodes in u = sqrt(E / kT) (project choice: about 1e-12 relative
#: for comparable mechanisms, 1e-7 or better when the lattice mobility is 1e4 times below
#: the impurity one, where tau changes at E ~ 1e-4 kT).
QUADRATURE_NODES = 64
_DISCRETE_POINTS = 400
_DISCRETE_UPPER = 13.0  # e^(-u^2) < 1e-73 beyond


class ScatteringAverage(NamedTuple):
    """Transport averages of a combined relaxation time, on the broadcast shape.

    Attributes
    ----------
    drift_mobility
        q <tau> / m_c. [cm^2/(V s)]
    hall_factor
        r_H = <tau^2> / <tau>^2. [1]
    hall_mobility
        r_H times the drift mobility. [cm^2/(V s)]
    """

    drift_mobility: np.ndarray
    hall_factor: np.ndarray
    hall_mobility: np.ndarray


@cache
def half_range_hermite(n: int = QUADRATURE_NODES) -> tuple[np.ndarray, np.ndarray]:
    """Gauss nodes and weights of int_0^inf f(u) e^(-u^2) du.

    Parameters
    ----------
    n
        Number of nodes. [1]

    Returns
    -------
    nodes, weights
        Read-only arrays of length n. [1]

    References
    ----------
    .. [1] W. Gautschi, *Orthogonal Polynomials: Computation and Approximation* (Oxford,
       2004), sec. 2.2.3 (Lanczos) and 3.1.1 (Golub-Welsch).
    """
    t, w = special.roots_legendre(_DISCRETE_POINTS)
    u = 0.5 * _DISCRETE_UPPER * (t + 1.0)
    w = 0.5 * _DISCRETE_UPPER * w * np.exp(-u * u)  # discretized weight e^(-u^2) du
    basis = np.zeros((n, u.size))
    alpha = np.zeros(n)
    beta = np.zeros(n)
    basis[0] = np.sqrt(w) / np.sqrt(w.sum())
    for k in range(n):
        r = u * basis[k]
        alpha[k] = basis[k] @ r  # alpha_k = <u q_k, q_k>
        r = r - alpha[k] * basis[k] - (beta[k] * basis[k - 1] if k else 0.0)
        for _ in range(2):  # full reorthogonalization keeps the Lanczos vectors orthonormal
            r = r - basis[: k + 1].T @ (basis[: k + 1] @ r)
        if k + 1 < n:
            beta[k + 1] = np.linalg.norm(r)  # sqrt(beta_{k+1}) of the three-term recurrence
            basis[k + 1] = r / beta[k + 1]
    jacobi = np.diag(alpha) + np.diag(beta[1:], 1) + np.diag(beta[1:], -1)
    nodes, vectors = np.linalg.eigh(jacobi)  # Golub-Welsch: nodes = eigenvalues
    weights = w.sum() * vectors[0] ** 2  # weights = mu_0 (first eigenvector component)^2
    nodes.setflags(write=False)
    weights.setflags(write=False)
    return nodes, weights


def power_law_hall_factor(exponent):
    """Hall factor of a single mechanism tau ~ E^s: Gamma(2s + 5/2) Gamma(5/2) / Gamma(s + 5/2)^2.

    Parameters
    ----------
    exponent
        Energy exponent s (> -5/4). [1]

    Returns
    -------
    numpy.ndarray
        r_H. [1]

    References
    ----------
    .. [1] E. H. Putley, *The Hall Effect and Semiconductor Physics* (1968), ch. 4 (from
       memory); K. Seeger, *Semiconductor Physics*, ch. 4 (from memory).
    """
    s = np.asarray(exponent, dtype=float)
    return (special.gamma(2 * s + 2.5) * special.gamma(2.5)  # r_H = G(2s+5/2) G(5/2)
            / special.gamma(s + 2.5) ** 2)  # / G(s+5/2)^2


def relaxation_prefactor(mobility, exponent):
    """Prefactor q tau_0 / m_c of tau = tau_0 x^s that reproduces ``mobility`` alone.

    Parameters
    ----------
    mobility
        Mobility of the mechanism acting alone. [cm^2/(V s)]
    exponent
        Energy exponent s. [1]

    Returns
    -------
    numpy.ndarray
        q tau_0 / m_c. [cm^2/(V s)]

    References
    ----------
    .. [1] K. Seeger, *Semiconductor Physics*, ch. 4 (<x^s> = Gamma(s + 5/2) / Gamma(5/2)
       over the Maxwell-Boltzmann distribution; from memory).
    """
    return (np.asarray(mobility, dtype=float) * special.gamma(2.5)  # q tau_0/m = mu G(5/2)
            / special.gamma(exponent + 2.5))  # / G(s+5/2)


def scattering_average(mobilities: Sequence, exponents: Sequence[float],
                       nodes: int = QUADRATURE_NODES) -> ScatteringAverage:
    """Drift mobility and Hall factor of tau = (sum_i 1/tau_i)^-1, tau_i = tau_0i x^s_i.

    Parameters
    ----------
    mobilities
        Mobility mu_i of each mechanism acting alone (inf for an absent one), broadcast
        together, e.g. arrays over temperature. At least one must be finite. [cm^2/(V s)]
    exponents
        Energy exponent s_i of each mechanism (:data:`LATTICE_EXPONENT`,
        :data:`IONIZED_IMPURITY_EXPONENT`, :data:`NEUTRAL_IMPURITY_EXPONENT`). [1]

    Returns
    -------
    ScatteringAverage
        Drift mobility, Hall factor and Hall mobility on the broadcast shape.

    Raises
    ------
    InputError
        If the two sequences differ in length or are empty.

    References
    ----------
    .. [1] E. H. Putley, *The Hall Effect and Semiconductor Physics* (1968), ch. 4 (from
       memory).
    """
    if len(mobilities) != len(exponents) or not mobilities:
        raise InputError(f"scattering_average needs one exponent per mobility, got "
                         f"{len(mobilities)} mobilities and {len(exponents)} exponents")
    u, weights = half_range_hermite(nodes)
    x = u * u  # x = E / kT = u^2
    measure = weights * x * x  # e^(-u^2) du times u^4: x^(3/2) e^(-x) dx / 2
    measure = measure / measure.sum()  # normalized so that <1> = 1
    shape = np.broadcast_shapes(*(np.shape(m) for m in mobilities))
    rate = np.zeros(x.shape)
    for mobility, s in zip(mobilities, exponents, strict=True):
        if np.all(np.isposinf(mobility)):
            continue  # an absent mechanism adds no rate
        prefactor = relaxation_prefactor(mobility, s)[..., None]
        rate = rate + x ** (-s) / prefactor  # 1/tau = sum_i 1/(tau_0i x^s_i)
    with np.errstate(divide="ignore"):
        tau = 1.0 / rate
    mean = tau @ measure  # <tau> in units of m_c / q
    mean_square = (tau * tau) @ measure  # <tau^2>
    with np.errstate(invalid="ignore"):
        hall = mean_square / mean**2  # r_H = <tau^2> / <tau>^2
    mean, hall = np.broadcast_to(mean, shape), np.broadcast_to(hall, shape)
    return ScatteringAverage(drift_mobility=mean, hall_factor=hall, hall_mobility=hall * mean)
