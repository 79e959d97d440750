"""Wald estimates of a least-squares fit: a parameter and the derived net doping and ratio.

From the covariance at the solution (cov = (J^T J)^-1, scaled as the fit states), the 95 %
interval is value +- t se with Student's t at the fit's degrees of freedom, in log space for
a parameter fitted as log10 ("wald-log") and linear otherwise ("wald-linear"), clipped to the
parameter's range (common practice, no source). The net doping |N_maj - N_min| and the ratio
N_min / N_maj take their errors by the delta method (JCGM 100:2008, GUM, 5.1.2).
"""

from __future__ import annotations

import math

import numpy as np

from freezeout.fitting.result import Estimate

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
