"""The global stage of a fit: starting values, the grid of starts, and their batched descent.

The descent takes Levenberg-Marquardt steps on every start at once (one vectorized solve per
step) and brings each start to the bottom of its chi^2 valley before the local fit refines
the best of each basin.
"""

from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np

from freezeout.fitting.batch_lm import DESCENT_STOP, admissible_map, batch_solver, run_steps
from freezeout.fitting.model import CarrierModel
from freezeout.fitting.parameters import fit_parameters
from freezeout.fitting.problem import Problem
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


#: Compensation ratios N_min/N_maj of the starts, spread in log from 1e-4 to 0.9, so that
#: both the lightly and the heavily compensated basins are explored for every number of
#: levels (project choice, no source). [1]
COMPENSATION_RATIOS = (1e-4, 1e-3, 1e-2, 0.1, 0.3, 0.6, 0.9)

#: Compensation ratio that parts the lightly from the heavily compensated starts (project
#: choice, no source). [1]
HEAVY_RATIO = 0.05


def start_grid(model: CarrierModel, g: dict, fixed: Mapping[str, float]) -> list[dict]:
    """Candidate starting points (internal parameter values) around the guess.

    Every energy set and split of the majority total is combined with every ratio of
    :data:`COMPENSATION_RATIOS` (when the model is compensated); the net doping of each start
    is the plateau guess.

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
    ratios = COMPENSATION_RATIOS if model.compensated else (0.0,)
    ms = model.major_symbol
    out = []
    for es in energy_sets:
        for split in split_sets:
            for r in ratios:
                # under heavy compensation the freeze-out slope is E/k, not E/2k: the guess
                # (uncompensated rule) is twice the energy, so those starts try half of it too
                for scale in (1.0, 0.5) if r >= HEAVY_RATIO else (1.0,):
                    major_total = g["net_doping"] / (1.0 - r)
                    v = {}
                    for i in range(k_levels):
                        v[f"log10_N_{ms}{i + 1}"] = math.log10(major_total * split[i])
                        v[f"E_{ms}{i + 1}"] = es[i] * scale
                    if model.compensated:
                        v[model.compensation_name] = math.log10(max(r * major_total, 1e8))
                    out.append(v)
    for v in out:
        v.update(fixed)
    return out


#: Levenberg-Marquardt steps of the global stage's batched descent, at most.
DESCENT_STEPS = 30


def descend(problem: Problem, starts: list[dict], internal_fix: dict, internal_bounds: dict
             ) -> tuple[list[dict], np.ndarray, np.ndarray, np.ndarray]:
    """Bring every start down its chi^2 valley: batched Levenberg-Marquardt steps.

    All starts step together (:func:`freezeout.fitting.batch_lm.run_steps`). A start stops
    when a step lowers its chi^2 by less than 1e-4 relative (the local fit polishes it),
    when no step lowers it, or when it has merged with a start of lower chi^2 (from the
    second step on).
    The steps keep to the bounds of the local fit and keep the compensating species below
    the majority total. A parameter at a bound that the gradient pushes outward is held for
    the step. Returns the descended points, their chi^2, Fermi levels, and True for the
    points still descending when the steps ran out.
    """
    model = problem.model
    low = float(np.exp(np.min(problem.y)))
    names = [sp.internal for sp in model.specs if sp.internal not in internal_fix]
    fixed = {k: float(v) for k, v in internal_fix.items()}
    bounded = fit_parameters(model, starts[0], internal_fix, internal_bounds)
    lo = np.array([bounded[n].min for n in names])
    hi = np.array([bounded[n].max for n in names])
    admissible = admissible_map(model, names, fixed, lo, hi)

    def merge(batch, step_no: int) -> None:
        if step_no >= 1:
            batch.active &= ~_followers(model, batch.theta, names, fixed, batch.cost,
                                        batch.active, low)

    theta = admissible(np.array([[st[n] for n in names] for st in starts], dtype=float))
    b = run_steps(batch_solver(problem, names, fixed), theta, None, lo, hi, admissible,
                  DESCENT_STOP, DESCENT_STEPS, merge)
    theta, cost, fermi, active = b.theta, b.cost, b.fermi, b.active
    points = [dict(zip(names, map(float, row), strict=True)) | fixed for row in theta]
    return points, cost, fermi, active


def _followers(model: CarrierModel, theta: np.ndarray, names: list[str], fixed: dict,
               cost: np.ndarray, active: np.ndarray, low: float) -> np.ndarray:
    """True for the active starts that have merged with a start of lower chi^2.

    Two starts have merged when every log10 concentration and log10 energy, levels sorted
    by energy and the compensating species floored at ``low`` (the lowest majority density
    measured [cm^-3]), agree within 0.01: from there they descend as one.
    """
    ms = model.major_symbol
    where = {n: k for k, n in enumerate(names)}

    def column(name: str) -> np.ndarray:
        return theta[:, where[name]] if name in where else np.full(len(theta), fixed[name])

    levels = range(1, model.n_levels + 1)
    energy = np.stack([column(f"E_{ms}{i}") for i in levels], axis=1)
    conc = np.stack([column(f"log10_N_{ms}{i}") for i in levels], axis=1)
    order = np.lexsort((conc, energy), axis=1)  # by energy, then concentration
    parts = [np.log10(np.maximum(np.take_along_axis(energy, order, axis=1), 1e-6)),
             np.take_along_axis(conc, order, axis=1)]
    if model.compensated:
        parts.append(np.maximum(column(model.compensation_name), math.log10(low))[:, None])
    rows = np.concatenate(parts, axis=1)
    with np.errstate(invalid="ignore"):
        near = np.max(np.abs(rows[:, None, :] - rows[None, :, :]), axis=2) < 0.01
    out = np.zeros(len(theta), dtype=bool)
    leaders: list[int] = []
    for i in (int(k) for k in np.argsort(cost) if np.isfinite(cost[k])):
        if active[i] and leaders and near[i, leaders].any():
            out[i] = True
        else:
            leaders.append(i)
    return out


def heavy_start(model: CarrierModel, values: dict) -> bool:
    """True when internal values are heavily compensated (ratio of :data:`HEAVY_RATIO` up)."""
    if not model.compensated:
        return False
    major = sum(10.0 ** values[k] for k in model.major_concentration_names)
    return 10.0 ** values[model.compensation_name] / major >= HEAVY_RATIO


def best_per_basin(model: CarrierModel, starts: list[dict], costs: np.ndarray, per_basin: int
                   ) -> list[int]:
    """Indices of the best ``per_basin`` finite starts of light and of heavy compensation.

    Starts below :data:`HEAVY_RATIO` are lightly compensated, the others heavily; an
    uncompensated model has one group. Best (lowest chi^2) first.
    """
    groups: dict[bool, list[int]] = {}
    for i, st in enumerate(starts):
        if np.isfinite(costs[i]):
            groups.setdefault(heavy_start(model, st), []).append(i)
    out = []
    for members in groups.values():
        out += sorted(members, key=lambda i: costs[i])[:per_basin]
    return sorted(out, key=lambda i: costs[i])
