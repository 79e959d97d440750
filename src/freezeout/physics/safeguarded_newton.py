"""Vectorized root of a strictly decreasing function: Newton inside a bracket, with a bound.

Every element of the arrays carries its own bracket [lo, hi] with f(lo) >= 0 >= f(hi). Each
iteration evaluates f and its slope at the current point, moves one end of the bracket to the
point, and takes the Newton step while it lands inside the bracket; otherwise it bisects.
From iteration :data:`STEP_TEST_FROM` on a Newton step must also be at most half the step
before last (the step-length test of safeguarded Newton iterations [1]), which ends the
bouncing between far ends of a bracket that a kinked residual can cause; after
:data:`NEWTON_ITERATIONS` iterations only bisection is used. So the number of iterations is
bounded by :func:`iteration_cap` whatever f looks like: bisection alone halves the bracket
at each step.

References
----------
.. [1] W. H. Press, S. A. Teukolsky, W. T. Vetterling, B. P. Flannery, *Numerical Recipes*,
   3rd ed. (Cambridge University Press, 2007), Sec. 9.4, Newton-Raphson using derivative,
   with bracketing and bisection.
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np

#: Iterations in which a Newton step may be taken; bisection only after them. A Newton
#: solve from a fair start converges in far fewer (project choice, no source).
NEWTON_ITERATIONS = 40

#: First iteration at which a Newton step must also halve the step before last. Before it
#: every Newton step inside the bracket is taken, so a solve that ends by then follows the
#: plain bracketed Newton path exactly; about 99 % of random level sets do (project
#: choice, no source).
STEP_TEST_FROM = 20

#: |f| at or below which a point is a root outright. [1]
EXACT_RESIDUAL = 1e-13


def iteration_cap(width, tolerance: float) -> int:
    """Iterations after which every element has converged, for brackets of ``width``.

    The first :data:`NEWTON_ITERATIONS` iterations never widen a bracket; each one after
    them evaluates the midpoint, which becomes an end of the new bracket, so after j of them
    the width is at most W 2^-j plus rounding (one unit in the last place per halving, under
    a quarter of the tolerance test below while the width exceeds it). The width is below
    the tolerance once W 2^-j <= 3/4 tol, i.e. j = ceil(log2(W / tol) + 0.42)
    <= ceil(log2(W / tol)) + 1. One more iteration is kept as margin::

        N_max = NEWTON_ITERATIONS + ceil(log2(W / tol)) + 2

    Parameters
    ----------
    width
        Initial bracket widths (hi - lo), any shape. [same unit as tolerance]
    tolerance
        Convergence tolerance on the root. [same unit as width]

    Returns
    -------
    int
        N_max for the widest bracket.
    """
    w = float(np.max(width))
    halvings = max(math.ceil(math.log2(w / tolerance)), 0) if w > 0 else 0
    return NEWTON_ITERATIONS + halvings + 2


def _resolution(magnitude: np.ndarray, tolerance: float):
    """max(tolerance, 8 units in the last place of ``magnitude``), elementwise.

    The tolerance alone (a number) when it exceeds 8 ulp of the largest magnitude.
    """
    if magnitude.size == 0 or 8.0 * math.ulp(float(magnitude.max())) <= tolerance:
        return tolerance
    return np.maximum(tolerance, 8.0 * np.spacing(magnitude))


#: |start| beyond which a lazily bracketed start is clipped before it is evaluated: f
#: there would overflow (project choice, no source; the neutrality brackets span under 7e5).
FAR_START = 1e6


def converged(h: np.ndarray, slope: np.ndarray, u: np.ndarray, tolerance: float):
    """True where u is a root (f = h, f' = slope), the test of :func:`solve_decreasing`.

    The balance exact to rounding (|h| <= :data:`EXACT_RESIDUAL`), or the Newton step
    |h / slope| below the tolerance or below the floating-point resolution of u itself,
    written |h| <= -slope * resolution, which no slope >= 0 (nor a NaN) meets.
    """
    limit = np.fmax(-slope * _resolution(np.abs(u), tolerance), EXACT_RESIDUAL)
    return np.abs(h) <= limit


def solve_decreasing(
    evaluate: Callable[[np.ndarray], tuple],
    lo: np.ndarray | None,
    hi: np.ndarray | None,
    start: np.ndarray,
    tolerance: float,
    name: str = "function",
    *,
    bracket: Callable[[], tuple[np.ndarray, np.ndarray]] | None = None,
) -> tuple[np.ndarray, tuple, int]:
    """Root of f on each bracket, for f strictly decreasing and continuous.

    Parameters
    ----------
    evaluate
        ``evaluate(u)`` returns ``(f(u), f'(u), *extra)``, arrays of the shape of ``u``.
    lo, hi
        Bracket ends, f(lo) >= 0 >= f(hi), lo < hi; broadcasting to the shape of ``start``.
        Both None with ``bracket``.
    start
        First point (clipped into the bracket).
    bracket
        Instead of ``lo`` and ``hi``: returns them, called only when a first evaluation at
        the unclipped ``start`` has not converged everywhere (a warm start from a nearby
        solution usually has, and then needs no bracket).
    tolerance
        Absolute tolerance on the root: an element stops when the Newton step is below it
        (or below 8 units in the last place of the point), or, from iteration
        :data:`STEP_TEST_FROM` on, when its bracket is. [unit of u]
    name
        What f is, for the error message.

    Returns
    -------
    u : numpy.ndarray
        The roots.
    evaluation : tuple
        ``evaluate(u)`` at the returned u.
    iterations : int
        Evaluations made, at most ``iteration_cap(hi - lo, tolerance)`` (one more when a
        lazy ``bracket`` moved the start).

    Raises
    ------
    RuntimeError
        If f is not finite somewhere.
    """
    extra = 0  # an evaluation made before the bracket was known, and not reused
    pending = None  # that evaluation, when the loop can start from it
    if bracket is not None and not (np.abs(start) < FAR_START).all():
        lo, hi = bracket()  # an absurd start (inf, 1e300) is clipped into the bracket first
        bracket = None
    if bracket is not None:
        u = np.asarray(start, dtype=float)  # (a root found at once is returned as is)
        pending = evaluate(u)
        done = converged(np.asarray(pending[0]), np.asarray(pending[1]), u, tolerance)
        if done.all():
            return u, pending, 1
        lo, hi = bracket()
        inside = np.clip(u, lo, hi)
        if not np.array_equal(inside, u):
            u = np.where(done, u, inside)
            pending, extra = None, 1
    else:
        u = np.clip(start, lo, hi)
    # own copies of the bracket on the shape of u, narrowed in place
    lo = np.array(lo if np.shape(lo) == u.shape else np.broadcast_to(lo, u.shape), dtype=float)
    hi = np.array(hi if np.shape(hi) == u.shape else np.broadcast_to(hi, u.shape), dtype=float)
    lo0, hi0 = lo.copy(), hi.copy()  # the initial bracket, for the cap
    cap = None  # worked out only if the Newton iterations run out
    step = step_before = None  # the last two steps, kept once the step test is near
    iterations = extra
    while True:
        iterations += 1
        out = evaluate(u) if pending is None else pending
        pending = None
        h, slope = np.asarray(out[0]), np.asarray(out[1])
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            newton = -(h / slope)
            flat = ~(slope < 0)
            if flat.any():
                # a flat residual gives an infinite step: bisection takes over below
                newton = np.where(flat, np.inf, newton)
        done = converged(h, slope, u, tolerance)
        late = iterations - extra >= STEP_TEST_FROM
        if late:
            np.copyto(lo, u, where=h > 0)
            np.copyto(hi, u, where=h < 0)
            # or the bracket itself below the tolerance (what ends a bisection)
            done |= hi - lo <= _resolution(np.maximum(np.abs(lo), np.abs(hi)), tolerance)
        if done.all():
            return u, out, iterations
        if not (math.isfinite(float(h.sum())) or np.isfinite(h).all()):
            raise RuntimeError(f"{name} is not finite")
        if not late:
            np.copyto(lo, u, where=h > 0)
            np.copyto(hi, u, where=h < 0)
        if iterations - extra >= NEWTON_ITERATIONS:
            if cap is None:
                cap = iteration_cap(hi0 - lo0, tolerance)
            if iterations - extra >= cap:
                break
            nxt = 0.5 * (lo + hi)
        else:
            nxt = u + newton
            take = (nxt > lo) & (nxt < hi)
            if late:
                take &= np.abs(newton) <= 0.5 * np.abs(step_before)
            if not take.all():
                nxt = np.where(take, nxt, 0.5 * (lo + hi))
            if iterations - extra >= STEP_TEST_FROM - 2:
                step_before, step = step, nxt - u
        u = np.where(done, u, nxt)
    # unreachable: iteration_cap bounds the bisections needed (kept as a guard)
    raise RuntimeError(f"root of the {name} not found")  # pragma: no cover
