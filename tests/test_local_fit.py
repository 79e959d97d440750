"""The density fit's local least squares against MINPACK's, and the records it returns.

The reference is lmfit's ``leastsq`` (MINPACK lmdif: J. J. More et al., ANL-80-74 (1980),
through scipy.optimize.leastsq), a general-purpose library kept in the test extras only.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from freezeout.fitting.batch_lm import Batch, _out_of_reach, polish
from freezeout.fitting.local_fit import LocalFit, Param, Params, covariance
from freezeout.fitting.model import CarrierModel
from freezeout.fitting.parameters import fit_parameters
from freezeout.fitting.problem import Problem
from freezeout.io.reduced_csv_reader import read_reduced_csv
from freezeout.physics.materials import get_material

SAMPLE = Path(__file__).resolve().parents[1] / "sample_data" / "harrowgate_si_n_run.csv"


def _silicon_problem() -> Problem:
    run = read_reduced_csv(SAMPLE)
    model = CarrierModel(get_material("Si"), run.temperature, "n", 1, True)
    return Problem(model, np.log(run.density), run.density_err / run.density)


@pytest.mark.parametrize("start", [
    {"log10_N_D1": 15.0, "E_D1": 0.03, "log10_N_A": 13.0},
    {"log10_N_D1": 15.6, "E_D1": 0.06, "log10_N_A": 14.2},
])
def test_polish_reaches_minpack_minimum(start):
    """Same minimum, chi^2 and standard errors as MINPACK's lmdif from the same start.

    Tolerances: values 1e-6 (both stop at a relative change of 1.5e-8 in chi^2 or step),
    standard errors 1e-3 relative (lmdif's covariance comes from a forward-difference
    Jacobian, ours from implicit differentiation; computed here with lmfit).
    """
    lmfit = pytest.importorskip("lmfit")
    problem = _silicon_problem()
    model = problem.model
    ours = polish(problem, [fit_parameters(model, start, {}, {})], None, 400, False)[0]
    assert ours.success

    ref_params = lmfit.Parameters()
    for name, p in fit_parameters(model, start, {}, {}).items():
        ref_params.add(name, value=p.value, min=p.min, max=p.max)
    model.clear_warm_start()
    ref = lmfit.minimize(problem.residual, ref_params, method="leastsq", scale_covar=False)
    assert ref.success
    assert ours.chisqr == pytest.approx(ref.chisqr, rel=1e-9)
    for name in ours.var_names:
        assert ours.params[name].value == pytest.approx(ref.params[name].value, rel=1e-6)
        assert ours.params[name].stderr == pytest.approx(ref.params[name].stderr, rel=1e-3)
    assert ours.nfree == ref.nfree and ours.ndata == ref.ndata
    # lmfit's information criteria with the variance estimated, the same formulas
    assert ours.aic == pytest.approx(ref.aic, abs=1e-6)  # N ln chi^2: 45 x 1e-9 rel of chi^2
    assert ours.bic == pytest.approx(ref.bic, abs=1e-6)


def test_polish_holds_a_fixed_parameter_and_keeps_a_bound():
    """A held parameter stays put; a bound the minimum lies beyond is kept (project choice,
    no source: the steps are projected onto the bounds)."""
    problem = _silicon_problem()
    start = {"log10_N_D1": 15.3, "E_D1": 0.04, "log10_N_A": 13.5}
    held = polish(problem, [fit_parameters(problem.model, start, {"log10_N_A": 13.0}, {})],
                  None, 400, False)[0]
    assert held.params["log10_N_A"].value == 13.0 and held.var_names == ["log10_N_D1", "E_D1"]
    bounded = polish(problem, [fit_parameters(problem.model, start, {},
                                              {"E_D1": (0.03, 0.040)})], None, 400, False)[0]
    assert bounded.params["E_D1"].value <= 0.040
    free = polish(problem, [fit_parameters(problem.model, start, {}, {})], None, 400, False)[0]
    assert free.params["E_D1"].value > 0.040  # the bound did bind
    assert bounded.chisqr > free.chisqr


def test_covariance_is_the_inverse_of_the_normal_matrix_or_none():
    """(J J^T)^-1 for a full-rank J, None for a rank-deficient one (numpy.linalg.inv as
    the reference)."""
    rng = np.random.default_rng(1)
    jac = rng.normal(size=(3, 20))
    assert covariance(jac) == pytest.approx(np.linalg.inv(jac @ jac.T), rel=1e-10)
    jac[2] = 2.0 * jac[0]
    assert covariance(jac) is None
    assert covariance(np.zeros((0, 5))).shape == (0, 0)


def test_information_criteria_of_a_local_fit():
    """AIC = N ln(chi^2/N) + 2k and BIC = N ln(chi^2/N) + k ln N with the variance estimated
    (H. Akaike, IEEE Trans. Autom. Control 19, 716 (1974); G. Schwarz, Ann. Stat. 6, 461
    (1978))."""
    params = Params({"a": Param(1.0), "b": Param(2.0), "c": Param(3.0, vary=False)})
    fit = LocalFit(params, np.full(10, 0.5), 3, True, "converged", None)
    assert fit.chisqr == pytest.approx(2.5) and fit.nvarys == 2 and fit.nfree == 8
    assert fit.redchi == pytest.approx(2.5 / 8)
    assert fit.aic == pytest.approx(10 * math.log(0.25) + 4)
    assert fit.bic == pytest.approx(10 * math.log(0.25) + 2 * math.log(10))


def _batch(cost: np.ndarray, converged: np.ndarray) -> Batch:
    rows = cost.size
    return Batch(np.zeros((rows, 1)), np.zeros((rows, 1)), np.zeros((rows, 1)), cost,
                 np.zeros((rows, 1, 1)), np.ones(rows), np.ones(rows, dtype=int),
                 ~converged, converged)


def test_a_slow_start_far_above_a_converged_one_is_stopped():
    """Project choice, no source: at 0.01 a step, 100 steps left cannot bring chi^2 = 115
    within 4 of a converged 55; a start descending 1 a step from 60 goes on."""
    check = _out_of_reach(4.0, 120)
    converged = np.array([True, False, False])
    for step in range(12):
        b = _batch(np.array([55.0, 115.0 - 0.01 * step, 60.0 - 1.0 * step]), converged)
        b.active = ~converged
        check(b, step)
    assert list(b.active) == [False, False, True]


def test_reading_and_fitting_a_run_imports_no_heavy_library():
    """Project choice, no source: the fit command's 0.8 s budget has no room for pandas,
    scipy.stats, scipy.optimize, lmfit or matplotlib (0.1 to 0.5 s of imports each), so
    reading a run file and fitting it load none of them (checked in a new interpreter)."""
    import subprocess
    import sys

    code = ("import sys, freezeout.api as api; api.fit_file(sys.argv[1]); "
            "print(' '.join(m for m in ('pandas', 'scipy.stats', 'scipy.optimize', 'lmfit', "
            "'matplotlib') if m in sys.modules))")
    done = subprocess.run([sys.executable, "-c", code, str(SAMPLE)], capture_output=True,
                          text=True, check=True)
    assert done.stdout.strip() == ""


def test_unweighted_covariance_is_scaled_by_the_reduced_chi2():
    """Without stated errors the covariance is (J J^T)^-1 times chi^2/nu, as MINPACK's
    through lmfit with scale_covar (computed here with lmfit; errors to 1e-3)."""
    lmfit = pytest.importorskip("lmfit")
    run = read_reduced_csv(SAMPLE)
    model = CarrierModel(get_material("Si"), run.temperature, "n", 1, True)
    problem = Problem(model, np.log(run.density), np.ones(run.density.size))
    start = {"log10_N_D1": 15.2, "E_D1": 0.04, "log10_N_A": 13.4}
    ours = polish(problem, [fit_parameters(model, start, {}, {})], None, 400, True)[0]
    ref_params = lmfit.Parameters()
    for name, p in fit_parameters(model, start, {}, {}).items():
        ref_params.add(name, value=p.value, min=p.min, max=p.max)
    model.clear_warm_start()
    ref = lmfit.minimize(problem.residual, ref_params, method="leastsq", scale_covar=True)
    assert ours.success and ref.success
    # diagonal to 2e-3, correlations to 1e-3 absolute (an off-diagonal near zero has no
    # relative precision to speak of)
    assert np.diag(ours.covar) == pytest.approx(np.diag(ref.covar), rel=2e-3)
    sd, sd_ref = np.sqrt(np.diag(ours.covar)), np.sqrt(np.diag(ref.covar))
    assert ours.covar / np.outer(sd, sd) == pytest.approx(ref.covar / np.outer(sd_ref, sd_ref),
                                                         abs=1e-3)
    for name in ours.var_names:
        assert ours.params[name].stderr == pytest.approx(ref.params[name].stderr, rel=1e-3)
