"""Whether two solutions of one fit are two minima of the compensation profile.

Two converged local fits whose effective compensation ratios differ by more than a factor
of 10 may still be points of one flat valley of chi^2 (the valley N_D - N_A = const along
which the compensation is poorly determined), or two minima with a rise between them. The
standard-error test of :func:`freezeout.fitting.alternatives.distinct` cannot tell these
apart when the errors are large; this module asks chi^2 itself: the parameters minimised
with N_min held halfway (in log) between the two solutions. A rise above both by more than
:data:`BARRIER` makes them two solutions (project choice, no source).
"""

from __future__ import annotations

import numpy as np

from freezeout.fitting.batch_lm import polish
from freezeout.fitting.parameters import fit_parameters
from freezeout.fitting.problem import Problem

#: Rise of the compensation profile between two minima, in units of chi^2 differences, that
#: makes them two solutions rather than two points of one flat valley (project choice).
BARRIER = 0.25


def profile_barrier(problem: Problem, a, b, weighted: bool, unit: float,
                    max_evaluations: int) -> bool:
    """True when the compensation profile has two minima: a barrier between two solutions.

    chi^2 minimised with N_min held halfway (in log) between the two rises above both by
    more than BARRIER.

    Parameters
    ----------
    problem
        The fit's residual problem.
    a, b
        Two converged local fits (:class:`freezeout.fitting.local_fit.LocalFit`; their
        holds and bounds are the fit's).
    weighted
        True when stated uncertainties weight the fit.
    unit
        The unit of chi^2 differences (1 with stated errors, else the fitted variance).
    max_evaluations
        Evaluation budget of the local fit.
    """
    model = problem.model
    cname = model.compensation_name
    internal_fix = {n: p.value for n, p in a.params.items() if not p.vary}
    internal_bounds = {n: (p.min, p.max) for n, p in a.params.items() if p.vary}
    if not model.compensated or cname in internal_fix:
        return False
    va, vb = a.params.valuesdict(), b.params.valuesdict()
    mid = {k: 0.5 * (va[k] + vb[k]) for k in va}
    params = fit_parameters(model, mid, {**internal_fix, cname: mid[cname]}, internal_bounds)
    out = polish(problem, [params], None, max_evaluations, not weighted)[0]
    if not np.isfinite(out.chisqr):
        return False
    return out.chisqr > max(a.chisqr, b.chisqr) + BARRIER * unit
