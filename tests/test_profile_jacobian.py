"""The profile refits' analytic Jacobian, and profile ends that stay on the best fit's side.

The Jacobians are checked against central differences computed here (numpy); the profile
case is the poorly identified GaN-like run of tests/test_coverage.py (seed 17), whose
chi^2 profile of N_A has a second, heavily compensated valley beyond a barrier.
"""

from __future__ import annotations

import math
import sys
from pathlib import Path

import numpy as np
import pytest

from freezeout.fitting.batch_lm import polish
from freezeout.fitting.fit import fit_run
from freezeout.fitting.model import CarrierModel
from freezeout.fitting.parameters import fit_parameters
from freezeout.fitting.problem import Problem
from freezeout.fitting.profile import Profiler
from freezeout.fitting.profile_rows import complete_rows
from freezeout.physics.materials import get_material

sys.path.insert(0, str(Path(__file__).parent))
from test_coverage import replicate_run  # noqa: E402


def _problem(run, material):
    model = CarrierModel(material, run.temperature, "n", 1, True)
    return Problem(model, np.log(run.density), run.density_err / run.density)


def _profiler(held: dict):
    run = replicate_run(3)
    problem = _problem(run, get_material("GaN"))
    start = fit_parameters(problem.model, {"log10_N_D1": 17.0, "E_D1": 0.015,
                                           "log10_N_A": 16.4}, held, {})
    out = polish(problem, [start], None, 400, False)[0]
    problem.model.warm_start(out.fermi)
    return Profiler(problem, out, out.covar, 1.0)


@pytest.fixture(scope="module")
def profiler():
    return _profiler({})


# (parameters held, quantity profiled, its parameter set by the held value, offset of the
# held value from the best fit [its unit]); the last: a held net doping beyond the range
# (N_D1 would pass 1e22 cm^-3), so the violation and its slope are active
CASES = [({}, "log10_N_D1", "log10_N_D1", 0.05), ({}, "E_D1", "E_D1", 0.002),
         ({}, "net", "log10_N_D1", 0.05), ({}, "ratio", "log10_N_A", 0.05),
         ({"log10_N_D1": 17.0}, "net", "log10_N_A", 0.05),
         ({"log10_N_A": 16.4}, "ratio", "log10_N_D1", 0.05),
         ({}, "net", "log10_N_D1", 5.5)]


@pytest.mark.parametrize(("held", "key", "dep", "dx"), CASES)
def test_completed_rows_have_the_derivatives_of_their_differences(held, key, dep, dx):
    """d theta/dz and d violation/dz of the chain rule against central differences
    (step 1e-7 relative; agreement 1e-5 relative, the differences' own error), for every
    way a held value sets its parameter (itself, or a majority or the compensating
    concentration through a held net doping or ratio) and with a bound violated."""
    profiler = _profiler(held)
    t = profiler.target(key)
    assert profiler.free[t.dep] == dep
    z0 = profiler.to_z(profiler.theta, t.dep)
    x = t.centre + dx
    rows = complete_rows(profiler, t, z0[None, :], x)
    assert (rows.violation[0] > 0) == (dx > 5)
    for j in range(z0.size):
        h = 1e-7 * max(abs(z0[j]), 1e-3)
        up, dn = z0.copy(), z0.copy()
        up[j] += h
        dn[j] -= h
        a, b = complete_rows(profiler, t, up[None, :], x), complete_rows(profiler, t,
                                                                          dn[None, :], x)
        fd = (a.theta[0] - b.theta[0]) / (2 * h)
        assert rows.d_theta[0, :, j] == pytest.approx(fd, rel=1e-5, abs=1e-6)
        fd_v = (a.violation[0] - b.violation[0]) / (2 * h)
        assert rows.d_violation[0, j] == pytest.approx(fd_v, rel=1e-5, abs=1e-6)


def test_batch_jacobian_matches_differences_with_the_type_penalty_active(profiler):
    """Residual Jacobian by implicit differentiation against central differences, at a
    point where the compensating species exceeds the majority (the penalty's slope
    included; agreement 1e-4 relative)."""
    problem = profiler.problem
    names = profiler.free
    theta = np.array([[17.0, 0.02, 16.5], [16.9, 0.03, 17.2]])  # second: wrong type
    vals = {n: theta[:, i][:, None] for i, n in enumerate(names)}
    r, _, jac = problem.batch_residuals_jacobian(vals, None, names)
    for i in range(len(names)):
        h = 1e-6 if names[i].startswith("log10_") else 1e-7
        up, dn = theta.copy(), theta.copy()
        up[:, i] += h
        dn[:, i] -= h
        ru, _ = problem.batch_residuals({n: up[:, k][:, None] for k, n in enumerate(names)})
        rd, _ = problem.batch_residuals({n: dn[:, k][:, None] for k, n in enumerate(names)})
        assert jac[:, i, :] == pytest.approx((ru - rd) / (2 * h), rel=1e-4, abs=1e-3)


def test_profile_end_stays_before_the_barrier():
    """The N_A profile of this run rises above the threshold near 2e16 cm^-3 and falls below
    it again in a heavily compensated valley near 6e16: the interval is the part connected
    to the best fit, so its upper end lies before the barrier (project choice, no source;
    the barrier is checked here by refits with N_A held)."""
    run = replicate_run(17)
    material = get_material("GaN")
    res = fit_run(run, material, donors=1, acceptors=1)
    upper = res.levels[1].concentration.ci95[1]
    problem = _problem(run, material)
    unit = max(res.reduced_chi2, 1.0)

    def rise(log10_na: float) -> float:
        best = math.inf
        for lnd in (16.5, 17.0, 17.5):
            for e in (0.005, 0.015, 0.03):
                p = fit_parameters(problem.model, {"log10_N_D1": lnd, "E_D1": e,
                                                   "log10_N_A": log10_na},
                                   {"log10_N_A": log10_na}, {})
                problem.model.clear_warm_start()
                out = polish(problem, [p], None, 400, False)[0]
                if problem.type_penalty(out.params.valuesdict()) == 0:
                    best = min(best, out.chisqr)
        return (best - res.chi2) / unit

    barrier = 16.3
    assert rise(barrier) > 3.841  # the barrier is excluded at 95 %
    assert upper < 10.0**barrier
    # the end: where the rise reaches chi^2(1) at 95 % (3.841), its root within the search's
    # tolerance of 3 % (profile_search._TOL_ROOT) and the refits' own 1 %
    assert math.sqrt(rise(math.log10(upper))) == pytest.approx(math.sqrt(3.841), rel=0.04)


@pytest.mark.parametrize(("key", "expected"), [("log10_N_A", 4.0), ("E_D1", 14.0)])
def test_a_flat_profile_is_followed_in_steps_of_decades(key, expected):
    """Project choice, no source: where a profile in decades levels off below the
    threshold, the next trial is at most 3 decades further (a jump to the end of the range
    could land in another valley beyond a barrier); an energy profile still tries the end
    of its range."""
    from types import SimpleNamespace

    from freezeout.fitting.profile_search import EndSearch

    target = SimpleNamespace(key=key, se=math.nan, centre=10.0)
    end = EndSearch(target, 1.0, 14.0, np.zeros(2), np.zeros(3), 1.96, np.zeros(2))
    end.record(1.0, 0.05, np.zeros(2), np.zeros(3), False)  # nearly flat: far below 1.96
    assert end.next_distance() == pytest.approx(expected)
