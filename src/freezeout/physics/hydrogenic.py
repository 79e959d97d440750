"""Effective-mass (hydrogenic) estimates of a shallow dopant: energy, Bohr radius, Mott density.

A shallow donor (acceptor) is a hydrogen atom scaled by the band's effective mass m* and the
host's static permittivity eps_r: E_H = Ry (m*/m0) / eps_r^2, a_B = a_0 eps_r / (m*/m0)
(any solid-state text, e.g. C. Kittel, *Introduction to Solid State Physics*, ch. 8; from
memory). Real levels lie deeper by a central-cell correction, typically up to about twice
E_H (Si:P 45 meV against 26 meV). The isolated-level picture fails when the dopants' orbits
overlap, at the Mott density N^(1/3) a_B ~ 0.26 (N. F. Mott, *Metal-Insulator Transitions*
(1974); P. P. Edwards, M. J. Sienko, Phys. Rev. B 17, 2575 (1978); from memory). With the
conductivity mass this estimate is uncertain by a factor of about 3 (Si: 1.3e18 cm^-3 here
against 3.7e18 cm^-3 measured for Si:P, T. F. Rosenbaum et al., Phys. Rev. Lett. 45, 1723
(1980), from memory).
"""

from __future__ import annotations

import math

from freezeout.physics.constants import EPS0, M0, H, Q

#: Rydberg energy Ry = m0 e^4 / (8 eps0^2 h^2), about 13.6057 eV. [eV]
RYDBERG_EV = M0 * Q**3 / (8.0 * EPS0**2 * H**2)

#: Bohr radius a_0 = eps0 h^2 / (pi m0 e^2), about 0.0529177 nm. [nm]
HYDROGEN_BOHR_RADIUS_NM = EPS0 * H**2 / (math.pi * M0 * Q**2) * 1e9

#: N^(1/3) a_B at the metal-insulator transition (Mott; Edwards and Sienko 1978). [1]
MOTT_CONSTANT = 0.26


def hydrogenic_energy_ev(mass: float, permittivity: float) -> float:
    """Effective-mass binding energy E_H = Ry (m*/m0) / eps_r^2.

    Parameters
    ----------
    mass
        Effective mass of the band the level binds to. [m0]
    permittivity
        Static relative permittivity of the host. [1]

    Returns
    -------
    float
        Binding energy. [eV]
    """
    return RYDBERG_EV * mass / permittivity**2


def bohr_radius_nm(mass: float, permittivity: float) -> float:
    """Effective Bohr radius a_B = a_0 eps_r / (m*/m0).

    Parameters
    ----------
    mass
        Effective mass. [m0]
    permittivity
        Static relative permittivity. [1]

    Returns
    -------
    float
        Bohr radius. [nm]
    """
    return HYDROGEN_BOHR_RADIUS_NM * permittivity / mass


def mott_density_cm3(mass: float, permittivity: float) -> float:
    """Mott density (MOTT_CONSTANT / a_B)^3, above which isolated levels stop existing.

    Parameters
    ----------
    mass
        Effective mass. [m0]
    permittivity
        Static relative permittivity. [1]

    Returns
    -------
    float
        Dopant concentration of the transition. [cm^-3]
    """
    a_cm = bohr_radius_nm(mass, permittivity) * 1e-7
    return (MOTT_CONSTANT / a_cm) ** 3
