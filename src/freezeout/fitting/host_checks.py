"""Fitted levels against the host's effective-mass (hydrogenic) estimates.

Two checks of each partially ionized majority level, from the material's static permittivity
and the conductivity mass of the majority band (:mod:`freezeout.physics.hydrogenic`):

* energy: a level deeper than :data:`DEEP_FACTOR` times the hydrogenic energy E_H is not an
  effective-mass (shallow) dopant; shallow donors and acceptors lie within about twice E_H
  (Si:P 45 meV against 26 meV). The fit carries no label saying which levels are meant to be
  shallow, so the note states that fact and leaves the consequence conditional: a real deep
  level is named deep, not called wrong. Held energies are the user's and are not checked;
  energies the data do not determine are not checked either.
* concentration: a level above the Mott density (0.26/a_B)^3 cannot be an isolated level
  with one ionization energy (impurity band, metallic conduction). The estimate is
  uncertain by a factor of about 3 (Si: 1.3e18 cm^-3 here against 3.7e18 cm^-3 measured for
  Si:P), which the note says.

A material without a permittivity or the conductivity mass (optional in a user file) is not
checked. The factor 5 is a project choice, no source.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from freezeout.physics.hydrogenic import (
    MOTT_CONSTANT,
    bohr_radius_nm,
    hydrogenic_energy_ev,
    mott_density_cm3,
)
from freezeout.physics.materials import Material

#: Energy over the hydrogenic estimate above which a level is called deep. [1]
DEEP_FACTOR = 5.0


@dataclass(frozen=True)
class LevelCheck:
    """What the host checks read of one fitted majority level.

    Attributes
    ----------
    stem
        Name stem, e.g. ``"D1"``.
    energy
        Ionization energy. [eV]
    concentration
        Concentration. [cm^-3]
    energy_checked
        False when the energy is held or not determined by the data.
    """

    stem: str
    energy: float
    concentration: float
    energy_checked: bool


def host_warnings(material: Material, carrier: str, levels: list[LevelCheck]) -> list[str]:
    """Notes on levels deeper than an effective-mass level or denser than the Mott density.

    Parameters
    ----------
    material
        Host material.
    carrier
        Majority carrier, ``"n"`` (levels are donors) or ``"p"`` (acceptors).
    levels
        The majority levels of the fit.
    """
    eps = material.relative_permittivity
    mass = (material.electron_conductivity_mass if carrier == "n"
            else material.hole_conductivity_mass)
    if eps is None or mass is None:
        return []
    kind = "donor" if carrier == "n" else "acceptor"
    e_h = hydrogenic_energy_ev(mass, eps)
    a_b = bohr_radius_nm(mass, eps)
    n_mott = mott_density_cm3(mass, eps)
    host = f"m* = {mass:g} m0, eps_r = {eps:g}"
    out = []
    for lv in levels:
        ratio = lv.energy / e_h
        if lv.energy_checked and np.isfinite(ratio) and ratio > DEEP_FACTOR:
            out.append(
                f"E_{lv.stem} = {1e3 * lv.energy:.3g} meV is {ratio:.2g} times the "
                f"effective-mass (hydrogenic) {kind} energy of {material.name} "
                f"({1e3 * e_h:.2g} meV, {host}): a deep level, not a shallow hydrogenic "
                f"dopant (those lie within about twice that estimate). If the sample is meant "
                f"to hold only shallow {kind}s, this energy is not theirs: a missing level or "
                "unmodelled compensation may have moved it")
        if np.isfinite(lv.concentration) and lv.concentration > n_mott:
            out.append(
                f"N_{lv.stem} = {lv.concentration:.2g} cm^-3 is above the Mott density of "
                f"{kind}s in {material.name} (about {n_mott:.2g} cm^-3 from N^(1/3) a_B = "
                f"{MOTT_CONSTANT:g}, a_B = {a_b:.2g} nm, {host}; uncertain by a factor of "
                f"about 3): there the {kind}s' orbits overlap into an impurity band, so an "
                f"isolated level with one ionization energy, frozen out at low temperature, "
                f"does not describe the sample and E_{lv.stem} is an effective value at best")
    return out
