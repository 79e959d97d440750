"""Posterior sampling of the density fit (fitting/posterior.py, posterior_target.py).

Scenario (fictional): the Harrowgate Cryo Lab wants credible intervals for its phosphorus-
doped Si wafers; its runs are made here with freezeout's own simulate, with 2 % log-normal
noise stated as the density errors (seeded). Sampler: emcee (D. Foreman-Mackey et al., PASP
125, 306 (2013)). On a well-determined run the posterior is near Gaussian and the credible
intervals must match the profile / Wald intervals (the Bernstein-von Mises limit, common
practice, no source); over replicates the 95 % credible interval must cover the truth at a
rate consistent with 95 % (binomial bound, computed here with scipy).
"""

from __future__ import annotations

import json
import math
import sys

import numpy as np
import pytest
from scipy import stats

import freezeout
from cli_runner import cli
from freezeout.api.simulation import simulation_metadata
from freezeout.errors import InputError
from freezeout.fitting.posterior import sample_posterior
from freezeout.io.writers import format_csv

pytest.importorskip("emcee")

# P in Si, 0.045 eV (Sze, Physics of Semiconductor Devices; from memory); the 10 %
# compensation is the scenario's own (project choice).
TRUTH = {"N_D1": 1e16, "E_D1": 0.045, "N_A": 1e15}


def _noisy(seed: int, n: int = 24):
    sim = freezeout.simulate("Si", donors=[(TRUTH["N_D1"], TRUTH["E_D1"])],
                             acceptors=[(TRUTH["N_A"], None)], temperatures=(25, 400, n))
    rng = np.random.default_rng(seed)
    return sim, sim.n * np.exp(rng.normal(0.0, 0.02, sim.n.size))


def _fit(seed: int, **options):
    sim, dens = _noisy(seed)
    return freezeout.api.fit_arrays(sim.temperature, dens, 0.02 * dens, carrier="n",
                                    material="Si", **options)


def _write_run(folder, seed: int = 5):
    sim, dens = _noisy(seed)
    meta = {**simulation_metadata(sim, "fermi-dirac"), "sample": "Harrowgate HG-P-07"}
    path = folder / "hg_p07.csv"
    path.write_text(format_csv({"T [K]": sim.temperature, "n [cm^-3]": dens,
                                "n_err [cm^-3]": 0.02 * dens}, meta))
    return path


@pytest.fixture(scope="module")
def well_determined():
    result = _fit(5)
    return result, sample_posterior(result, steps=1000, walkers=64, seed=1)


def test_credible_intervals_match_the_fit_intervals(well_determined):
    result, post = well_determined
    assert post.steps == 1000 and post.walkers == 64 and not post.interrupted
    assert 0.2 < post.acceptance_fraction < 0.8  # a healthy ensemble (common practice)
    assert post.long_enough, post.notes
    by_name = {p.name: p for p in post.parameters}
    assert set(by_name) == {"N_D1", "E_D1", "N_A", "net_doping", "compensation_ratio"}
    for name, q in by_name.items():
        lo, hi = q.fit_ci95
        if name != "E_D1":  # concentrations and the ratio in log space, where fitted
            lo, hi, plo, phi = (math.log(v) for v in (lo, hi, *q.ci95))
        else:
            plo, phi = q.ci95
        width = hi - lo
        assert abs(plo - lo) < 0.2 * width and abs(phi - hi) < 0.2 * width, (name, q)
        if name in TRUTH:
            assert q.ci95[0] < TRUTH[name] < q.ci95[1], (name, q)
    # the derived quantities are those of the samples' own N_D and N_A
    net = TRUTH["N_D1"] - TRUTH["N_A"]
    assert by_name["net_doping"].ci95[0] < net < by_name["net_doping"].ci95[1]
    k = by_name["compensation_ratio"]
    assert k.ci95[0] < TRUTH["N_A"] / TRUTH["N_D1"] < k.ci95[1]


def test_coverage_over_replicates():
    """20 replicates, short chains: the 95 % credible intervals cover the truth.

    With true coverage 0.95, the count covered of 20 is binomial: fewer than the 1 % lower
    quantile (16 of 20: P(X <= 15) = 0.0026) fails; a well-calibrated interval passes with
    probability above 99 % for each parameter.
    """
    n = 20
    floor = int(stats.binom.ppf(0.01, n, 0.95))
    assert floor == 16
    covered = {"N_D1": 0, "E_D1": 0}
    for seed in range(100, 100 + n):
        post = sample_posterior(_fit(seed), steps=250, walkers=32, seed=seed)
        by_name = {p.name: p for p in post.parameters}
        for name in covered:
            lo, hi = by_name[name].ci95
            covered[name] += lo < TRUTH[name] < hi
    assert all(c >= floor for c in covered.values()), covered


def test_interrupt_keeps_what_was_sampled():
    result = _fit(7)

    def progress(done, total):
        assert total == 500
        if done == 60:
            raise KeyboardInterrupt

    post = sample_posterior(result, steps=500, walkers=32, progress=progress)
    assert post.interrupted and post.steps == 60 and post.steps_requested == 500
    d = post.to_dict()
    assert d["interrupted"] is True and d["steps"] == 60
    assert any("interrupted after 60 of 500 steps" in n for n in d["notes"])
    med = d["parameters"]["N_D1"]["median"]
    assert med is not None and 0.5 * TRUTH["N_D1"] < med < 2 * TRUTH["N_D1"]
    assert post.samples.shape == (32 * (60 - post.burn_in), 3)


def test_missing_emcee_is_named(monkeypatch, capsys, tmp_path):
    path = _write_run(tmp_path)
    monkeypatch.setitem(sys.modules, "emcee", None)  # import emcee now raises ImportError
    code, out, err = cli(monkeypatch, capsys, "fit", path, "--posterior", "--no-history",
                         "--json")
    assert code == 2
    assert "pip install freezeout[posterior]" in err
    with pytest.raises(InputError, match=r"freezeout\[posterior\]"):
        freezeout.api.fit_file(path, posterior=True)


def test_refusals(monkeypatch, capsys, tmp_path):
    path = _write_run(tmp_path)
    for extra in (["--mobility", "lattice"], ["--carriers", "both"]):
        code, _, err = cli(monkeypatch, capsys, "fit", path, "--posterior", "--no-history",
                           "--json", *extra)
        assert code == 2 and "density fit only" in err, err
    code, _, err = cli(monkeypatch, capsys, "fit", path, "--posterior-steps", "50",
                       "--no-history", "--json")
    assert code == 2 and "needs --posterior" in err
    code, _, err = cli(monkeypatch, capsys, "fit", path, "--posterior", "--posterior-steps",
                       "5", "--no-history", "--json")
    assert code == 2 and "at least 20" in err


def test_cli_json_and_report(monkeypatch, capsys, tmp_path):
    path = _write_run(tmp_path)
    code, out, err = cli(monkeypatch, capsys, "fit", path, "--posterior", "--posterior-steps",
                         "300", "--no-history", "--json", "--out", tmp_path / "rep")
    assert code == 0, err
    doc = json.loads(out)
    post = doc["posterior"]
    for key in ("sampler", "walkers", "steps", "steps_requested", "burn_in_steps",
                "burn_in_rule", "samples_kept", "model_evaluations", "acceptance_fraction",
                "autocorr_time_steps", "effective_samples", "longer_than_50_tau",
                "interrupted", "likelihood", "priors", "held", "seed", "parameters", "notes"):
        assert key in post, key
    assert post["steps"] == 300 and post["walkers"] == 64 and post["interrupted"] is False
    assert set(post["autocorr_time_steps"]) == {"N_D1", "E_D1", "N_A"}
    assert post["priors"]["N_D1"] == {"flat_in": "log10", "range": [1e8, 1e22],
                                      "unit": "cm^-3"}
    assert post["priors"]["E_D1"]["flat_in"] == "linear"
    assert post["priors"]["E_D1"]["range"][0] == 1e-4
    nd = post["parameters"]["N_D1"]
    assert set(nd) == {"unit", "median", "ci95", "fit"}
    assert nd["fit"]["ci95"] == doc["levels"][0]["concentration_cm3"]["ci95"]
    assert doc["provenance"]["options"]["posterior"] == {"steps": 300, "walkers": 64,
                                                         "seed": 0}
    saved = json.loads((tmp_path / "rep" / "fit.json").read_text())
    assert saved["posterior"]["parameters"] == post["parameters"]
    assert (tmp_path / "rep" / "posterior.png").stat().st_size > 10_000
    page = (tmp_path / "rep" / "report.html").read_text()
    assert "Posterior (MCMC)" in page and "95 % credible interval" in page
    # the same fit without --posterior has no block
    plain = freezeout.api.fit_file(path)
    assert "posterior" not in plain.to_dict()


def test_held_parameter_stays_held():
    result = _fit(9, fix={"N_A": TRUTH["N_A"]})
    post = sample_posterior(result, steps=200, walkers=16, seed=3)
    assert post.sample_names == ("log10_N_D1", "E_D1")
    d = post.to_dict()
    assert d["held"] == {"N_A": TRUTH["N_A"]}
    assert "N_A" not in d["parameters"] and "N_A" not in d["priors"]
    assert d["parameters"]["compensation_ratio"]["median"] > 0
