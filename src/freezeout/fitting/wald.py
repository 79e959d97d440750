"""Wald estimates of a least-squares fit: a parameter and the derived net doping and ratio.

From the covariance at the solution (cov = (J^T J)^-1, scaled as the fit states), the 95 %
interval is value +- t se with Student's t at the fit's degrees of freedom, in log space for
a parameter fitted as log10 ("wald-log") and linear otherwise ("wald-linear"), clipped to the
parameter's range (common practice, no source). The net doping |N_maj - N_min| and the ratio
N_min / N_maj take their errors by the delta method (JCGM 100:2008, GUM, 5.1.2).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from freezeout.fitting.quantiles import t_quantile
from freezeout.fitting.result import Estimate, LevelEstimate

_LN10 = math.log(10.0)


def wald_estimate(v, s, t_q, lo, hi, log) -> Estimate:
    """The Estimate of one fitted parameter.

    Parameters
    ----------
    v, s
        Internal value and its standard error (log10 units when ``log``).
    t_q
        Student's t quantile for 95 %.
    lo, hi
        The parameter's range (internal units).
    log
        True for a parameter fitted as log10 of the quantity.
    """
    v, s, lo, hi = float(v), float(s), float(lo), float(hi)
    if log:
        value = 10.0**v
        return Estimate(value, _LN10 * value * s,
                        (10.0 ** max(v - t_q * s, lo), 10.0 ** min(v + t_q * s, hi)),
                        "wald-log")
    return Estimate(v, s, (max(v - t_q * s, lo), min(v + t_q * s, hi)), "wald-linear")


def net_and_ratio(model, values, idx, cov, t_q) -> tuple[Estimate, Estimate]:
    """Net doping |N_maj - N_min| and ratio N_min / N_maj with delta-method errors.

    Parameters
    ----------
    model
        The :class:`freezeout.fitting.model.CarrierModel` (names of the concentrations).
    values
        Internal values at the solution.
    idx
        Internal name -> row of ``cov`` of each free parameter.
    cov
        Covariance of the free parameters.
    t_q
        Student's t quantile for 95 %.
    """
    majors = list(model.major_concentration_names)
    cname = model.compensation_name
    n_maj = sum(10.0 ** values[k] for k in majors)
    n_min = 10.0 ** values[cname] if model.compensated else 0.0
    g_net = np.zeros(len(idx))
    g_ratio = np.zeros(len(idx))  # gradient of ln ratio
    for k in majors:
        if k in idx:
            g_net[idx[k]] = _LN10 * 10.0 ** values[k]
            g_ratio[idx[k]] = -_LN10 * 10.0 ** values[k] / n_maj
    if model.compensated and cname in idx:
        g_net[idx[cname]] = -_LN10 * n_min
        g_ratio[idx[cname]] = _LN10
    net_v = abs(n_maj - n_min)
    s_net = float(np.sqrt(max(g_net @ cov @ g_net, 0.0)))
    net = Estimate(net_v, s_net, (max(net_v - t_q * s_net, 0.0), net_v + t_q * s_net),
                   "wald-linear")
    ratio = n_min / n_maj
    if ratio > 0:
        s_ln = float(np.sqrt(max(g_ratio @ cov @ g_ratio, 0.0)))
        comp = Estimate(ratio, ratio * s_ln, (ratio * math.exp(-t_q * s_ln),
                                              min(ratio * math.exp(t_q * s_ln), 1.0)),
                        "wald-log")
    else:
        comp = Estimate(0.0, math.nan, (math.nan, math.nan), "fixed")
    return net, comp


def parameter_estimate(name: str, values: dict, idx: dict, x, se, t_q, bounds,
                       common: float = 0.0) -> Estimate:
    """The Estimate of an internal parameter of a refit: held, or Wald from its error.

    Parameters
    ----------
    name
        Internal name (``log10_N_D1``, ``E_D1``, ``log10_mu300_n``...).
    values
        Internal values at the solution, held ones included.
    idx
        Internal name -> index into ``x`` and ``se`` of each free parameter.
    x, se
        Free values and their standard errors (internal units).
    t_q
        Student's t quantile for 95 %.
    bounds
        (lower, upper) arrays of the free parameters' ranges.
    common
        Relative uncertainty common to every point (the thickness), added to each
        concentration in quadrature (concentrations scale with it, energies do not). [1]
    """
    if name not in idx:
        v = values[name]
        return Estimate(10.0**v if name.startswith("log10_") else v, math.nan,
                        (math.nan, math.nan), "fixed")
    i = idx[name]
    s_i = se[i]
    if common > 0 and name.startswith("log10_N_"):
        s_i = math.hypot(s_i, common / _LN10)
    return wald_estimate(x[i], s_i, t_q, bounds[0][i], bounds[1][i], name.startswith("log10_"))


def with_common_scale(net: Estimate, common: float, t_q: float) -> Estimate:
    """The net doping with a relative uncertainty common to every point added in quadrature."""
    if not common > 0 or not math.isfinite(net.stderr):
        return net
    s_net = math.hypot(net.stderr, common * net.value)
    return Estimate(net.value, s_net, (max(net.value - t_q * s_net, 0.0),
                                       net.value + t_q * s_net), net.method)


@dataclass(frozen=True)
class RefitEstimates:
    """The Wald estimates of a refit (the joint or the two-carrier fit) of the levels.

    Attributes
    ----------
    free
        Internal names of the free parameters, the order of ``x`` and ``se``.
    fixed
        Held internal values.
    x, se
        Free values and their standard errors (internal units).
    dof
        Degrees of freedom of the refit (Student's t for the 95 % intervals).
    bounds
        (lower, upper) arrays of the free parameters' ranges.
    common
        Relative uncertainty common to every point (the thickness): it scales every
        concentration and leaves energies and mobilities alone. [1]
    """

    free: tuple
    fixed: dict
    x: np.ndarray
    se: np.ndarray
    dof: int
    bounds: tuple
    common: float = 0.0

    @property
    def t_q(self) -> float:
        """Student's t quantile for 95 % at the refit's degrees of freedom."""
        return t_quantile(0.975, self.dof)

    @property
    def idx(self) -> dict:
        """Internal name -> index of each free parameter."""
        return {k: i for i, k in enumerate(self.free)}

    @property
    def values(self) -> dict:
        """Every internal value at the solution, held ones included."""
        return {**self.fixed, **dict(zip(self.free, self.x, strict=True))}

    def estimate(self, name: str) -> Estimate:
        """The Estimate of one internal parameter (:func:`parameter_estimate`)."""
        return parameter_estimate(name, self.values, self.idx, self.x, self.se, self.t_q,
                                  self.bounds, self.common)

    def levels(self, base_levels) -> tuple[LevelEstimate, ...]:
        """The refit's levels, in the order and with the names of ``base_levels``."""
        return tuple(LevelEstimate(lv.kind, self.estimate(f"log10_N_{lv.name}"),
                                   None if lv.energy is None else self.estimate(f"E_{lv.name}"),
                                   lv.degeneracy, lv.name) for lv in base_levels)

    def net_and_ratio(self, model, cov) -> tuple[Estimate, Estimate]:
        """Net doping (the common uncertainty added) and compensation ratio."""
        net, comp = net_and_ratio(model, self.values, self.idx, cov, self.t_q)
        return with_common_scale(net, self.common, self.t_q), comp
