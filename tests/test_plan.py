"""``freezeout plan``: Fisher information, the exchange algorithm, replicate fits, the CLI.

Scenario: the fictional Harrowgate lab plans its next cryostat run (20-400 K, 15 points) on a
Si wafer with a 1e16 cm^-3 donor at 0.045 eV and 1e14 cm^-3 compensating acceptors, 2 %
relative error per point (invented values).
"""

from __future__ import annotations

import itertools
import json
import math

import numpy as np
import pytest
from scipy import optimize

from cli_runner import cli
from freezeout import api
from freezeout.errors import InputError
from freezeout.fitting.design import (
    covariance,
    criterion_values,
    exchange_design,
    fisher_information,
    log_density_sensitivities,
)
from freezeout.fitting.model import CarrierModel
from freezeout.physics.materials import get_material

K_B_EV = 8.617333262e-5  # Boltzmann constant [eV/K] (CODATA 2018)
DONOR = (1e16, 0.045, None)
ACCEPTOR = (1e14, None, None)
VALUES = {"log10_N_D1": 16.0, "E_D1": 0.045, "log10_N_A": 14.0}
FREE = list(VALUES)


def _model(t, statistics="fermi-dirac"):
    return CarrierModel(get_material("Si"), np.asarray(t, float), "n", 1, True, statistics)


def test_sensitivities_match_the_compensated_freeze_out_limit():
    # Boltzmann statistics, n << N_A << N_D: n = (N_D - N_A)/N_A (N_c/g) exp(-E_D/kT)
    # (the compensated freeze-out relation; J. S. Blakemore, Semiconductor Statistics,
    # Pergamon 1962, ch. 3; from memory). So d ln n / d log10 N_D = ln10 N_D/(N_D - N_A),
    # d ln n / d log10 N_A = -ln10 N_D/(N_D - N_A) and d ln n / dE_D = -1/kT.
    t = np.array([18.0, 20.0, 22.0, 25.0])
    _, jac = log_density_sensitivities(_model(t, "boltzmann"), VALUES, FREE)
    k = math.log(10.0) * 1e16 / (1e16 - 1e14)
    np.testing.assert_allclose(jac[:, 0], k, rtol=2e-3)
    np.testing.assert_allclose(jac[:, 2], -k, rtol=2e-3)
    np.testing.assert_allclose(jac[:, 1], -1.0 / (K_B_EV * t), rtol=2e-3)


def test_fisher_inverse_is_the_least_squares_covariance():
    # a noise-free fit of ln n with sigma = 2 %: scipy's least_squares Jacobian (its own
    # 3-point differences of single solves) gives cov = (J^T J)^-1 (common practice, no
    # source); the design's batch Jacobian must give the same covariance
    t = api.simulate(donors=[DONOR], acceptors=[ACCEPTOR], temperatures=(20, 400, 15)).temperature
    model = _model(t)
    ln_true = model.log_density(VALUES, warm=False)
    sigma = 0.02

    def residuals(x):
        return (model.log_density(dict(zip(FREE, x, strict=True)), warm=False) - ln_true) / sigma

    fit = optimize.least_squares(residuals, [16.05, 0.0452, 13.9], jac="3-point",
                                 x_scale=[0.1, 1e-3, 0.1], xtol=1e-14, ftol=1e-14, gtol=1e-14)
    np.testing.assert_allclose(fit.x, [16.0, 0.045, 14.0], rtol=1e-6)
    cov_ls = np.linalg.inv(fit.jac.T @ fit.jac)
    _, jac = log_density_sensitivities(model, VALUES, FREE)
    cov = covariance(fisher_information(jac, sigma))
    np.testing.assert_allclose(np.sqrt(np.diag(cov)), np.sqrt(np.diag(cov_ls)), rtol=1e-3)
    corr = cov / np.sqrt(np.outer(np.diag(cov), np.diag(cov)))
    corr_ls = cov_ls / np.sqrt(np.outer(np.diag(cov_ls), np.diag(cov_ls)))
    np.testing.assert_allclose(corr, corr_ls, atol=1e-3)


def test_criteria_are_the_target_block_of_the_inverse():
    # D: -log det of the Schur complement F_tt - F_to F_oo^-1 F_ot; A: trace of (F^-1)_tt
    # (linear algebra identities, computed here directly)
    rng = np.random.default_rng(3)
    a = rng.standard_normal((10, 4))
    f = a.T @ a
    t, o = np.array([1, 3]), np.array([0, 2])
    schur = f[np.ix_(t, t)] - f[np.ix_(t, o)] @ np.linalg.solve(f[np.ix_(o, o)], f[np.ix_(o, t)])
    assert criterion_values(f, t, "D") == pytest.approx(-np.log(np.linalg.det(schur)), rel=1e-10)
    inv = np.linalg.inv(f)
    assert criterion_values(f, t, "A") == pytest.approx(inv[1, 1] + inv[3, 3], rel=1e-10)
    assert np.isinf(criterion_values(np.zeros((4, 4)), t, "D"))


@pytest.mark.parametrize("criterion", ["D", "A"])
def test_exchange_reaches_the_best_subset_of_a_small_grid(criterion):
    # 14 candidates, 5 points: every one of the 2002 subsets scored (brute force); the exchange
    # from the evenly spaced start finds the best one, and no single swap improves its plan
    t = np.sort(1000.0 / np.linspace(1000 / 400, 1000 / 20, 14))
    _, jac = log_density_sensitivities(_model(t), VALUES, FREE)
    targets = [1] if criterion == "D" else [0, 1, 2]
    scale = np.array([0.01, 1e-4, 0.02])
    d = exchange_design(jac, [0, 3, 6, 10, 13], targets, criterion, scale=scale)
    js = jac * scale
    best = min(float(criterion_values(js[list(c)].T @ js[list(c)], np.array(targets), criterion))
               for c in itertools.combinations(range(14), 5))
    assert d.converged and d.loss <= d.start_loss
    assert d.loss == pytest.approx(best, rel=1e-9)


def _replicates(temperatures, seeds, name):
    """Fitted value and reported stderr of one parameter over noisy replicate runs."""
    t = np.asarray(temperatures, float)
    n0 = api.simulate(donors=[DONOR[:2]], acceptors=[ACCEPTOR[:2]], temperatures=t).n
    values, errors = [], []
    for seed in seeds:
        n = n0 * (1.0 + 0.02 * np.random.default_rng(seed).standard_normal(t.size))
        fit = api.fit_arrays(t, n, 0.02 * n, "n", material="Si", donors=1, acceptors=1)
        lv = {f"N_{x.name}": x.concentration for x in fit.levels}
        lv.update({f"E_{x.name}": x.energy for x in fit.levels if x.energy is not None})
        est = lv[name]
        rel = name.startswith("N_")
        values.append(math.log(est.value) if rel else est.value)
        errors.append(est.stderr / est.value if rel else est.stderr)
    return np.std(values, ddof=1), float(np.mean(errors))


def test_replicate_fits_at_the_proposed_temperatures_pin_E_D_better():
    # 60 replicate runs (2 % noise, seeds 1000-1059) at the D-optimal plan for E_D1 and at the
    # even plan, each fitted from automatic starts: the spread of the fitted E_D1 and its mean
    # reported stderr are smaller for the proposed plan, as the plan predicts
    plan = api.plan_temperatures(donors=[DONOR], acceptors=[ACCEPTOR], t_range=(20, 400),
                                 points=15, targets=["E_D1"])
    pred = {e.name: e for e in plan.errors}["E_D1"]
    assert pred.ratio < 0.7
    seeds = range(1000, 1060)
    spread_p, mean_p = _replicates(plan.proposed, seeds, "E_D1")
    spread_e, mean_e = _replicates(plan.even, seeds, "E_D1")
    assert spread_p < 0.8 * spread_e
    assert mean_p < 0.8 * mean_e
    # the predicted errors are what the fits see (60 replicates: spread to about +-20 %)
    assert spread_p == pytest.approx(pred.proposed, rel=0.25)
    assert spread_e == pytest.approx(pred.even, rel=0.25)


def test_replicate_fits_of_the_full_D_plan_report_smaller_errors():
    # all three parameters as targets: the mean reported stderr of each over 25 replicates is
    # smaller at the proposed temperatures and within 15 % of the predicted ratio
    plan = api.plan_temperatures(donors=[DONOR], acceptors=[ACCEPTOR], t_range=(20, 400),
                                 points=15)
    seeds = range(2000, 2025)
    for e in plan.errors:
        _, mean_p = _replicates(plan.proposed, seeds, e.name)
        _, mean_e = _replicates(plan.even, seeds, e.name)
        assert mean_p < mean_e, e.name
        assert mean_p / mean_e == pytest.approx(e.ratio, rel=0.15), e.name


def _fitted_values(temperatures, seeds) -> np.ndarray:
    """(replicates, 3): fitted log10 N_D1, E_D1, log10 N_A of noisy runs (2 %, seeded)."""
    t = np.asarray(temperatures, float)
    n0 = api.simulate(donors=[DONOR[:2]], acceptors=[ACCEPTOR[:2]], temperatures=t).n
    rows = []
    for seed in seeds:
        n = n0 * (1.0 + 0.02 * np.random.default_rng(seed).standard_normal(t.size))
        donor, acceptor = api.fit_arrays(t, n, 0.02 * n, "n", material="Si", donors=1,
                                         acceptors=1).levels
        rows.append([math.log10(donor.concentration.value), donor.energy.value,
                     math.log10(acceptor.concentration.value)])
    return np.array(rows)


def test_replicate_fits_of_the_full_D_plan_have_a_smaller_generalized_variance():
    # what the D criterion minimizes, measured on the fitted values themselves: over 40
    # replicate runs at each plan (2 % noise, seeds 3000-3039), the determinant of the
    # covariance of the fitted (log10 N_D1, E_D1, log10 N_A) is smaller for the proposed
    # plan, near the predicted ratio efficiency^-3 (0.28 here; the determinant of a 3x3
    # sample covariance from 40 runs scatters by about +-50 %, so within a factor 2.5)
    plan = api.plan_temperatures(donors=[DONOR], acceptors=[ACCEPTOR], t_range=(20, 400),
                                 points=15)
    predicted = plan.efficiency ** -3
    seeds = range(3000, 3040)
    ratio = (np.linalg.det(np.cov(_fitted_values(plan.proposed, seeds).T))
             / np.linalg.det(np.cov(_fitted_values(plan.even, seeds).T)))
    assert ratio < 0.6
    assert predicted / 2.5 < ratio < 2.5 * predicted


def test_plan_json_and_outputs_end_to_end(monkeypatch, capsys, tmp_path):
    out = tmp_path / "plan"
    code, stdout, err = cli(monkeypatch, capsys, "plan", "--range", "20:400", "--points", "15",
                            "-m", "Si", "--donor", "1e16,0.045", "--acceptor", "1e14,none",
                            "--target", "E_D1", "--target", "N_A", "--criterion", "A",
                            "--error", "2%", "--json", "--out", out)
    assert code == 0, err
    d = json.loads(stdout)
    api_d = api.plan_temperatures(donors=[DONOR], acceptors=[ACCEPTOR], t_range=(20, 400),
                                  points=15, targets=["E_D1", "N_A"], criterion="A").to_dict()
    assert d == api_d
    assert d["targets"] == ["E_D1", "N_A"] and len(d["proposed_K"]) == 15
    assert len(set(d["proposed_K"])) == 15  # no repeats
    assert all(20 <= t <= 400 for t in d["proposed_K"])
    assert [p["name"] for p in d["parameters"]] == ["N_D1", "E_D1", "N_A"]
    assert json.loads((out / "plan.json").read_text()) == d
    rows = [r for r in (out / "plan.csv").read_text().splitlines() if not r.startswith("#")]
    assert rows[0].startswith("T [K]") and len(rows) == 16
    assert (out / "plan.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_plan_from_a_fit_json(monkeypatch, capsys, tmp_path):
    run = tmp_path / "run.csv"
    api.write_simulation_csv(api.simulate(donors=[DONOR[:2]], acceptors=[ACCEPTOR[:2]],
                                          temperatures=(20, 400, 25)), "fermi-dirac", run)
    code, stdout, err = cli(monkeypatch, capsys, "fit", run, "--json")
    assert code == 0, err
    fit_json = tmp_path / "out" / "plan.json"  # a fit saved where the plan would go
    fit_json.parent.mkdir()
    fit_json.write_text(stdout)
    code, stdout, err = cli(monkeypatch, capsys, "plan", "--from-fit", fit_json, "--range",
                            "20:400", "--points", "12")
    assert code == 0, err
    assert "predicted standard errors" in stdout and "E_D1" in stdout
    plan = api.plan_temperatures(from_fit=fit_json, t_range=(20, 400), points=12)
    assert plan.model.material.name == "Si" and plan.model.carrier == "n"
    assert plan.model.values["N_D1"] == pytest.approx(1e16, rel=1e-6)
    assert plan.model.values["E_D1"] == pytest.approx(0.045, rel=1e-6)
    # the plan would write over the fit it read: refused, nothing written
    with pytest.raises(InputError, match="would write over an input"):
        api.write_plan(plan, fit_json.parent)
    assert json.loads(fit_json.read_text())["carrier"] == "n"


@pytest.mark.parametrize(("args", "match"), [
    (["--range", "400:20", "--donor", "1e16,0.045"], "TMIN must be below TMAX"),
    (["--range", "20:4000", "-m", "Ge", "--donor", "1e16,0.01"], "band gap closes"),
    (["--range", "0:400", "--donor", "1e16,0.045"], "outside the temperatures"),
    (["--range", "20-400", "--donor", "1e16,0.045"], "expected TMIN:TMAX"),
    (["--range", "20:400", "--donor", "1e16,0.045", "--acceptor", "1e14,none", "-n", "2"],
     "at least the 3 free parameters"),
    (["--range", "20:400", "--donor", "1e16,0.045", "--target", "E_A1"], "unknown target"),
    (["--range", "20:400", "--donor", "1e16,0.045", "--criterion", "E"], "unknown criterion"),
    (["--range", "20:400", "--donor", "1e16,0.045", "--error", "150%"], "measurement error"),
    (["--range", "20:400", "--donor", "1e16,none"], "needs an ionization energy"),
    (["--range", "20:400"], "give the levels"),
])
def test_bad_input_exit_2(args, match, monkeypatch, capsys):
    code, _, err = cli(monkeypatch, capsys, "plan", *args)
    assert code == 2, err
    assert match in err and "Traceback" not in err


@pytest.mark.parametrize(("text", "match"), [
    ('{"a": 1', "line 1, column 8: not a fit result: not JSON"),
    ('{"schema_version": 2, "levels": []}', "not a fit result: no 'carrier'"),
    ('[1, 2]', "not a fit result"),
])
def test_a_fit_json_that_is_not_one(text, match, monkeypatch, capsys, tmp_path):
    bad = tmp_path / "bad.json"
    bad.write_text(text)
    code, _, err = cli(monkeypatch, capsys, "plan", "--from-fit", bad, "--range", "20:400")
    assert code == 2
    assert match in err and str(bad) in err
