"""Starting values of a fit from the data, and the grid of starts the global stage tries."""

from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np

from freezeout.fitting.model import CarrierModel
from freezeout.physics.bands import thermal_energy
from freezeout.physics.materials import Material


def guess(temperature: np.ndarray, density: np.ndarray, material: Material) -> dict:
    """Starting values from the data: saturation plateau and freeze-out slope.

    Parameters
    ----------
    temperature
        Temperatures, ascending. [K]
    density
        Majority-carrier density. [cm^-3]
    material
        Host, for the intrinsic density that marks points to leave out of the plateau.

    Returns
    -------
    dict
        ``net_doping`` [cm^-3], ``energy`` [eV] (from -2 k d ln(n T^-3/4)/d(1/T) on the
        freeze-out points, the uncompensated slope rule), ``has_freezeout`` (bool).
    """
    ni = material.intrinsic_density(temperature)
    extrinsic = ni < 0.05 * density
    plateau_pool = density[extrinsic] if extrinsic.any() else density
    net = float(np.max(plateau_pool))
    frozen = (density < 0.5 * net) & extrinsic
    # only the low-temperature side of the plateau
    t_peak = temperature[extrinsic][np.argmax(plateau_pool)] if extrinsic.any() else np.inf
    frozen &= temperature < t_peak
    energy = 0.05
    has_freezeout = int(frozen.sum()) >= 2
    if has_freezeout:
        x = 1.0 / temperature[frozen]
        y = np.log(density[frozen] * temperature[frozen] ** -0.75)
        slope = np.polyfit(x, y, 1)[0]  # [K]
        energy = float(np.clip(-2.0 * slope * thermal_energy(1.0), 1e-3,
                               0.45 * material.band_gap(300.0)))
    return {"net_doping": net, "energy": energy, "has_freezeout": has_freezeout}


def start_grid(model: CarrierModel, g: dict, fixed: Mapping[str, float]) -> list[dict]:
    """Candidate starting points (internal parameter values) around the guess.

    Parameters
    ----------
    model
        The model to start.
    g
        The guess (:func:`guess`).
    fixed
        Internal names and values of the held parameters; every start carries them.
    """
    k_levels = model.n_levels
    e0 = g["energy"]
    if k_levels == 1:
        energy_sets = [(e0 * f,) for f in (0.5, 1.0, 2.0)]
        split_sets = [(1.0,)]
    else:
        spread = np.geomspace(0.5, 2.5, k_levels)
        energy_sets = [tuple(e0 * spread * f) for f in (0.6, 1.0, 1.6)]
        split_sets = [tuple(np.full(k_levels, 1.0 / k_levels))]
        w = np.geomspace(3.0, 1.0, k_levels)
        split_sets.append(tuple(w / w.sum()))
        split_sets.append(tuple(w[::-1] / w.sum()))
    ratios = (1e-4, 1e-2, 0.2, 0.6) if model.compensated else (0.0,)
    ms = model.major_symbol
    out = []
    for es in energy_sets:
        for split in split_sets:
            for r in ratios:
                major_total = g["net_doping"] / (1.0 - r)
                v = {}
                for i in range(k_levels):
                    v[f"log10_N_{ms}{i + 1}"] = math.log10(major_total * split[i])
                    v[f"E_{ms}{i + 1}"] = es[i]
                if model.compensated:
                    v[model.compensation_name] = math.log10(max(r * major_total, 1e8))
                out.append(v)
    for v in out:
        v.update(fixed)
    return out
