"""One carrier's mobility and Hall factor from lattice, ionized- and neutral-impurity scattering.

Puts :mod:`freezeout.physics.mobility` and :mod:`freezeout.physics.hall_factor` together
for the fit: per-mechanism mobilities, their Matthiessen combination, and the drift mobility
and Hall factor of the combined energy-resolved relaxation time. The lattice mechanism is
given the acoustic energy dependence tau ~ E^(-1/2) whatever its empirical temperature
exponent (project choice, no source: the power law stands in for acoustic plus intervalley
or optical phonons, whose energy dependences differ).

References
----------
.. [1] H. Brooks, Phys. Rev. 83, 879 (1951); D. Chattopadhyay, H. J. Queisser, Rev. Mod.
   Phys. 53, 745 (1981).
.. [2] E. Conwell, V. F. Weisskopf, Phys. Rev. 77, 388 (1950).
.. [3] C. Erginsoy, Phys. Rev. 79, 1013 (1950).
.. [4] E. H. Putley, *The Hall Effect and Semiconductor Physics* (Dover, 1968), ch. 4
   (from memory).
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from freezeout.errors import InputError
from freezeout.physics.hall_factor import (
    IONIZED_IMPURITY_EXPONENT,
    LATTICE_EXPONENT,
    NEUTRAL_IMPURITY_EXPONENT,
    QUADRATURE_NODES,
    scattering_average,
)
from freezeout.physics.materials import Material
from freezeout.physics.mobility import (
    brooks_herring_mobility,
    conwell_weisskopf_mobility,
    erginsoy_mobility,
    lattice_mobility,
    matthiessen_mobility,
)


class CarrierMobility(NamedTuple):
    """Mobilities and Hall factor of one carrier, on the broadcast shape.

    Attributes
    ----------
    lattice, ionized, neutral
        Mobility each mechanism alone allows (inf where it is absent). [cm^2/(V s)]
    matthiessen
        Their combination by Matthiessen's rule. [cm^2/(V s)]
    drift
        q <tau> / m_c of the combined relaxation time. [cm^2/(V s)]
    hall_factor
        r_H = <tau^2> / <tau>^2. [1]
    hall
        Hall mobility r_H times the drift mobility. [cm^2/(V s)]
    """

    lattice: np.ndarray
    ionized: np.ndarray
    neutral: np.ndarray
    matthiessen: np.ndarray
    drift: np.ndarray
    hall_factor: np.ndarray
    hall: np.ndarray


def scattering_parameters(material: Material, carrier: str) -> tuple[float, float]:
    """Conductivity mass and relative permittivity of ``carrier`` ("n" or "p") in a material.

    Returns
    -------
    tuple of float
        (m_c [m0], eps_r [1]).

    Raises
    ------
    InputError
        When the material lacks either; the message names the missing key.

    References
    ----------
    Project choice, no source (the keys of :data:`freezeout.physics.materials.MATERIAL_KEYS`).
    """
    mass = material.conductivity_mass(carrier)
    if material.relative_permittivity is None:
        raise InputError(f"material {material.name!r} has no relative_permittivity: add it to "
                         "the material file (static relative permittivity)",
                         column="relative_permittivity")
    return mass, material.relative_permittivity


def carrier_mobility(temperature, *, mass, permittivity, lattice_mobility_300, lattice_exponent,
                     ionized_density, screening_density=None, neutral_density=0.0,
                     nodes: int = QUADRATURE_NODES) -> CarrierMobility:
    """Mobility and Hall factor of one carrier over a temperature grid.

    Parameters
    ----------
    temperature
        Temperature. [K]
    mass
        Conductivity effective mass. [m0]
    permittivity
        Static relative permittivity. [1]
    lattice_mobility_300
        Lattice-limited mobility at 300 K. [cm^2/(V s)]
    lattice_exponent
        Temperature exponent a of mu_L ~ T^-a. [1]
    ionized_density
        Ionized-impurity density N_I (0 for none). [cm^-3]
    screening_density
        Screening density n' for Brooks-Herring; None uses the unscreened
        Conwell-Weisskopf form instead. [cm^-3]
    neutral_density
        Neutral majority-level density N_N (0 for none). [cm^-3]
    nodes
        Quadrature nodes of the energy averages
        (:func:`freezeout.physics.hall_factor.scattering_average`). [1]

    Returns
    -------
    CarrierMobility

    References
    ----------
    As in the module docstring: [1]_ Brooks-Herring, [2]_ Conwell-Weisskopf, [3]_ Erginsoy,
    [4]_ the averages of the combined relaxation time.
    """
    t, n_i = np.broadcast_arrays(np.asarray(temperature, dtype=float),
                                 np.asarray(ionized_density, dtype=float))
    present = n_i > 0
    safe = np.where(present, n_i, 1.0)
    if screening_density is None:
        ionized = conwell_weisskopf_mobility(t, safe, mass, permittivity)
    else:
        ionized = brooks_herring_mobility(t, safe, screening_density, mass, permittivity)
    ionized = np.where(present, ionized, np.inf)  # no ionized impurities: no such scattering
    lattice = lattice_mobility(t, lattice_mobility_300, lattice_exponent)
    neutral = np.broadcast_to(erginsoy_mobility(neutral_density, mass, permittivity), t.shape)
    average = scattering_average([lattice, ionized, neutral],
                                 [LATTICE_EXPONENT, IONIZED_IMPURITY_EXPONENT,
                                  NEUTRAL_IMPURITY_EXPONENT], nodes)
    return CarrierMobility(lattice=lattice, ionized=ionized, neutral=neutral,
                           matthiessen=matthiessen_mobility(lattice, ionized, neutral),
                           drift=average.drift_mobility, hall_factor=average.hall_factor,
                           hall=average.hall_mobility)
