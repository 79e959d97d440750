"""Parameter rows of a profile refit's reduced coordinates, with their derivatives.

A refit at a held value x moves the reduced coordinates z: the free parameters less the one
the held value sets (``dep``), a free compensating concentration linearly (z = N_min /
N_min_fit, :class:`freezeout.fitting.profile.Profiler`). :func:`complete_rows` maps z back to
the parameters theta, works out the dependent parameter from the held value (a parameter
held directly, or the net doping or the compensation ratio held through the concentration
they set), the violation of that dependent's bounds, and, by the chain rule, d theta/dz and
d violation/dz. With the residuals' own Jacobian d r/d theta (implicit differentiation,
:meth:`freezeout.fitting.problem.Problem.batch_residuals_jacobian`) that gives d r/dz
without the forward differences that multiplied every solve by the number of coordinates.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

_LN10 = math.log(10.0)


@dataclass(frozen=True)
class Rows:
    """Parameter rows of reduced rows and their derivatives.

    Attributes
    ----------
    theta
        The parameters (rows, free parameters), the dependent clipped into its bounds.
    violation
        How far the dependent's value lies outside its bounds (rows). [dex]
    d_theta
        d theta / d z (rows, free parameters, reduced coordinates).
    d_violation
        d violation / d z (rows, reduced coordinates).
    """

    theta: np.ndarray
    violation: np.ndarray
    d_theta: np.ndarray
    d_violation: np.ndarray


def complete_rows(profiler, target, z: np.ndarray, x: float) -> Rows:
    """Parameter rows and their derivatives for reduced rows ``z`` at held value ``x``.

    Parameters
    ----------
    profiler
        The :class:`freezeout.fitting.profile.Profiler` (its free names, best fit, bounds,
        linear coordinates, fixed values).
    target
        The quantity profiled (its key and the index ``dep`` of the parameter it sets).
    z
        Reduced rows (rows, free parameters - 1).
    x
        The held value (log10 for concentrations and derived quantities).
    """
    free, dep = profiler.free, target.dep
    m, n = z.shape[0], len(free)
    cols = [i for i in range(n) if i != dep]
    theta = np.empty((m, n))
    d_theta = np.zeros((m, n, n - 1))
    lin = profiler.linear
    for j, i in enumerate(cols):
        if lin[i]:
            zz = np.maximum(z[:, j], 1e-300)
            theta[:, i] = profiler.theta[i] + np.log10(zz)
            d_theta[:, i, j] = 1.0 / (zz * _LN10)
        else:
            theta[:, i] = z[:, j]
            d_theta[:, i, j] = 1.0
    if target.key in free:
        theta[:, dep] = x
        return Rows(theta, np.zeros(m), d_theta, np.zeros((m, n - 1)))
    need, d_need = _need(profiler, target.key, theta, dep, x)
    lo, hi = profiler.lower[dep], profiler.upper[dep]
    tiny = 10.0 ** (lo - 3.0)
    raw = np.log10(np.maximum(need, tiny))
    d_raw = np.where((need > tiny)[:, None], d_need / (np.maximum(need, tiny)[:, None] * _LN10),
                     0.0)
    inside = (raw > lo) & (raw < hi)
    theta[:, dep] = np.clip(raw, lo, hi)
    d_dep = np.where(inside[:, None], d_raw, 0.0)  # d theta_dep / d theta (rows, n)
    if target.key == "ratio":
        # a compensation held below the floor of its concentration is the floor: the model
        # cannot tell them apart, so that is no infeasibility
        viol = np.maximum(raw - hi, 0.0)
        d_viol = np.where((raw > hi)[:, None], d_raw, 0.0)
    else:
        # below the floor in dex, and linear in the shortfall beyond 3 dex (a slope for the
        # descent to climb back even where the need is negative)
        viol = (np.maximum(lo - raw, 0.0) + np.maximum(raw - hi, 0.0)
                + np.maximum(tiny - need, 0.0) / tiny)
        d_viol = (np.where((raw < lo)[:, None], -d_raw, 0.0)
                  + np.where((raw > hi)[:, None], d_raw, 0.0)
                  + np.where((need < tiny)[:, None], -d_need / tiny, 0.0))
    # the chain rule through the reduced coordinates: d theta_i / d z_j is diagonal
    own = d_theta[:, cols, np.arange(n - 1)]  # d theta_cols[j] / d z_j (rows, n - 1)
    d_theta[:, dep, :] = d_dep[:, cols] * own
    return Rows(theta, viol, d_theta, d_viol[:, cols] * own)


def _need(profiler, key: str, theta: np.ndarray, dep: int, x: float
          ) -> tuple[np.ndarray, np.ndarray]:
    """The dependent concentration a held net doping or ratio needs, and d need/d theta.

    Net doping held: N_maj1 = 10^x + N_min - (other N_maj), or N_min = (sum N_maj) - 10^x
    when the compensation is the dependent; ratio held: N_min = 10^x sum N_maj, or
    N_maj1 = N_min / 10^x - (other N_maj). [cm^-3], [cm^-3 per unit of theta]
    """
    free, m = profiler.free, theta.shape[0]
    name = free[dep]
    minor = profiler.minor

    def conc(k: str) -> tuple[np.ndarray, int | None]:
        if k in free:
            i = free.index(k)
            return 10.0 ** theta[:, i], i
        return np.full(m, 10.0 ** profiler.fixed[k]), None

    d_need = np.zeros((m, len(free)))
    held = 10.0**x
    majors = [conc(k) for k in profiler.major if k != name]
    others = sum((c for c, _ in majors), np.zeros(m))
    if name == minor:
        factor = 1.0 if key == "net" else held
        need = others - held if key == "net" else held * others
        for c, i in majors:
            if i is not None:
                d_need[:, i] = factor * c * _LN10
        return need, d_need
    n_min, i_min = conc(minor) if minor else (np.zeros(m), None)
    need = held + n_min - others if key == "net" else n_min / held - others
    for c, i in majors:
        if i is not None:
            d_need[:, i] = -c * _LN10
    if i_min is not None:
        d_need[:, i_min] = n_min * _LN10 * (1.0 if key == "net" else 1.0 / held)
    return need, d_need
