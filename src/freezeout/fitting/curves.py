"""Model curves of a fit on a fine temperature grid, for figures."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from freezeout.fitting.result import FitResult
from freezeout.physics.materials import material_from_mapping
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


def model_curves(result: FitResult, n_points: int = 400) -> ModelCurves:
    """Evaluate a fit's model from a bit below to a bit above the data's temperatures."""
    mat_dict = {k: v for k, v in result.material.items() if k not in ("description", "sources")}
    if mat_dict.get("relative_permittivity") is None:
        mat_dict.pop("relative_permittivity", None)
    material = material_from_mapping(mat_dict)
    t_data = np.asarray(result.data["temperature_K"])
    t = np.geomspace(0.9 * t_data.min(), 1.05 * t_data.max(), n_points)
    donors, acceptors, names, kinds = [], [], [], []
    for lv in result.levels:
        e = None if lv.energy is None else lv.energy.value
        g = lv.degeneracy
        dl = DopantLevel(lv.kind, lv.concentration.value, e, g)
        (donors if lv.kind == "donor" else acceptors).append((lv.name, dl))
    for name, _ in (*donors, *acceptors):
        names.append(name)
    kinds = ["donor"] * len(donors) + ["acceptor"] * len(acceptors)
    res = solve_charge_neutrality(t, material, [d for _, d in donors], [a for _, a in acceptors],
                                  result.statistics_model)
    fractions = (*res.donor_ionized, *res.acceptor_ionized)
    levels = [d for _, d in donors] + [a for _, a in acceptors]
    dens = tuple(f * lv.concentration for f, lv in zip(fractions, levels, strict=True))
    energies = []
    for lv in levels:
        if lv.energy is None:
            energies.append(np.full(t.shape, np.nan))
        elif lv.kind == "donor":
            energies.append(res.band_gap - lv.energy)
        else:
            energies.append(np.full(t.shape, float(lv.energy)))
    major, minor = (res.n, res.p) if result.carrier == "n" else (res.p, res.n)
    return ModelCurves(t, major, minor, material.intrinsic_density(t), tuple(names),
                       tuple(kinds), dens, tuple(fractions), tuple(energies), res.fermi_level,
                       res.band_gap)
