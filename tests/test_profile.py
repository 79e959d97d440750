"""Profile-likelihood intervals: agreement with the Wald interval where chi^2 is quadratic,
one-sided intervals where the data only bound a parameter, energies inside the gap, and the
method each interval states (JSON, report)."""

from __future__ import annotations

import math

import numpy as np
import pytest

import freezeout
import freezeout.fitting.summary as summary
from freezeout.fitting.fit import fit_run
from freezeout.physics.materials import get_material
from freezeout.records.run import RunData
from freezeout.reporting.fit_report import render_html

SI = get_material("Si")
PROVENANCE = {"input": "synthetic.csv", "sha256": "0" * 64, "tool_version": "test",
              "date": "2026-01-01", "options": {}}


def _run(material, donors, acceptors, tmin, tmax, n=40, noise=0.02, seed=1):
    """Synthetic n-type run with seeded log-normal noise and the uncertainty stated."""
    sim = freezeout.simulate(material, donors=donors, acceptors=acceptors,
                             temperatures=(tmin, tmax, n))
    rng = np.random.default_rng(seed)
    d = sim.n * np.exp(rng.normal(0.0, noise, n))
    return RunData("synthetic.csv", "0" * 64, sim.temperature, d, noise * d, "n", ("n",) * n)


def _forced_profiles(monkeypatch, *args, **kwargs):
    """The fit with profile intervals whatever the covariance looks like."""
    monkeypatch.setattr(summary, "wald_unreliable", lambda *a, **k: True)
    return fit_run(*args, **kwargs)


def test_profile_agrees_with_wald_where_chi2_is_quadratic(monkeypatch):
    """Si:P-like donor without compensation, 20-600 K, 40 points: the covariance is reliable
    (the Wald interval is reported), and the profile interval agrees with it within 10 % on
    each side. For a model linear in its parameters the two coincide up to the quantile
    (t of 38 degrees of freedom against the normal's 1.96, 3 %); Y. Pawitan, In All
    Likelihood (Oxford, 2001), ch. 2-3 (from memory)."""
    run = _run("Si", [(1e16, 0.045)], [], 20, 600)
    wald = fit_run(run, SI, acceptors=0)
    assert wald.levels[0].concentration.method == "wald-log"
    assert wald.levels[0].energy.method == "wald-linear"
    prof = _forced_profiles(monkeypatch, run, SI, acceptors=0)
    for a, b, log in ((wald.levels[0].concentration, prof.levels[0].concentration, True),
                      (wald.levels[0].energy, prof.levels[0].energy, False),
                      (wald.net_doping, prof.net_doping, False)):
        assert b.method == "profile" and b.value == pytest.approx(a.value, rel=1e-9)
        f = math.log if log else (lambda x: x)
        for end in (0, 1):
            wald_half = abs(f(a.ci95[end]) - f(a.value))
            prof_half = abs(f(b.ci95[end]) - f(b.value))
            assert prof_half == pytest.approx(wald_half, rel=0.10)


def test_compensation_only_bounded_gives_a_one_sided_interval():
    """N_A = 1e11 cm^-3 under N_D = 1e16: the carrier density never falls near N_A in 30-500
    K, so the data give only an upper limit: the interval runs from the floor of the range
    (1e8 cm^-3) and says so; the ratio's runs from 0; the warning quotes the same limit
    (project choice, no source)."""
    res = fit_run(_run("Si", [(1e16, 0.045)], [(1e11, None)], 30, 500, n=30), SI)
    acc = res.levels[1].concentration
    assert acc.method == "profile-one-sided"
    assert acc.ci95[0] == pytest.approx(1e8) and 1e8 < acc.ci95[1] < 1e16
    k = res.compensation_ratio
    assert k.method == "profile-one-sided" and k.ci95[0] == 0.0 and 0 < k.ci95[1] < 1
    note = next(w for w in res.warnings if "compensation only bounded" in w)
    assert f"N_A < {acc.ci95[1]:.2g}" in note
    # the donor itself is pinned by the data on both sides
    assert res.levels[0].energy.method == "profile"


@pytest.mark.parametrize("tmin, tmax", [(150, 400), (80, 400)])
def test_energy_intervals_stay_inside_the_gap(tmin, tmax):
    """No freeze-out in 150-400 K (E_D only bounded from above), and the weakly determined
    GaN case of tests/test_coverage.py: every energy interval lies in (0, E_g(T_min)), and an
    end the data do not set is marked one-sided, never "0 ... 420 eV" (physical range of an
    ionization energy: within the gap; project choice, no source)."""
    if tmin == 150:
        run, mat = _run("Si", [(1e16, 0.045)], [(1e13, None)], tmin, tmax, n=20), SI
    else:
        run, mat = _run("GaN", [(1e17, 0.015)], [(3e16, None)], tmin, tmax, n=20), \
            get_material("GaN")
    res = fit_run(run, mat)
    gap = float(mat.band_gap(float(np.min(run.temperature))))
    e = res.levels[0].energy
    assert 0.0 <= e.ci95[0] <= e.value <= e.ci95[1] <= gap
    assert e.method.startswith("profile")
    if tmin == 150:
        # no freeze-out: any shallow enough level fits, a deep one would have frozen out
        # within the range: only an upper limit, the interval from 0
        assert e.method == "profile-one-sided" and e.ci95[0] == 0.0 and e.ci95[1] < 0.1


def test_method_is_in_the_document_and_the_report():
    """Each interval says how it was computed: "method" beside "ci95" in the JSON (schema
    2), and a column of the report's parameter table."""
    res = fit_run(_run("Si", [(1e16, 0.045)], [(1e11, None)], 30, 500, n=30), SI,
                  provenance=PROVENANCE)
    d = res.to_dict()
    assert d["schema_version"] == 2
    assert d["levels"][1]["concentration_cm3"]["method"] == "profile-one-sided"
    assert {"value", "stderr", "ci95", "method"} <= set(d["net_doping_cm3"])
    page = render_html(res, {})
    assert "interval method" in page
    row = next(r for r in page.split("<tr>") if r.startswith("<th>N_A"))
    assert "profile-one-sided" in row
