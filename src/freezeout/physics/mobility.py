"""Scattering-limited carrier mobilities of a non-degenerate band, and Matthiessen's rule.

Each function gives the mobility one scattering mechanism alone would allow:

* lattice: the empirical power law mu_L = mu_300 (T / 300 K)^(-a);
* ionized impurities, screened: Brooks-Herring [1]_, in the form reviewed in [2]_;
* ionized impurities, unscreened with the impact parameter cut off at half the mean impurity
  spacing: Conwell-Weisskopf [3]_;
* neutral impurities: Erginsoy [4]_ (temperature independent).

Formulas are in SI inside; the interface takes temperatures in K, densities in cm^-3, masses
in units of m0, and returns mobilities in cm^2/(V s). Everything broadcasts over numpy
arrays. The relaxation-time picture behind each mobility (its energy exponent and how its
prefactor maps to tau_0) is in :mod:`freezeout.physics.hall_factor`.

References
----------
.. [1] H. Brooks, "Scattering by ionized impurities in semiconductors", Phys. Rev. 83, 879
   (1951) (a meeting abstract; the full derivation with C. Herring is unpublished; title
   and note from memory).
.. [2] D. Chattopadhyay, H. J. Queisser, "Electron scattering by ionized impurities in
   semiconductors", Rev. Mod. Phys. 53, 745 (1981). doi:10.1103/RevModPhys.53.745
.. [3] E. Conwell, V. F. Weisskopf, "Theory of impurity scattering in semiconductors",
   Phys. Rev. 77, 388 (1950). doi:10.1103/PhysRev.77.388
.. [4] C. Erginsoy, "Neutral impurity scattering in semiconductors", Phys. Rev. 79, 1013
   (1950). doi:10.1103/PhysRev.79.1013
"""

from __future__ import annotations

import numpy as np

from freezeout.errors import InputError
from freezeout.physics.constants import EPS0, HBAR, K_B, M0, Q

#: Reference temperature of the lattice power law. [K]
LATTICE_REFERENCE_K = 300.0

_CM2_PER_M2 = 1e4
_M3_PER_CM3 = 1e-6
_SERIES_LIMIT = 1e-2  # below this b the series of the screening function is used


def lattice_mobility(temperature, mobility_300, exponent):
    """Lattice-limited mobility mu_L = mu_300 (T / 300 K)^(-a).

    Parameters
    ----------
    temperature
        Temperature. [K]
    mobility_300
        Lattice mobility at 300 K. [cm^2/(V s)]
    exponent
        Exponent a of the power law (about 1.5 for acoustic phonons alone, 2.2-2.5 for Si
        with intervalley phonons). [1]

    Returns
    -------
    numpy.ndarray
        Mobility. [cm^2/(V s)]

    References
    ----------
    Common practice, no source (an empirical fit form; see e.g. N. D. Arora, J. R. Hauser,
    D. J. Roulston, IEEE Trans. Electron Devices 29, 292 (1982) for Si parameters).
    """
    t = np.asarray(temperature, dtype=float)
    return mobility_300 * (t / LATTICE_REFERENCE_K) ** (-exponent)  # mu_L = mu_300 (T/300)^-a


def screening_function(b):
    """The Brooks-Herring screening function G(b) = ln(1 + b) - b / (1 + b).

    For b < 0.01 the series sum_{k>=2} (-1)^k (k - 1) b^k / k is used, which avoids the
    cancellation of the two terms (G -> b^2 / 2).

    Parameters
    ----------
    b
        Screening parameter, b >= 0. [1]

    Returns
    -------
    numpy.ndarray
        G(b). [1]

    References
    ----------
    .. [1] D. Chattopadhyay, H. J. Queisser, Rev. Mod. Phys. 53, 745 (1981).
    """
    b = np.asarray(b, dtype=float)
    direct = np.log1p(b) - b / (1.0 + b)  # G(b) = ln(1+b) - b/(1+b)
    small = np.minimum(b, _SERIES_LIMIT)
    series = np.zeros_like(small)
    for k in range(9, 1, -1):  # G(b) = sum_k (-1)^k (k-1)/k b^k, Horner from k = 9
        series = (series + (-1) ** k * (k - 1) / k) * small
    series = series * small
    return np.where(b < _SERIES_LIMIT, series, direct)


def brooks_herring_parameter(temperature, screening_density, mass, permittivity):
    """Brooks-Herring screening parameter b = 24 m_c eps (kT)^2 / (q^2 hbar^2 n').

    b = (2 k L_D)^2 at the energy E = 3 kT, with L_D the Debye length of the screening
    density n' (see :mod:`freezeout.physics.screening`).

    Parameters
    ----------
    temperature
        Temperature. [K]
    screening_density
        Screening density n'. [cm^-3]
    mass
        Conductivity effective mass. [m0]
    permittivity
        Static relative permittivity eps_r. [1]

    Returns
    -------
    numpy.ndarray
        b. [1]

    References
    ----------
    .. [1] H. Brooks, Phys. Rev. 83, 879 (1951).
    .. [2] D. Chattopadhyay, H. J. Queisser, Rev. Mod. Phys. 53, 745 (1981).
    """
    kt = K_B * np.asarray(temperature, dtype=float)
    eps = permittivity * EPS0
    n_prime = np.asarray(screening_density, dtype=float) / _M3_PER_CM3
    return 24.0 * mass * M0 * eps * kt**2 / (Q**2 * HBAR**2 * n_prime)  # b = 24 m eps (kT)^2/...


def brooks_herring_mobility(temperature, ionized_density, screening_density, mass,
                            permittivity, charge=1.0):
    """Screened ionized-impurity mobility of Brooks and Herring.

    mu_BH = 2^(7/2) (4 pi eps)^2 (kT)^(3/2) / (pi^(3/2) Z^2 q^3 m_c^(1/2) N_I G(b)), with
    G(b) = ln(1 + b) - b / (1 + b) and b from :func:`brooks_herring_parameter`.

    Parameters
    ----------
    temperature
        Temperature. [K]
    ionized_density
        Density N_I of ionized impurities of charge Z (donors and acceptors together). [cm^-3]
    screening_density
        Screening density n'. [cm^-3]
    mass
        Conductivity effective mass m_c. [m0]
    permittivity
        Static relative permittivity eps_r. [1]
    charge
        Charge number Z of the impurities. [1]

    Returns
    -------
    numpy.ndarray
        Mobility. [cm^2/(V s)]

    References
    ----------
    .. [1] H. Brooks, Phys. Rev. 83, 879 (1951).
    .. [2] D. Chattopadhyay, H. J. Queisser, Rev. Mod. Phys. 53, 745 (1981), Sec. III.
    """
    kt = K_B * np.asarray(temperature, dtype=float)
    eps = permittivity * EPS0
    n_i = np.asarray(ionized_density, dtype=float) / _M3_PER_CM3
    g = screening_function(brooks_herring_parameter(temperature, screening_density, mass,
                                                    permittivity))
    mu = (2.0**3.5 * (4.0 * np.pi * eps) ** 2 * kt**1.5  # mu_BH = 2^(7/2) (4 pi eps)^2 (kT)^1.5
          / (np.pi**1.5 * charge**2 * Q**3 * np.sqrt(mass * M0) * n_i * g))  # / (pi^1.5 Z^2 ...)
    return mu * _CM2_PER_M2


def conwell_weisskopf_mobility(temperature, ionized_density, mass, permittivity, charge=1.0):
    """Unscreened ionized-impurity mobility of Conwell and Weisskopf.

    mu_CW = 64 sqrt(pi) eps^2 (2 kT)^(3/2) / (Z^2 N_I q^3 m_c^(1/2) ln(1 + x^2)), with
    x = 12 pi eps kT / (Z q^2 N_I^(1/3)); the prefactor equals Brooks-Herring's.

    Parameters
    ----------
    temperature
        Temperature. [K]
    ionized_density
        Density N_I of ionized impurities. [cm^-3]
    mass
        Conductivity effective mass m_c. [m0]
    permittivity
        Static relative permittivity eps_r. [1]
    charge
        Charge number Z. [1]

    Returns
    -------
    numpy.ndarray
        Mobility. [cm^2/(V s)]

    References
    ----------
    .. [1] E. Conwell, V. F. Weisskopf, Phys. Rev. 77, 388 (1950).
    .. [2] S. M. Sze, K. K. Ng, *Physics of Semiconductor Devices*, 3rd ed. (Wiley, 2007),
       ch. 1 (the form used here; from memory).
    """
    kt = K_B * np.asarray(temperature, dtype=float)
    eps = permittivity * EPS0
    n_i = np.asarray(ionized_density, dtype=float) / _M3_PER_CM3
    x = 12.0 * np.pi * eps * kt / (charge * Q**2 * np.cbrt(n_i))  # x = 12 pi eps kT/(Z q^2 N^1/3)
    mu = (64.0 * np.sqrt(np.pi) * eps**2 * (2.0 * kt) ** 1.5  # mu_CW = 64 sqrt(pi) eps^2 (2kT)^1.5
          / (charge**2 * n_i * Q**3 * np.sqrt(mass * M0) * np.log1p(x**2)))  # / (... ln(1+x^2))
    return mu * _CM2_PER_M2


def erginsoy_mobility(neutral_density, mass, permittivity):
    """Neutral-impurity mobility of Erginsoy, mu_N = q^3 m_c / (80 pi eps0 eps_r hbar^3 N_N).

    From the scattering rate 1/tau = 20 N_N a_B hbar / m_c of a hydrogenic centre of Bohr
    radius a_B = 4 pi eps hbar^2 / (m_c q^2); independent of energy and temperature.

    Parameters
    ----------
    neutral_density
        Density N_N of neutral (un-ionized) majority-carrier levels. [cm^-3]
    mass
        Conductivity effective mass m_c (also used for a_B). [m0]
    permittivity
        Static relative permittivity eps_r. [1]

    Returns
    -------
    numpy.ndarray
        Mobility (infinite where N_N = 0). [cm^2/(V s)]

    References
    ----------
    .. [1] C. Erginsoy, Phys. Rev. 79, 1013 (1950).
    """
    n_n = np.asarray(neutral_density, dtype=float) / _M3_PER_CM3
    with np.errstate(divide="ignore"):
        mu = Q**3 * mass * M0 / (80.0 * np.pi * EPS0 * permittivity * HBAR**3 * n_n)  # Erginsoy
    return mu * _CM2_PER_M2


def matthiessen_mobility(*mobilities):
    """Combined mobility by Matthiessen's rule, 1/mu = sum_i 1/mu_i.

    Exact only when every mechanism's relaxation time has the same energy dependence; the
    energy-resolved combination is :func:`freezeout.physics.hall_factor.scattering_average`.

    Parameters
    ----------
    *mobilities
        Mobilities of the mechanisms, broadcast together (inf for an absent one).
        [cm^2/(V s)]

    Returns
    -------
    numpy.ndarray
        Combined mobility. [cm^2/(V s)]

    References
    ----------
    .. [1] A. Matthiessen, C. Vogt, Ann. Phys. (Leipzig) 198, 19 (1864) (for metals; from
       memory).
    """
    if not mobilities:
        raise InputError("matthiessen_mobility needs at least one mobility")
    inverse = sum(1.0 / np.asarray(m, dtype=float) for m in mobilities)  # 1/mu = sum 1/mu_i
    return 1.0 / inverse
