"""The search for one end of a profile interval: trial values and when the end is found.

The search runs along the distance d >= 0 from the best fit, on the signed root
sqrt((chi^2_p - chi^2_min) / u), nearly linear in d where the model is: it steps out from the
centre, brackets the threshold and closes in on it (see :meth:`EndSearch.next_distance`).
The refits themselves are done by :class:`freezeout.fitting.profile.Profiler`.
"""

from __future__ import annotations

import numpy as np

_TOL_ROOT = 0.03  # |root - sqrt(q)| accepted at an end, relative to sqrt(q) [1]
#: Farthest step past the last point below the threshold, once bracketed. [dex]
MAX_DECADE_STEP = 1.0
#: Farthest step past it where the profile is flat, before any bracket. [dex]
FLAT_DECADE_STEP = 3.0


class EndSearch:
    """The search for one end of one profile interval, in distance d >= 0 from the centre."""

    def __init__(self, target, side: float, limit: float, z0: np.ndarray,
                 fermi0: np.ndarray, tau: float, z_slope: np.ndarray) -> None:
        self.target, self.side, self.limit, self.tau = target, side, limit, tau
        self.z_slope = z_slope  # d z / d x at the centre, from the covariance
        # solved points: (d, root, z, fermi); the centre is one
        self.inner = [(0.0, 0.0, z0, fermi0)]
        self.outer: tuple | None = None
        self.wall = False  # the nearest outer point is infeasible, not excluded by the data
        self.finished = limit <= 1e-12
        self.end: tuple[float, bool] = (limit, True)
        self.trial = 0.0
        self.history = [(0.0, 0.0)]  # (d, root) in the order refitted
        self.resume: tuple | None = None  # an unfinished refit of the current trial
        self.first: tuple | None = None  # (chi2, z, fermi, violation) of a refit repeated
        self.stall = 0  # refits in a row that moved the same side of the bracket
        self._last_side = 0

    def next_distance(self) -> float:
        """The next trial distance: a short step first, then secant steps on the root.

        Outward, the secant of the two farthest points below the threshold (at most three
        times as far). Once the end is bracketed: that secant when it falls inside the
        bracket, else regula falsi, and bisection when one side of the bracket has stayed
        put twice or the far side is infeasible (the safeguards of Brent's method,
        simplified).
        """
        d_in, r_in = self.inner[-1][0], self.inner[-1][1]
        secant = None
        if len(self.inner) >= 2:
            (d_a, r_a), (d_b, r_b) = self.inner[-2][:2], self.inner[-1][:2]
            if r_b > r_a and d_b > d_a:
                secant = d_b + (self.tau - r_b) * (d_b - d_a) / (r_b - r_a)
        if self.outer is not None:
            d_out, r_out = self.outer[0], self.outer[1]
            w = d_out - d_in
            d = d_in + 0.5 * w
            if not self.wall and self.stall < 2:
                if secant is not None and d_in + 0.02 * w < secant < d_out - 0.02 * w:
                    d = secant
                elif r_in < r_out < 3.0 * self.tau:  # (far above: bisect)
                    d = d_in + (self.tau - r_in) * w / (r_out - r_in)
                    d = min(max(d, d_in + 0.02 * w), d_out - 0.02 * w)
            if self._decades():
                # in a bracket decades wide, never more than one decade past the farthest
                # point below the threshold: a trial far out can land in another valley
                # below it (a second basin of the profile) and take the barrier between
                # into the interval, which is then the hull of two, not the connected set
                # around the best fit (project choice, no source)
                d = min(d, d_in + MAX_DECADE_STEP)
        elif len(self.inner) == 1:
            se = self.target.se
            if np.isfinite(se) and se > 0:
                # well short of the Wald end: where the covariance is wrong it is mostly too
                # wide, and a refit far out costs more than one more step
                d = 0.3 * self.tau * se
            elif self.target.key.startswith("E_"):
                d = 0.2 * abs(self.target.centre) + 1e-4
            else:
                d = 0.1
        elif secant is None or secant > 10.0 * d_in:
            # flat: the profile levels off below the threshold, try the end of the range
            # (in decades at most FLAT_DECADE_STEP further: a jump across a barrier into
            # another valley below the threshold would take the barrier in)
            d = self.limit
            if self._decades():
                d = min(d, d_in + FLAT_DECADE_STEP)
        else:
            d = min(max(secant, 1.3 * d_in), 3.0 * d_in)
        self.trial = min(d, self.limit)
        return self.trial

    def _decades(self) -> bool:
        """True when the quantity profiled is a log10 (a concentration, net doping, ratio)."""
        return self.target.key.startswith("log10_") or self.target.key in ("net", "ratio")

    def job(self):
        """Held value, candidate starts and Fermi level of the next refit.

        The starts come from the nearest solved point, moved along the valley.
        """
        if self.resume is not None:
            (z, fermi), self.resume = self.resume, None
            return self.target.centre + self.side * self.trial, z[None, :], fermi
        d = self.next_distance()
        self.first = None
        pts = sorted(self.inner + ([self.outer] if self.outer else []),
                     key=lambda p: abs(p[0] - d))
        near = pts[0]
        if len(pts) > 1 and pts[1][0] != near[0]:
            slope = (near[2] - pts[1][2]) / (near[0] - pts[1][0])
        else:
            slope = self.side * self.z_slope
        # candidates: moved along the valley, half as far, not moved (far from the centre
        # the linear prediction can land in a worse valley than the point it starts from)
        move = slope * (d - near[0])
        z = np.stack([near[2] + move, near[2] + 0.5 * move, near[2]])
        return self.target.centre + self.side * d, z, near[3]

    def record(self, d: float, root: float, z, fermi, infeasible: bool) -> None:
        """Take the refit at distance d and decide whether the end is found."""
        point = (d, root, z, fermi)
        self.history.append((d, root))
        side = 1 if (infeasible or root > self.tau) else -1
        self.stall = self.stall + 1 if side == self._last_side else 0
        self._last_side = side
        if infeasible:
            self.outer, self.wall = point, True
        elif abs(root - self.tau) < _TOL_ROOT * self.tau and (
                root >= self.tau or self.outer is not None):
            # (just below the threshold with nothing beyond: a plateau may stay below it)
            self.finished, self.end = True, (d, False)
            return
        elif root < self.tau:
            self.inner.append(point)
            self.inner.sort(key=lambda p: p[0])
            if d >= self.limit - 1e-12:
                self.finished, self.end = True, (self.limit, True)
                return
        else:
            self.outer, self.wall = point, False
        if self.outer is not None:
            d_in, d_out = self.inner[-1][0], self.outer[0]
            if d_out - d_in < 2e-3 * d_out:  # a wall: chi^2 rises steeply there
                self.finished, self.end = True, (d_in, self.wall)

    def result(self) -> tuple[float, bool]:
        """Distance of the end from the centre and whether it is open (a range limit)."""
        if self.finished:
            return self.end
        d_in, r_in = self.inner[-1][0], self.inner[-1][1]
        if self.outer is None:
            return self.limit, True  # never excluded within the rounds: as far as searched
        d_out, r_out = self.outer[0], self.outer[1]
        if self.wall or not r_out > r_in:
            return 0.5 * (d_in + d_out), self.wall
        return d_in + (self.tau - r_in) * (d_out - d_in) / (r_out - r_in), False
