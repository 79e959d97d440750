"""Model curves of a fit on a fine temperature grid, for figures."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from freezeout.fitting.result import FitResult
from freezeout.physics.neutrality import DopantLevel, solve_charge_neutrality


@dataclass(frozen=True)
class ModelCurves:
    """The fitted model on a grid.

    Attributes
    ----------
    temperature
        Grid. [K]
    majority, minority
        Majority- and minority-carrier densities. [cm^-3]
    intrinsic
        Non-degenerate intrinsic density n_i. [cm^-3]
    level_names
        Names of the levels (``"D1"``, ``"A"``...), order of the next three.
    level_kinds
        ``"donor"``/``"acceptor"`` per level.
    ionized_density
        Ionized concentration of each level. [cm^-3]
    ionized_fraction
        Ionized fraction of each level. [1]
    level_energy
        Level position above E_v (NaN for a fully ionized species). [eV]
    fermi_level, band_gap
        E_F - E_v and E_c - E_v. [eV]
    """

    temperature: np.ndarray
    majority: np.ndarray
    minority: np.ndarray
    intrinsic: np.ndarray
    level_names: tuple[str, ...]
    level_kinds: tuple[str, ...]
    ionized_density: tuple[np.ndarray, ...]
    ionized_fraction: tuple[np.ndarray, ...]
    level_energy: tuple[np.ndarray, ...]
    fermi_level: np.ndarray
    band_gap: np.ndarray


def _energy(lv: DopantLevel):
    """A level's ionization energy at its concentration. [eV]"""
    return lv.energy if lv.lowering is None else lv.lowering.energy(lv.energy,
                                                                    lv.concentration)


def model_curves(result: FitResult, n_points: int = 400) -> ModelCurves:
    """Evaluate a fit's model from a bit below to a bit above the data's temperatures."""
    material = result.material
    t_data = result.data.temperature
    t = np.geomspace(0.9 * t_data.min(), 1.05 * t_data.max(), n_points)
    named = {"donor": [], "acceptor": []}  # (name, level), donors first in the curves
    for lv in result.levels:
        e = None if lv.energy is None else lv.energy.value
        named[lv.kind].append((lv.name, DopantLevel(lv.kind, lv.concentration.value, e,
                                                     lv.degeneracy, lv.excited, lv.lowering)))
    donors = [d for _, d in named["donor"]]
    acceptors = [a for _, a in named["acceptor"]]
    names = [name for name, _ in (*named["donor"], *named["acceptor"])]
    kinds = ["donor"] * len(donors) + ["acceptor"] * len(acceptors)
    res = solve_charge_neutrality(t, material, donors, acceptors, result.statistics_model)
    fractions = (*res.donor_ionized, *res.acceptor_ionized)
    levels = donors + acceptors
    dens = tuple(f * lv.concentration for f, lv in zip(fractions, levels, strict=True))
    energies = []
    for lv in levels:
        if lv.energy is None:
            energies.append(np.full(t.shape, np.nan))
        elif lv.kind == "donor":  # (the energy of its E(N) model when set)
            energies.append(res.band_gap - _energy(lv))
        else:
            energies.append(np.full(t.shape, float(_energy(lv))))
    major, minor = (res.n, res.p) if result.carrier == "n" else (res.p, res.n)
    return ModelCurves(t, major, minor, material.intrinsic_density(t), tuple(names),
                       tuple(kinds), dens, tuple(fractions), tuple(energies), res.fermi_level,
                       res.band_gap)
