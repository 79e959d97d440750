"""Majority-carrier mobility and Hall factor from a charge-neutrality solution.

Joins :mod:`freezeout.physics.neutrality` (ionized fractions of the levels at each T) to
:mod:`freezeout.physics.carrier_mobility`: the ionized-impurity density N_I is the sum of
the ionized densities of every level (donors and acceptors, charge number 1), the screening
density n' the general form of :func:`freezeout.physics.screening.screening_density` (both
bands and every partially ionized level), and the neutral density N_N that of the
majority-type levels. The mechanisms are chosen by name (:data:`MECHANISMS`).

References
----------
.. [1] H. Brooks, Phys. Rev. 83, 879 (1951); D. Chattopadhyay, H. J. Queisser, Rev. Mod.
   Phys. 53, 745 (1981).
.. [2] E. Conwell, V. F. Weisskopf, Phys. Rev. 77, 388 (1950).
.. [3] C. Erginsoy, Phys. Rev. 79, 1013 (1950).
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence

import numpy as np

from freezeout.errors import InputError
from freezeout.physics.carrier_mobility import (
    CarrierMobility,
    carrier_mobility,
    scattering_parameters,
)
from freezeout.physics.hall_factor import QUADRATURE_NODES
from freezeout.physics.materials import Material
from freezeout.physics.neutrality import DopantLevel, NeutralityResult
from freezeout.physics.screening import (
    ionized_impurity_density,
    neutral_impurity_density,
    screening_density,
)

#: Valid scattering-mechanism names, in canonical order.
MECHANISMS = ("lattice", "brooks-herring", "conwell-weisskopf", "neutral")
_ALIASES = {"erginsoy": "neutral", "bh": "brooks-herring", "cw": "conwell-weisskopf"}


def check_mechanisms(names: str | Iterable[str]) -> tuple[str, ...]:
    """Mechanism names, checked, without repeats, in the order of :data:`MECHANISMS`.

    Parameters
    ----------
    names
        Names, or one string joined with ``+`` or ``,`` (``"lattice+brooks-herring"``);
        ``erginsoy`` is read as ``neutral``.

    Raises
    ------
    InputError
        An unknown name (the message lists the valid ones), none at all, or both
        ionized-impurity forms (Brooks-Herring and Conwell-Weisskopf are alternatives).
    """
    if isinstance(names, str):
        names = names.replace(",", "+").split("+")
    chosen = set()
    for raw in names:
        key = str(raw).strip().lower().replace("_", "-")
        if not key:
            continue
        key = _ALIASES.get(key, key)
        if key not in MECHANISMS:
            raise InputError(f"unknown mobility mechanism {raw!r}; valid: "
                             + ", ".join(MECHANISMS) + " (neutral is Erginsoy's)")
        chosen.add(key)
    if not chosen:
        raise InputError("no mobility mechanism given; valid: " + ", ".join(MECHANISMS))
    if {"brooks-herring", "conwell-weisskopf"} <= chosen:
        raise InputError("brooks-herring and conwell-weisskopf are two forms of the same "
                         "ionized-impurity scattering: choose one")
    return tuple(m for m in MECHANISMS if m in chosen)


def check_lattice(mechanisms: Sequence[str], mobility_300, exponent) -> tuple[float, float]:
    """Lattice parameters (mu_300, a) checked against the mechanisms, as floats.

    Without the lattice mechanism the pair is (inf, 0): no lattice scattering.

    Raises
    ------
    InputError
        Lattice chosen without both parameters, or a parameter not finite and positive
        (mu_300) or finite (a).
    """
    if "lattice" not in mechanisms:
        return float("inf"), 0.0
    if mobility_300 is None or exponent is None:
        raise InputError("the lattice mechanism needs the lattice mobility at 300 K and its "
                         "temperature exponent (e.g. 1400 cm^2/(V s) and 2.4 for electrons "
                         "in Si)")
    mu, a = float(mobility_300), float(exponent)
    if not (np.isfinite(mu) and mu > 0):
        raise InputError(f"lattice mobility at 300 K must be > 0, got {mobility_300!r}")
    if not np.isfinite(a):
        raise InputError(f"lattice exponent must be finite, got {exponent!r}")
    return mu, a


def majority_mobility(material: Material, carrier: str, donors: Sequence[DopantLevel],
                      acceptors: Sequence[DopantLevel], result: NeutralityResult,
                      mechanisms: Sequence[str], lattice_mobility_300=np.inf,
                      lattice_exponent=0.0, nodes: int = QUADRATURE_NODES) -> CarrierMobility:
    """Mobility and Hall factor of the majority carrier at each temperature of ``result``.

    Parameters
    ----------
    material
        Host (conductivity mass of ``carrier``, permittivity).
    carrier
        ``"n"`` or ``"p"``.
    donors, acceptors
        The levels the neutrality was solved for (concentrations may broadcast as a batch).
    result
        The neutrality solution (ionized fractions, densities).
    mechanisms
        Checked names (:func:`check_mechanisms`).
    lattice_mobility_300, lattice_exponent
        Lattice power law; ignored without ``"lattice"``. [cm^2/(V s)], [1]
    nodes
        Quadrature nodes of the energy averages. [1]

    Returns
    -------
    CarrierMobility
    """
    mass, permittivity = scattering_parameters(material, carrier)
    levels = [(np.asarray(lv.concentration, dtype=float) * f, lv.concentration)
              for lv, f in zip((*donors, *acceptors),
                               (*result.donor_ionized, *result.acceptor_ionized), strict=True)]
    major, minor = (result.n, result.p) if carrier == "n" else (result.p, result.n)
    t = result.temperature
    ionized = 0.0
    screening = None
    if "brooks-herring" in mechanisms or "conwell-weisskopf" in mechanisms:
        ionized = ionized_impurity_density([x for x, _ in levels], 0.0)
        if "brooks-herring" in mechanisms:
            screening = screening_density(major, levels, minority=minor)
    neutral = 0.0
    if "neutral" in mechanisms:
        major_levels = levels[:len(donors)] if carrier == "n" else levels[len(donors):]
        neutral = neutral_impurity_density(major_levels)
    if "lattice" not in mechanisms:
        lattice_mobility_300, lattice_exponent = np.inf, 0.0
    ionized = np.broadcast_to(ionized, np.broadcast_shapes(np.shape(ionized), np.shape(major)))
    return carrier_mobility(t, mass=mass, permittivity=permittivity,
                            lattice_mobility_300=lattice_mobility_300,
                            lattice_exponent=lattice_exponent, ionized_density=ionized,
                            screening_density=screening, neutral_density=neutral,
                            nodes=nodes)
