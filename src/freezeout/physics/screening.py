"""Screening density n' of the Brooks-Herring mobility, and the ionized and neutral densities.

Linear (Debye-Hueckel) screening counts every charge that moves when the potential shifts
by dV: n' = kT d(rho / q) / dE_F summed over the mobile charges. A non-degenerate band gives
its density (kT dn/dE_F = n); a level j of density N_j with ionized fraction f_j gives
N_j f_j (1 - f_j) = N_j^+ (1 - N_j^+ / N_j), whatever its degeneracy factor (kT df/dE_F =
-f (1 - f) for f = 1 / (1 + g e^((E_F - E_j)/kT))). Hence the general form used here,

    n' = n + sum_j N_j^+ (1 - N_j^+ / N_j)

over the partially ionized levels (a fully ionized or fully neutral level contributes 0).
For one donor level over fully ionized compensating acceptors N_D^+ = n + N_A (holes
neglected), which gives the classic one-level form of [1]_, [2]_,

    n' = n + (n + N_A) (1 - (n + N_A) / N_D),

and the mirror form for holes. The minority band adds its own density, which the optional
``minority`` argument carries (negligible in an extrinsic sample).

References
----------
.. [1] H. Brooks, Phys. Rev. 83, 879 (1951).
.. [2] D. Chattopadhyay, H. J. Queisser, Rev. Mod. Phys. 53, 745 (1981), eq. for n' with
   one donor level (the "n + (n + N_A)(1 - (n + N_A)/N_D)" form).
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np


def screening_density(majority, levels: Sequence[tuple] = (), minority=0.0):
    """General screening density n' = n + p + sum_j N_j^+ (1 - N_j^+ / N_j).

    Parameters
    ----------
    majority
        Majority-carrier density (n or p). [cm^-3]
    levels
        (N_j^+, N_j) of each dopant level: the ionized and the total density; donors and
        acceptors alike (a level with N_j = 0 contributes nothing). [cm^-3]
    minority
        Minority-carrier density. [cm^-3]

    Returns
    -------
    numpy.ndarray
        Screening density. [cm^-3]

    References
    ----------
    .. [1] D. Chattopadhyay, H. J. Queisser, Rev. Mod. Phys. 53, 745 (1981) (one-level form;
       the sum over levels is derived in this module's docstring).
    """
    total = np.asarray(majority, dtype=float) + np.asarray(minority, dtype=float)  # n + p
    for ionized, density in levels:
        ionized = np.asarray(ionized, dtype=float)
        density = np.asarray(density, dtype=float)
        with np.errstate(divide="ignore", invalid="ignore"):
            fraction = np.where(density > 0, ionized / density, 0.0)
        total = total + ionized * (1.0 - fraction)  # + N_j^+ (1 - N_j^+ / N_j)
    return total


def screening_density_one_level(majority, compensating, majority_level_density):
    """One-level screening density n' = n + (n + N_A) (1 - (n + N_A) / N_D).

    For p-type read p, N_D (compensating donors) and N_A (the acceptor level).

    Parameters
    ----------
    majority
        Majority-carrier density n. [cm^-3]
    compensating
        Density N_A of the fully ionized compensating impurities. [cm^-3]
    majority_level_density
        Density N_D of the one majority level. [cm^-3]

    Returns
    -------
    numpy.ndarray
        Screening density. [cm^-3]

    References
    ----------
    .. [1] H. Brooks, Phys. Rev. 83, 879 (1951).
    .. [2] D. Chattopadhyay, H. J. Queisser, Rev. Mod. Phys. 53, 745 (1981).
    """
    n = np.asarray(majority, dtype=float)
    ionized = n + np.asarray(compensating, dtype=float)  # N_D^+ = n + N_A by neutrality
    return n + ionized * (1.0 - ionized / majority_level_density)  # n' = n + (n+N_A)(1-...)


def ionized_impurity_density(ionized_majority_levels, compensating):
    """Ionized-impurity density N_I = sum_j N_j^+ + N_comp (charge number 1).

    Parameters
    ----------
    ionized_majority_levels
        Ionized densities N_j^+ of the majority levels. [cm^-3]
    compensating
        Density of the fully ionized compensating impurities. [cm^-3]

    Returns
    -------
    numpy.ndarray
        N_I. [cm^-3]

    References
    ----------
    Common practice, no source.
    """
    total = np.asarray(compensating, dtype=float)
    for ionized in ionized_majority_levels:
        total = total + np.asarray(ionized, dtype=float)  # N_I = sum N_j^+ + N_comp
    return total


def neutral_impurity_density(levels: Sequence[tuple]):
    """Neutral-impurity density N_N = sum_j (N_j - N_j^+) of the majority levels.

    Parameters
    ----------
    levels
        (N_j^+, N_j) of each majority level. [cm^-3]

    Returns
    -------
    numpy.ndarray
        N_N. [cm^-3]

    References
    ----------
    .. [1] C. Erginsoy, Phys. Rev. 79, 1013 (1950) (the scatterers are the un-ionized
       hydrogenic centres).
    """
    total = np.zeros(())
    for ionized, density in levels:
        total = total + np.maximum(np.asarray(density, dtype=float)
                                   - np.asarray(ionized, dtype=float), 0.0)  # N_j - N_j^+
    return total
