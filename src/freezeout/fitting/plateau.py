"""The net doping from the saturation plateau: the points flat within their errors.

Where every majority level is ionized and the minority carriers are negligible, n (or p)
equals |N_D - N_A|. The estimate is needed exactly when the fit does not determine the
levels, so their fitted ionization cannot say where that is; the *candidate* points are
those where the fitted model has minority carriers below 1 % of the majority (extrinsic),
and the data themselves say which of them are saturated: a plateau is flat within its
uncertainties, freeze-out and intrinsic onset are not. The rule (project choice, no source;
the trend test is common practice, no source):

1. Over a window of candidate points (consecutive in temperature, at least
   :data:`MIN_POINTS`), fit ln(density) against T by weighted linear regression (weights
   1/u^2 of the stated uncertainties u of ln density; unweighted runs use the scatter about
   the line). The slope is a trend when |slope| exceeds t(0.975, k - 2) times its standard
   error: significant at 95 %, two-sided. With stated uncertainties the window must also
   be consistent with one constant: chi^2 about its weighted mean below the 95 % quantile
   of chi^2 with k - 1 degrees of freedom.
2. The plateau is the longest window without a trend (of equal lengths, the one of lowest
   scatter about its mean). Candidate points outside it rise or fall and are not plateau.
3. When no window of :data:`MIN_POINTS` is free of a trend there is no plateau: the
   estimate is not made and the warning says the points rise or fall.

The net doping is then the weighted mean of the plateau points, its standard error
sqrt(1/sum w) inflated by the Birge ratio about the mean when that exceeds 1 (unweighted:
the standard deviation of the mean), combined with the common scale uncertainty, and its
95 % interval mean +- t(0.975, k - 1) times that: value and interval from the same points.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from freezeout.fitting.problem import Problem
from freezeout.fitting.quantiles import chi2_quantile, t_quantile
from freezeout.physics.neutrality import NeutralityResult

#: Fewest points a plateau window holds (a line through them keeps one degree of freedom).
MIN_POINTS = 3


@dataclass(frozen=True)
class Plateau:
    """The saturation plateau of a fit and the net doping it gives.

    Attributes
    ----------
    flat
        True when a window of at least :data:`MIN_POINTS` candidate points is free of a
        trend; False when every such window rises or falls (then no estimate).
    value
        Weighted mean density of the plateau points, NaN when not flat. [cm^-3]
    stderr
        Its standard error (with the scale uncertainty), NaN when not flat. [cm^-3]
    ci95
        Its 95 % interval. [cm^-3]
    n_points
        Points of the plateau (of the candidates when not flat).
    n_candidates
        Points where the model has minority carriers below 1 % of the majority.
    temperature_range
        Lowest and highest temperature of the plateau (of the candidates when not flat). [K]
    slope
        Relative slope d ln n/dT of the candidates, the trend they show. [1/K]
    """

    flat: bool
    value: float
    stderr: float
    ci95: tuple[float, float]
    n_points: int
    n_candidates: int
    temperature_range: tuple[float, float]
    slope: float

    def note(self) -> str:
        """The plain-word statement of where the net doping came from, or why not."""
        lo, hi = self.temperature_range
        if not self.flat:
            way = "rise" if self.slope > 0 else "fall"
            return (f"no saturation plateau: no {MIN_POINTS} consecutive points of the "
                    f"{self.n_candidates} extrinsic ones ({lo:.4g} K to {hi:.4g} K) are flat "
                    f"within their errors (they {way} with temperature, "
                    f"{100 * self.slope:+.2g} % per K overall), so the net doping does not "
                    "come from a plateau")
        text = (f"the net doping and its interval come from the saturation plateau "
                f"({self.n_points} points from {lo:.4g} K to {hi:.4g} K, flat within their "
                "errors), which determines N_D - N_A even where the levels are not")
        left = self.n_candidates - self.n_points
        if left:
            text += (f"; the {left} other extrinsic points are not plateau: with them the "
                     "points are not flat within their errors (freeze-out, the onset of "
                     "intrinsic conduction, or scatter)")
        return text


def _trend(t: np.ndarray, y: np.ndarray, s: np.ndarray | None) -> tuple[float, bool]:
    """Slope of y on t by weighted least squares and whether it is significant at 95 %."""
    k = t.size
    w = np.ones(k) if s is None else 1.0 / s**2
    tm = np.sum(w * t) / np.sum(w)
    sxx = float(np.sum(w * (t - tm) ** 2))
    if sxx <= 0:
        return 0.0, False
    slope = float(np.sum(w * (t - tm) * y) / sxx)
    ym = float(np.sum(w * y) / np.sum(w))
    chi2 = float(np.sum(w * (y - ym - slope * (t - tm)) ** 2)) / (k - 2)
    var = 1.0 / sxx if s is not None else chi2 / sxx
    if var <= 0:
        return slope, slope != 0.0
    return slope, abs(slope) > t_quantile(0.975, k - 2) * math.sqrt(var)


def _flat(t: np.ndarray, y: np.ndarray, s: np.ndarray | None) -> bool:
    """True when a window shows no trend and, with stated errors, no excess scatter."""
    if _trend(t, y, s)[1]:
        return False
    if s is None:
        return True
    _, _, chi2 = _mean(y, s)
    return chi2 * (y.size - 1) <= chi2_quantile(0.95, y.size - 1)


def _mean(y: np.ndarray, s: np.ndarray | None) -> tuple[float, float, float]:
    """Weighted mean, its standard error and the reduced chi^2 about it."""
    k = y.size
    if s is None:
        return float(np.mean(y)), float(np.std(y, ddof=1) / math.sqrt(k)), 1.0
    w = 1.0 / s**2
    mean = float(np.sum(w * y) / np.sum(w))
    se = float(math.sqrt(1.0 / np.sum(w)))
    chi2 = float(np.sum(w * (y - mean) ** 2)) / (k - 1)
    return mean, se * math.sqrt(max(chi2, 1.0)), chi2


def plateau_net_doping(problem: Problem, res: NeutralityResult, weighted: bool, scale: float
                       ) -> Plateau | None:
    """The plateau of a fit and its net doping (the rule of the module docstring).

    Parameters
    ----------
    problem
        The residual problem (measured ln densities and their uncertainties).
    res
        The model's solution at the fitted values, on the points used.
    weighted
        True when the points carry stated uncertainties.
    scale
        Relative uncertainty common to every density. [1]

    Returns
    -------
    Plateau or None
        None when fewer than :data:`MIN_POINTS` points are candidates.
    """
    model = problem.model
    candidate = model.minority_log(res) - model.majority_log(res) < math.log(0.01)
    idx = np.flatnonzero(candidate)
    idx = idx[np.argsort(model.temperature[idx])]
    k = idx.size
    if k < MIN_POINTS:
        return None
    t = model.temperature[idx]
    ln_n = problem.y[idx]
    s_ln = problem.sigma[idx] if weighted else None
    slope_all, _ = _trend(t, ln_n, s_ln)
    best = None  # (length, -scatter, start, stop)
    for start in range(k):
        for stop in range(start + MIN_POINTS, k + 1):
            if best is not None and stop - start < best[0]:
                continue
            sl = slice(start, stop)
            if not _flat(t[sl], ln_n[sl], None if s_ln is None else s_ln[sl]):
                continue
            _, _, scatter = _mean(ln_n[sl], None if s_ln is None else s_ln[sl])
            key = (stop - start, -scatter, start, stop)
            if best is None or key[:2] > best[:2]:
                best = key
    if best is None:
        return Plateau(False, math.nan, math.nan, (math.nan, math.nan), k, k,
                       (float(t[0]), float(t[-1])), slope_all)
    sl = slice(best[2], best[3])
    y = np.exp(ln_n[sl])
    s = None if s_ln is None else s_ln[sl] * y
    mean, se, _ = _mean(y, s)
    se = math.hypot(se, scale * mean)
    n = best[3] - best[2]
    tq = t_quantile(0.975, n - 1)
    ci = (max(mean - tq * se, 0.0), mean + tq * se)
    return Plateau(True, mean, se, ci, n, k, (float(t[sl][0]), float(t[sl][-1])), slope_all)
