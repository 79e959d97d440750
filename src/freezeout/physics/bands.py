"""Band edges and effective densities of states.

References
----------
.. [1] Y. P. Varshni, "Temperature dependence of the energy gap in semiconductors",
   Physica 34, 149-154 (1967). doi:10.1016/0031-8914(67)90062-6
.. [2] S. M. Sze, K. K. Ng, *Physics of Semiconductor Devices*, 3rd ed. (Wiley, 2007),
   Sec. 1.4 (effective density of states, intrinsic density).
"""

from __future__ import annotations

import numpy as np

from freezeout.physics.constants import K_B, K_B_EV, M0, H


def thermal_energy(temperature):
    """kT.

    Parameters
    ----------
    temperature
        Temperature. [K]

    Returns
    -------
    numpy.ndarray
        Thermal energy k_B T. [eV]
    """
    return K_B_EV * np.asarray(temperature, dtype=float)


def effective_density_of_states(temperature, dos_mass):
    """Effective density of states of a parabolic band, 2 (2 pi m* m0 k T / h^2)^(3/2).

    Parameters
    ----------
    temperature
        Temperature. [K]
    dos_mass
        Density-of-states effective mass, valley degeneracy included. [m0]

    Returns
    -------
    numpy.ndarray
        N_c (or N_v) at each temperature. [cm^-3]

    References
    ----------
    [2], Eq. (1.15).
    """
    t = np.asarray(temperature, dtype=float)
    per_m3 = 2.0 * (2.0 * np.pi * dos_mass * M0 * K_B * t / H**2) ** 1.5  # [2] Eq. 1.15
    return per_m3 * 1e-6


def varshni_band_gap(temperature, band_gap_0k, alpha, beta):
    """Band gap from Varshni's relation Eg(T) = Eg(0) - alpha T^2 / (T + beta).

    Parameters
    ----------
    temperature
        Temperature. [K]
    band_gap_0k
        Band gap at 0 K. [eV]
    alpha
        Varshni alpha. [eV/K]
    beta
        Varshni beta. [K]

    Returns
    -------
    numpy.ndarray
        Band gap. [eV]

    References
    ----------
    [1], Eq. (4).
    """
    t = np.asarray(temperature, dtype=float)
    return band_gap_0k - alpha * t**2 / (t + beta)  # [1] Eq. 4


def intrinsic_density(temperature, band_gap, nc, nv):
    """Intrinsic carrier density in the non-degenerate limit, sqrt(Nc Nv) exp(-Eg / 2kT).

    Parameters
    ----------
    temperature
        Temperature. [K]
    band_gap
        Band gap at that temperature. [eV]
    nc, nv
        Effective densities of states of the conduction and valence bands. [cm^-3]

    Returns
    -------
    numpy.ndarray
        n_i. [cm^-3]

    References
    ----------
    [2], Eq. (1.22).
    """
    kt = thermal_energy(temperature)
    return np.sqrt(nc * nv) * np.exp(-np.asarray(band_gap) / (2.0 * kt))  # [2] Eq. 1.22
