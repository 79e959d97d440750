"""Warnings that are true of the data they are shown for: fixed values shown as fixed, the
runs test gated on a significant misfit, the rms misfit of unweighted fits, a plainly wrong
model marked as such, and the fitted levels checked against the host's effective-mass
estimates. Each warning is checked where it should appear and on a clean run where it must
not."""

from __future__ import annotations

import json
from dataclasses import replace

import numpy as np
import pytest

import freezeout
from cli_runner import cli
from freezeout.fitting.fit import fit_run
from freezeout.physics.materials import get_material
from freezeout.records.run import RunData
from freezeout.reporting.fit_report import render_html

SI = get_material("Si")
PROVENANCE = {"input": "synthetic.csv", "sha256": "0" * 64, "tool_version": "test",
              "date": "2026-01-01", "options": {}}
SAMPLE = "sample_data/harrowgate_si_n_run.csv"


def _run(material, donors, acceptors, tmin, tmax, n=40, noise=0.02, seed=1, weighted=True):
    """Synthetic run with seeded log-normal noise; per-point errors only when ``weighted``."""
    sim = freezeout.simulate(material, donors=donors, acceptors=acceptors,
                             temperatures=(tmin, tmax, n))
    carrier = "n" if sim.n[n // 2] > sim.p[n // 2] else "p"
    d = sim.n if carrier == "n" else sim.p
    rng = np.random.default_rng(seed)
    d = d * np.exp(rng.normal(0.0, noise, d.size)) if noise else d
    err = noise * d if (noise and weighted) else None
    return RunData("synthetic.csv", "0" * 64, sim.temperature, d, err, carrier,
                   (carrier,) * d.size)


def _clean(weighted=True):
    """Si:P-like, 1e16 cm^-3 at 45 meV, light compensation, 20-600 K, 2 % noise."""
    return _run("Si", [(1e16, 0.045)], [(1e13, None)], 20, 600, weighted=weighted)


def _has(result, *words) -> bool:
    return any(all(w in text for w in words) for text in result.warnings)


@pytest.fixture(scope="module")
def clean_weighted():
    return fit_run(_clean(), SI, provenance=PROVENANCE)


@pytest.fixture(scope="module")
def clean_unweighted():
    return fit_run(_clean(weighted=False), SI, provenance=PROVENANCE)


# ---- 1. fixed values shown as fixed ------------------------------------------------------

def test_fixed_value_is_fixed_in_the_document():
    """A held E_D1 has no standard error and no interval: fixed, not 'std. error 0' (project
    choice, no source)."""
    res = fit_run(_clean(), SI, fix={"E_D1": 0.045}, provenance=PROVENANCE)
    d = res.to_dict()
    assert d["schema_version"] == 2
    e = d["levels"][0]["energy_eV"]
    assert (e["value"], e["stderr"], e["ci95"], e["fixed"]) == (0.045, None, [None, None], True)
    n = d["levels"][0]["concentration_cm3"]
    assert "fixed" not in n and n["stderr"] > 0
    assert d["fixed"] == {"E_D1": 0.045}
    json.dumps(d, allow_nan=False)


def test_all_concentrations_fixed_makes_the_net_doping_fixed():
    res = fit_run(_clean(), SI, fix={"N_D1": 1e16, "N_A": 1e13})
    d = res.to_dict()
    assert d["net_doping_cm3"]["fixed"] is True and d["net_doping_cm3"]["stderr"] is None
    assert d["compensation_ratio"]["fixed"] is True
    assert "fixed" not in d["levels"][0]["energy_eV"]


def test_uncompensated_model_holds_the_ratio_at_zero():
    """acceptors=0: the compensation ratio is 0 by the model's choice, not fitted."""
    res = fit_run(_clean(), SI, acceptors=0)
    comp = res.to_dict()["compensation_ratio"]
    assert (comp["value"], comp["stderr"], comp["ci95"], comp["fixed"]) == (
        0.0, None, [None, None], True)
    assert "fixed" not in res.to_dict()["net_doping_cm3"]


def test_report_and_cli_table_say_fixed_and_show_bounds(tmp_path, monkeypatch, capsys):
    """The report row of a held value reads 'fixed', never '0.045 … 0.045'; a user bound
    appears beside its parameter in the report and the terminal table (project choice)."""
    res = freezeout.fit_file(SAMPLE, material="Si", fix={"E_D1": 0.0455},
                             bounds={"N_A": (1e12, 1e15)})
    page = render_html(res, {})
    row = next(r for r in page.split("<tr>") if r.startswith("<th>E_D1"))
    assert "fixed" in row and "0.0455 … 0.0455" not in row and ">0 eV<" not in row
    bound_row = next(r for r in page.split("<tr>") if r.startswith("<th>N_A"))
    assert "bounded" in bound_row and "1e+12" in bound_row and "1e+15" in bound_row
    code, out, _ = cli(monkeypatch, capsys, "fit", SAMPLE, "--material", "Si", "--fix",
                       "E_D1=0.0455", "--bound", "N_A=1e12:1e15", "--no-history", "--out",
                       tmp_path / "rep")
    assert code == 0
    line = next(ln for ln in out.splitlines() if "E_D1" in ln)
    assert "fixed" in line and "0.0455 … 0.0455" not in line
    assert "bounds 1e12…1e15" in out  # numbers rounded as the CLI writes them


def test_misfit_from_a_fix_advises_freeing_it_not_adding_a_level():
    """E_D1 held at 80 meV on 45 meV data: the residuals are systematic, and the advice is to
    free the held value, not to add a donor level."""
    res = fit_run(_clean(), SI, fix={"E_D1": 0.08})
    assert _has(res, "systematic", "E_D1", "free")
    assert not _has(res, "--donors 2")
    free = fit_run(_clean(), SI, fix={"E_D1": 0.045})
    assert not _has(free, "systematic")


# ---- 2. the runs test only on a significant misfit ---------------------------------------

def test_runs_test_silent_on_noise_free_data():
    """Noise-free synthetic data fit to chi^2 ~ 1e-20: the residuals are round-off, whose
    sign pattern means nothing; no 'systematic' warning and no advice to add a level."""
    run = _run("Si", [(3e15, 0.045)], [(2e13, None)], 15, 500, noise=0.0)
    res = fit_run(run, SI)
    assert res.chi2 < 1e-10
    assert not _has(res, "systematic") and not _has(res, "--donors")


def test_runs_test_gate():
    """Weighted: chi^2 above its 99 % quantile for the degrees of freedom (chi-square
    distribution, e.g. scipy.stats.chi2); unweighted: rms misfit above 2 % (project
    choice)."""
    from scipy import stats

    from freezeout.fitting.adequacy import misfit_significant

    q = float(stats.chi2.ppf(0.99, 30))
    assert misfit_significant(True, 1.01 * q, 30, 1.0)
    assert not misfit_significant(True, 0.99 * q, 30, 50.0)
    assert misfit_significant(False, 0.0, 30, 2.5)
    assert not misfit_significant(False, 1e9, 30, 1.5)


def test_missing_level_still_flagged_unweighted():
    """Two donors fitted with one, no per-point errors: a 14 % systematic misfit; the runs
    test still fires (Wald-Wolfowitz, Ann. Math. Statist. 11, 147 (1940))."""
    run = _run("4H-SiC", [(4e15, 0.052), (6e15, 0.092)], [(3e14, None)], 40, 800,
               noise=0.005, weighted=False)
    res = fit_run(run, get_material("4H-SiC"), donors=1)
    assert _has(res, "systematic", "--donors 2")
    assert _has(res, "misses the data by")


# ---- 3. rms misfit of unweighted fits -----------------------------------------------------

def test_rms_residual_percent_in_every_fit(clean_weighted, clean_unweighted):
    """rms of ln(model/measured) over the points used, times 100 (2 % noise gives ~2 %)."""
    for res in (clean_weighted, clean_unweighted):
        st = res.to_dict()["statistics"]
        data = res.data
        ln = np.log(data.model_density / data.density)[data.used]
        assert st["rms_residual_percent"] == pytest.approx(100 * np.sqrt(np.mean(ln**2)))
        assert 1.0 < st["rms_residual_percent"] < 3.0


def test_unweighted_misfit_warned_in_percent_without_chi2():
    """acceptors=0 on a run compensated 50 %: the unweighted fit misses by ~80 % rms while
    its 'reduced chi^2' (residual variance in ln units) is below 1; the warning gives the
    percent and no reduced chi^2."""
    run = _run("Si", [(1e16, 0.045)], [(5e15, None)], 20, 600, weighted=False)
    res = fit_run(run, SI, acceptors=0)
    assert res.reduced_chi2 < 1.0 and res.rms_residual_percent > 50
    assert _has(res, "% rms")
    assert not any("chi^2" in w for w in res.warnings)


def test_no_misfit_warning_on_clean_runs(clean_weighted, clean_unweighted):
    for res in (clean_weighted, clean_unweighted):
        assert not _has(res, "misses the data")
        assert not _has(res, "systematic")
        assert not _has(res, "does not describe")


# ---- 4. a plainly wrong model ------------------------------------------------------------

def test_wrong_model_is_marked_not_a_measurement():
    """acceptors=0 on a run compensated 50 %: reduced chi^2 in the thousands; the net doping
    is not a measurement and the document says so."""
    run = _run("Si", [(1e16, 0.045)], [(5e15, None)], 20, 600)
    res = fit_run(run, SI, acceptors=0)
    assert res.reduced_chi2 > 100
    assert _has(res, "does not describe the data", "not measurements")
    assert res.to_dict()["statistics"]["model_adequate"] is False
    unweighted = fit_run(replace(run, density_err=None), SI, acceptors=0)
    assert unweighted.to_dict()["statistics"]["model_adequate"] is False
    assert _has(unweighted, "does not describe the data")


def test_clean_and_understated_runs_are_adequate(clean_weighted, clean_unweighted):
    """A right model with errors stated 10x too small has reduced chi^2 ~ 100 but random
    residuals: the numbers are measurements with inflated errors, not a wrong model."""
    assert clean_weighted.to_dict()["statistics"]["model_adequate"] is True
    assert clean_unweighted.to_dict()["statistics"]["model_adequate"] is True
    honest = _run("Si", [(1e16, 0.045)], [(1e13, None)], 20, 600, seed=5)
    small = fit_run(replace(honest, density_err=honest.density_err / 10), SI)
    assert small.reduced_chi2 > 50
    assert small.model_adequate and not _has(small, "does not describe")


# ---- 5. levels against the host's effective-mass estimates -------------------------------

def test_no_host_warning_on_shallow_si_donor(clean_weighted):
    """Si:P-like 45 meV is 1.7 times the hydrogenic 26 meV (central-cell shift; Kittel,
    Introduction to Solid State Physics, ch. 8, from memory): no warning."""
    assert not _has(clean_weighted, "hydrogenic")
    assert not _has(clean_weighted, "Mott")


def test_deep_level_is_named_deep():
    """A 0.35 eV donor in 4H-SiC is 6.6 times the effective-mass estimate (53 meV with
    m* = 0.37, eps_r = 9.76): the note says it is not a shallow hydrogenic level."""
    run = _run("4H-SiC", [(1e16, 0.35)], [(1e14, None)], 250, 800, n=30)
    res = fit_run(run, get_material("4H-SiC"))
    assert res.levels[0].energy.value == pytest.approx(0.35, rel=0.05)
    assert _has(res, "E_D1", "hydrogenic", "deep")


def test_concentration_past_the_mott_density_is_flagged():
    """5e18 cm^-3 donors in Si are past the effective-mass Mott density (~1.3e18 cm^-3;
    N. F. Mott, Metal-Insulator Transitions (1974), from memory)."""
    run = _run("Si", [(5e18, 0.045)], [(1e16, None)], 30, 600, n=30)
    res = fit_run(run, SI)
    assert _has(res, "N_D1", "Mott")
