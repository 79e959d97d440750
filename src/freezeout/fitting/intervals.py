"""Which 95 % interval a fit reports, and profile intervals turned into estimates.

The Wald interval (value +- t se from the covariance, in log10 for concentrations) is kept
where the covariance describes the chi^2 surface. Where it may not (:func:`wald_unreliable`:
no covariance, a correlation above 0.9, a poorly determined parameter, a Wald interval
crossing a bound, a parameter at a bound, a compensation only bounded) every free
parameter, the net doping and the compensation ratio get profile-likelihood intervals
(:mod:`freezeout.fitting.profile`): the set where chi^2 - chi^2_min <= q u.

Each estimate says how its interval was computed (:attr:`Estimate.method`): ``wald-log``,
``wald-linear``, ``profile``, ``profile-one-sided`` (one end is a limit of the model's range,
not a limit set by the data), ``profile-unbounded`` (both ends are), ``plateau`` or
``fixed``.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from freezeout.fitting.profile import CHI2_95_1DOF, ProfileInterval
from freezeout.fitting.quantiles import f_quantile
from freezeout.fitting.result import Estimate

#: A correlation beyond which the covariance is not trusted for intervals (project choice,
#: no source). [1]
STRONG_CORRELATION = 0.9

#: Standard error of a log10 concentration (0.1 dex: about 26 %) or relative standard error
#: of an energy beyond which the parameter counts as poorly determined, the quadratic
#: approximation of chi^2 then failing over the interval (project choice, no source). [1]
POOR_SE = 0.1


def profile_threshold(weighted: bool, dof: int) -> float:
    """q of the 95 % profile interval, in units of the chi^2 unit u.

    Weighted: the 95 % quantile of chi^2 with one degree of freedom, 3.841 (u is 1, or the
    reduced chi^2 when the errors are inflated). Unweighted, the variance is fitted too: the
    95 % quantile of F(1, nu), which is t^2 of the Wald interval (u the reduced chi^2).
    """
    if weighted or dof <= 0:
        return CHI2_95_1DOF
    return f_quantile(0.95, 1, dof)


def wald_unreliable(out, covar: np.ndarray | None, tq: float, has_upper: bool) -> bool:
    """True when the covariance may not describe chi^2 over the 95 % interval.

    Parameters
    ----------
    out
        The retained local fit (:class:`freezeout.fitting.local_fit.LocalFit`).
    covar
        Covariance of the free parameters as reported (inflated), or None.
    tq
        Student t quantile of the Wald interval. [1]
    has_upper
        True when a profile already found the compensation only bounded.
    """
    if covar is None or has_upper:
        return True
    free = list(out.var_names)
    sd = np.sqrt(np.clip(np.diag(covar), 0.0, None))
    with np.errstate(divide="ignore", invalid="ignore"):
        corr = covar / np.outer(sd, sd)
    off = corr[~np.eye(len(free), dtype=bool)]
    if not np.all(np.isfinite(sd)) or np.any(~np.isfinite(off)) or np.any(
            np.abs(off) > STRONG_CORRELATION):
        return True
    for name, s in zip(free, sd, strict=True):
        p = out.params[name]
        scale = 1.0 if name.startswith("log10_") else abs(p.value)
        if not s <= POOR_SE * scale:
            return True
        span = p.max - p.min if np.isfinite(p.max - p.min) else 1.0
        half = tq * s if np.isfinite(tq) else math.inf
        if (p.value - half <= p.min or p.value + half >= p.max
                or min(p.value - p.min, p.max - p.value) < 1e-4 * span):
            return True
    return False


def from_profile(est: Estimate, iv: ProfileInterval, centre: float, to_value, limits,
                 widen: float = 0.0, z: float = 0.0) -> Estimate:
    """The estimate with its interval taken from a profile.

    Parameters
    ----------
    est
        The estimate (value and standard error are kept).
    iv
        The profile interval, in the profiled coordinate.
    centre
        The best fit in that coordinate.
    to_value
        Coordinate -> quantity (``10**x`` for a log10 coordinate).
    limits
        The quantity's (low, high) reported for an open end: a limit of the model's range,
        clipped to the physical one (0 and the band gap for an energy).
    widen
        A standard uncertainty outside the fit (the common scale, in the coordinate's units)
        added in quadrature to each closed end's distance from the centre, times ``z``.
    z
        Coverage factor of ``widen`` (sqrt(q)). [1]
    """
    lo_d, hi_d = centre - iv.lower, iv.upper - centre
    if widen > 0:
        lo_d, hi_d = math.hypot(lo_d, z * widen), math.hypot(hi_d, z * widen)
    lo = limits[0] if iv.lower_open else max(to_value(centre - lo_d), limits[0])
    hi = limits[1] if iv.upper_open else min(to_value(centre + hi_d), limits[1])
    n_open = int(iv.lower_open) + int(iv.upper_open)
    method = ("profile", "profile-one-sided", "profile-unbounded")[n_open]
    return replace(est, ci95=(float(lo), float(hi)), method=method)


def apply_profiles(levels: list, net: Estimate, comp: Estimate,
                   ivs: dict[str, ProfileInterval], params, band_gap: float, scale: float,
                   z: float) -> tuple[list, Estimate, Estimate, float | None]:
    """Levels, net doping and compensation ratio with the profile intervals of ``ivs``.

    Parameters
    ----------
    levels
        The LevelEstimates (Wald intervals).
    net, comp
        Net doping and compensation ratio (Wald, or the plateau's, which is kept).
    ivs
        Profile intervals by internal name, ``"net"`` and ``"ratio"``.
    params
        The parameters of the fit (values and bounds; :class:`freezeout.fitting.local_fit.Params`).
    band_gap
        Band gap at the lowest temperature, the ceiling of every energy. [eV]
    scale
        Relative uncertainty common to every density, added to the concentration ends. [1]
    z
        sqrt(q), the coverage factor applied to ``scale``. [1]

    Returns
    -------
    tuple
        The levels, net doping, compensation ratio, and the upper limit (log10) of a
        compensating concentration the data only bound from above, else None.
    """
    widen = scale / math.log(10.0)

    def pow10(x: float) -> float:
        return 10.0 ** float(np.clip(x, -300.0, 300.0))

    def concentration(est: Estimate, name: str) -> Estimate:
        if name not in ivs:
            return est
        p = params[name]
        return from_profile(est, ivs[name], p.value, pow10, (pow10(p.min), pow10(p.max)),
                            widen, z)

    def energy(est: Estimate | None, name: str) -> Estimate | None:
        if est is None or name not in ivs:
            return est
        p = params[name]
        # an open end is the edge of the fit's range; below 1e-4 eV and at 0.9 of the gap
        # (the defaults) that range stands for the physical one, (0, E_g(T_min))
        low = 0.0 if p.min <= 1e-4 else max(p.min, 0.0)
        high = band_gap if p.max >= 0.9 * band_gap * (1 - 1e-9) else min(p.max, band_gap)
        return from_profile(est, ivs[name], p.value, float, (low, high))

    out = []
    upper = None
    for lv in levels:
        cname = f"log10_N_{lv.name}"
        out.append(replace(lv, concentration=concentration(lv.concentration, cname),
                           energy=energy(lv.energy, f"E_{lv.name}")))
        if lv.energy is None and cname in ivs:
            iv = ivs[cname]
            if iv.lower_open:
                upper = params[cname].max if iv.upper_open else iv.upper
    if "net" in ivs and net.method != "plateau" and net.value > 0:
        iv = ivs["net"]
        top = pow10(iv.upper)
        net = from_profile(net, iv, math.log10(net.value), pow10, (0.0, top), widen, z)
    if "ratio" in ivs and comp.value > 0:
        comp = from_profile(comp, ivs["ratio"], math.log10(comp.value), pow10, (0.0, 1.0))
    return out, net, comp, upper
