"""simulate -> fit round trips from automatic starting values, and the fit's warnings."""

from __future__ import annotations

import numpy as np
import pytest

import freezeout
from freezeout.errors import InputError
from freezeout.fitting.fit import fit_run, guess
from freezeout.physics.materials import get_material
from freezeout.records.run import RunData


def _run(material, donors, acceptors, tmin, tmax, n=40, noise=0.02, seed=1):
    """Synthetic run with log-normal noise of the stated relative size (seeded)."""
    sim = freezeout.simulate(material, donors=donors, acceptors=acceptors,
                             temperatures=(tmin, tmax, n))
    mid = n // 2
    carrier = "n" if sim.n[mid] > sim.p[mid] else "p"
    d = sim.n if carrier == "n" else sim.p
    rng = np.random.default_rng(seed)
    d = d * np.exp(rng.normal(0.0, noise, d.size)) if noise else d
    err = noise * d if noise else None
    return RunData("synthetic.csv", "0" * 64, sim.temperature, d, err, carrier,
                   (carrier,) * d.size)


def _within(est, truth, nsigma=4.0, rel=None):
    if rel is not None:
        return abs(est.value / truth - 1) < rel
    return abs(est.value - truth) <= nsigma * est.stderr


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_one_level_round_trip(seed):
    """Si:P-like donor, light compensation, 20-600 K: parameters recovered within 4 standard
    errors from automatic starting values (recovery of known parameters; common practice)."""
    run = _run("Si", [(1e16, 0.045)], [(1e13, None)], 20, 600, seed=seed)
    res = fit_run(run, get_material("Si"))
    donor, acc = res.levels
    assert _within(donor.concentration, 1e16) and _within(donor.energy, 0.045)
    assert _within(acc.concentration, 1e13)
    assert res.compensation_ratio.value == pytest.approx(1e-3, rel=0.1)
    lo, hi = res.net_doping.ci95
    assert lo < 1e16 - 1e13 < hi or _within(res.net_doping, 1e16 - 1e13)


def test_exact_round_trip_without_noise():
    run = _run("Si", [(3e15, 0.045)], [(2e13, None)], 15, 500, noise=0.0)
    res = fit_run(run, get_material("Si"))
    assert res.levels[0].concentration.value == pytest.approx(3e15, rel=1e-6)
    assert res.levels[0].energy.value == pytest.approx(0.045, rel=1e-6)
    assert res.levels[1].concentration.value == pytest.approx(2e13, rel=1e-5)


def test_compensated_round_trip():
    run = _run("Si", [(5e16, 0.054)], [(2e16, None)], 25, 500)
    res = fit_run(run, get_material("Si"))
    assert _within(res.levels[0].concentration, 5e16)
    assert _within(res.levels[0].energy, 0.054)
    assert _within(res.levels[1].concentration, 2e16)
    assert _within(res.compensation_ratio, 0.4)


def test_two_level_round_trip_sic():
    """4H-SiC-like nitrogen on two inequivalent sites (about 52 and 92 meV from Hall fits,
    W. Gotz et al., J. Appl. Phys. 73, 3332 (1993); from memory)."""
    run = _run("4H-SiC", [(4e15, 0.052), (6e15, 0.092)], [(3e14, None)], 40, 800)
    res = fit_run(run, get_material("4H-SiC"), donors=2)
    d1, d2, acc = res.levels
    assert _within(d1.energy, 0.052) and _within(d2.energy, 0.092)
    assert _within(d1.concentration, 4e15) and _within(d2.concentration, 6e15)
    assert _within(acc.concentration, 3e14)


def test_deep_acceptor_round_trip_gan():
    """p-type GaN:Mg-like deep acceptor, 170 meV (R. Y. Korotkov et al., Appl. Phys. Lett. 78,
    222 (2001)), compensated by donors, 150-800 K, degeneracy 4."""
    run = _run("GaN", [(5e16, None)], [(3e19, 0.17)], 150, 800)
    assert run.carrier == "p"
    res = fit_run(run, get_material("GaN"), donors=1, acceptors=1)
    acc, don = res.levels
    assert acc.kind == "acceptor" and don.kind == "donor" and acc.degeneracy == 4.0
    assert _within(acc.energy, 0.17) and _within(acc.concentration, 3e19)
    assert _within(don.concentration, 5e16)


def test_boltzmann_statistics_option():
    run = _run("Si", [(1e16, 0.045)], [(1e13, None)], 20, 600)
    res = fit_run(run, get_material("Si"), statistics="boltzmann")
    assert res.statistics_model == "boltzmann"
    assert _within(res.levels[0].energy, 0.045, rel=0.02)


def test_guess_from_plateau_and_slope():
    run = _run("Si", [(1e16, 0.045)], [(1e12, None)], 20, 400, noise=0.0)
    g = guess(run.temperature, run.density, get_material("Si"))
    assert g["net_doping"] == pytest.approx(1e16, rel=0.05)
    assert g["energy"] == pytest.approx(0.045, rel=0.2) and g["has_freezeout"]


def test_warning_no_freeze_out():
    """Data only in saturation: the energy is not constrained and the fit says so."""
    run = _run("Si", [(1e16, 0.045)], [(1e13, None)], 150, 400, n=20)
    res = fit_run(run, get_material("Si"))
    text = " ".join(res.warnings)
    assert "no freeze-out" in text and "E_D1" in text


def test_warning_compensation_only_bounded():
    """Tiny compensation never reached by n in the measured range: only an upper limit."""
    run = _run("Si", [(1e16, 0.045)], [(1e11, None)], 30, 500, n=30)
    res = fit_run(run, get_material("Si"))
    assert any("compensation only bounded" in w for w in res.warnings)


def test_warning_high_correlation_and_fix_option():
    run = _run("4H-SiC", [(4e15, 0.052), (6e15, 0.092)], [(3e14, None)], 40, 800)
    res = fit_run(run, get_material("4H-SiC"), donors=2)
    assert any("strongly correlated" in w for w in res.warnings)
    fixed = fit_run(run, get_material("4H-SiC"), donors=2, fix={"E_D1": 0.052})
    assert fixed.levels[0].energy.value == 0.052 and fixed.n_parameters == 4
    assert "E_D1" not in fixed.parameter_names


def test_bounds_option_and_at_bound_warning():
    run = _run("Si", [(1e16, 0.045)], [(1e13, None)], 20, 600)
    res = fit_run(run, get_material("Si"), bounds={"E_D1": (0.05, 0.08)})
    assert res.levels[0].energy.value == pytest.approx(0.05, abs=1e-4)
    assert any("fit at a bound" in w for w in res.warnings)


def test_bad_fit_requests():
    run = _run("Si", [(1e16, 0.045)], [(1e13, None)], 20, 600, n=5)
    si = get_material("Si")
    with pytest.raises(InputError, match="unknown parameter"):
        fit_run(run, si, fix={"E_X9": 0.1})
    with pytest.raises(InputError, match="at least one level"):
        fit_run(run, si, donors=0)
    with pytest.raises(InputError, match="cannot be told apart"):
        fit_run(run, si, acceptors=2)
    short = _run("Si", [(1e16, 0.045)], [(1e13, None)], 20, 600, n=3)
    with pytest.raises(InputError, match="too few usable points"):
        fit_run(short, si)


def test_result_dict_is_json_and_complete():
    import json

    run = _run("Si", [(1e16, 0.045)], [(1e13, None)], 20, 600)
    d = fit_run(run, get_material("Si")).to_dict()
    json.dumps(d, allow_nan=False)
    for key in ("carrier", "levels", "compensation_ratio", "net_doping_cm3", "statistics",
                "warnings", "hall_factor", "material", "provenance", "schema_version"):
        assert key in d
    lv = d["levels"][0]
    assert lv["kind"] == "donor" and lv["degeneracy"] == 2.0
    assert set(lv["energy_eV"]) == {"value", "stderr", "ci95", "method"}
    assert d["levels"][1]["energy_eV"] is None
    assert set(d["statistics"]) >= {"chi2", "reduced_chi2", "aic", "bic", "n_points"}


#: The fit document's members in order, as ``freezeout fit --json`` printed them before the
#: result became typed (captured from that version; project choice, no source).
DOCUMENT_KEYS = ["schema_version", "carrier", "levels", "compensation_ratio", "net_doping_cm3",
                 "statistics", "correlation", "fixed", "warnings", "alternatives", "hall_factor",
                 "material", "provenance", "data", "optimizer_message"]
DATA_KEYS = ["temperature_K", "density_cm3", "density_err_cm3", "model_density_cm3", "used",
             "point_carrier", "flags", "severe", "resistivity_ohm_cm", "resistivity_err_ohm_cm",
             "mobility_cm2_per_Vs", "mobility_err_cm2_per_Vs", "hall_coefficient_cm3_per_C",
             "findings", "scale_uncertainty"]
MATERIAL_DOC_KEYS = ["name", "band_gap_0K_eV", "varshni_alpha_eV_per_K", "varshni_beta_K",
                     "electron_dos_mass", "hole_dos_mass", "relative_permittivity",
                     "electron_conductivity_mass", "hole_conductivity_mass",
                     "description", "sources"]


def test_typed_result_serializes_to_the_same_document():
    """FitResult holds a Material and a FitData; to_dict gives the document of before, key
    for key and in order, and survives a JSON round trip unchanged (project choice)."""
    import json

    from freezeout.fitting.result import FitData
    from freezeout.physics.materials import Material

    si = get_material("Si")
    run = _run("Si", [(1e16, 0.045)], [(1e13, None)], 20, 600)
    res = fit_run(run, si, provenance={"input": "x.csv", "hall_factor": 1.0})
    assert isinstance(res.material, Material) and res.material is si
    assert isinstance(res.data, FitData)
    d = res.to_dict()
    assert list(d) == DOCUMENT_KEYS
    assert list(d["data"]) == DATA_KEYS
    assert list(d["material"]) == MATERIAL_DOC_KEYS and d["material"] == si.to_dict()
    assert json.loads(json.dumps(d, allow_nan=False)) == d
    data = d["data"]
    n = run.n_points
    assert data["temperature_K"] == run.temperature.tolist()
    assert data["density_cm3"] == run.density.tolist()
    assert data["density_err_cm3"] == run.density_err.tolist()
    assert all(isinstance(x, float) for x in data["model_density_cm3"])
    assert data["used"] == [True] * n and data["severe"] == [False] * n
    assert data["flags"] == [""] * n and data["point_carrier"] == ["n"] * n
    assert data["resistivity_ohm_cm"] is None and data["findings"] == []
    assert data["scale_uncertainty"] == 0.0
    np.testing.assert_allclose(res.data.model_density, data["model_density_cm3"], rtol=0)
    assert d["provenance"] == {"input": "x.csv", "hall_factor": 1.0}


def test_fit_data_says_which_points_were_left_out_and_why():
    """A point of opposite Hall sign is 'mixed', a severe one 'flagged'; neither is used, and
    non-finite transport values serialize as null (project choice, no source)."""
    from dataclasses import replace

    run = _run("Si", [(1e16, 0.045)], [(1e13, None)], 20, 600, n=30)
    carriers = list(run.point_carrier)
    carriers[-1] = "p"
    severe = np.zeros(run.n_points, dtype=bool)
    severe[3] = True
    rho = np.full(run.n_points, 2.0)
    rho[5] = np.nan
    run = replace(run, point_carrier=tuple(carriers), severe=severe, resistivity=rho,
                  flags=("",) * 3 + ("contact",) + ("",) * (run.n_points - 4))
    res = fit_run(run, get_material("Si"))
    data = res.data
    assert data.mixed.tolist() == [False] * 29 + [True]
    assert data.flagged.tolist() == [i == 3 for i in range(30)]
    assert not data.used[3] and not data.used[-1] and data.used.sum() == 28
    assert res.n_points == 28
    d = data.to_dict()
    assert d["severe"][3] is True and d["flags"][3] == "contact"
    assert d["resistivity_ohm_cm"][5] is None and d["resistivity_ohm_cm"][0] == 2.0
    with_flagged = fit_run(run, get_material("Si"), include_flagged=True)
    assert with_flagged.data.used[3] and not with_flagged.data.flagged.any()


def test_warm_start_is_public_and_changes_nothing_but_the_start():
    """A warm solve gives the cold solve's densities (to the solver tolerance, 1e-11 in
    (E_F - E_v)/kT) and keeps its Fermi level; clear_warm_start forgets it; a start of the
    wrong shape is refused (project choice, no source)."""
    from freezeout.fitting.model import CarrierModel

    si = get_material("Si")
    t = np.geomspace(20.0, 600.0, 30)
    model = CarrierModel(si, t, "n", 1, True)
    values = {"log10_N_D1": 16.0, "E_D1": 0.045, "log10_N_A": 13.0}
    assert model.warm_fermi is None
    cold = model.log_density(values, warm=False)
    assert model.warm_fermi is None  # a cold solve keeps nothing
    model.log_density(values)
    kept = model.warm_fermi
    assert kept is not None and kept.shape == t.shape
    model.warm_start(kept + 0.01)
    np.testing.assert_allclose(model.log_density(values), cold, rtol=0, atol=1e-9)
    np.testing.assert_allclose(model.warm_fermi, kept, rtol=0, atol=1e-9)
    model.clear_warm_start()
    assert model.warm_fermi is None
    with pytest.raises(ValueError, match="shape"):
        model.warm_start(np.zeros(3))


def test_understated_uncertainties_inflate_the_errors():
    """Stated errors 10x too small: reduced chi^2 ~ 100, the standard errors are inflated by
    sqrt(reduced chi^2) (Birge ratio; common practice, no source) and the fit says so."""
    honest = _run("Si", [(1e16, 0.045)], [(1e13, None)], 20, 600, seed=5)
    from dataclasses import replace

    small = replace(honest, density_err=honest.density_err / 10)
    a = fit_run(honest, get_material("Si"))
    b = fit_run(small, get_material("Si"))
    assert b.reduced_chi2 == pytest.approx(100 * a.reduced_chi2, rel=0.05)
    # with errors sigma/10 the unscaled covariance is 1/100 of a's and the reduced chi^2 is 100
    # times a's, so after inflation b's standard error is a's unscaled one times
    # sqrt(redchi_a); a's own is unscaled unless its reduced chi^2 exceeds 1
    expected = a.levels[0].energy.stderr * np.sqrt(min(a.reduced_chi2, 1.0))
    assert b.levels[0].energy.stderr == pytest.approx(expected, rel=0.02)
    assert any("inflated" in w for w in b.warnings)


def test_common_scale_uncertainty_added_to_concentrations_only():
    """A relative uncertainty shared by all points (thickness) adds in quadrature to every
    concentration and to the net doping, not to energies or the compensation ratio (GUM,
    JCGM 100:2008, 5.2: fully correlated inputs)."""
    from dataclasses import replace

    run = _run("Si", [(1e16, 0.045)], [(1e13, None)], 20, 600, seed=6)
    a = fit_run(run, get_material("Si"))
    b = fit_run(replace(run, scale_uncertainty=0.03), get_material("Si"))
    ca, cb = a.levels[0].concentration, b.levels[0].concentration
    assert cb.stderr == pytest.approx(np.hypot(ca.stderr, 0.03 * ca.value), rel=1e-6)
    assert b.net_doping.stderr == pytest.approx(
        np.hypot(a.net_doping.stderr, 0.03 * a.net_doping.value), rel=1e-6)
    assert b.levels[0].energy.stderr == pytest.approx(a.levels[0].energy.stderr, rel=1e-9)
    assert b.compensation_ratio.stderr == pytest.approx(a.compensation_ratio.stderr, rel=1e-9)


def test_split_scale_uncertainty():
    from freezeout.records.run_rules import split_scale_uncertainty

    d = np.array([1e15, 2e15])
    err = d * np.hypot(0.01, 0.02)
    rest, s = split_scale_uncertainty(d, err, 0.02)
    np.testing.assert_allclose(rest / d, 0.01, rtol=1e-12)
    assert s == 0.02


def test_heavy_compensation_is_not_mistaken_for_no_freeze_out():
    """N_A/N_D = 0.95: the donor stays over 90 % ionized, yet n falls by orders of magnitude
    and pins E_D (compensated freeze-out, n ~ exp(-E_D/kT); textbook carrier statistics)."""
    run = _run("Si", [(1e15, 0.045)], [(9.5e14, None)], 20, 400)
    res = fit_run(run, get_material("Si"))
    assert not any("no freeze-out" in w for w in res.warnings)
    assert _within(res.levels[0].energy, 0.045)


def test_saturation_only_run_still_gives_the_net_doping():
    """Only saturation (150-400 K): the levels are not determined, the net doping is, from the
    plateau; warnings say which is which."""
    run = _run("Si", [(1e15, 0.045)], [(2e13, None)], 150, 400, n=25)
    res = fit_run(run, get_material("Si"))
    assert any("no freeze-out" in w for w in res.warnings)
    assert _within(res.net_doping, 1e15 - 2e13)
    assert res.net_doping.stderr < 0.05 * res.net_doping.value
    assert res.net_doping.ci95[0] > 0


def test_missing_level_is_flagged_by_the_runs_test():
    """Two donors fitted with one: residuals run in long stretches of one sign (Wald-Wolfowitz
    runs test, Ann. Math. Statist. 11, 147 (1940)) and the fit suggests one more level."""
    run = _run("4H-SiC", [(4e15, 0.052), (6e15, 0.092)], [(3e14, None)], 40, 800, noise=0.005)
    res = fit_run(run, get_material("4H-SiC"), donors=1)
    assert any("systematic" in w and "--donors 2" in w for w in res.warnings)
    good = fit_run(run, get_material("4H-SiC"), donors=2)
    assert not any("systematic" in w for w in good.warnings)


def test_absurd_options_are_bad_input():
    run = _run("Si", [(1e16, 0.045)], [(1e13, None)], 20, 600, n=10)
    si = get_material("Si")
    with pytest.raises(InputError, match="band gap"):
        fit_run(run, si, fix={"E_D1": 2.0})
    with pytest.raises(InputError, match="outside the range"):
        fit_run(run, si, fix={"N_A": 1e99})
    with pytest.raises(InputError, match="degeneracy"):
        fit_run(run, si, degeneracy=0.0)


def test_temperature_uncertainty_enters_as_effective_variance():
    """Thermometry noise of 0.3 K in freeze-out moves ln n by (d ln n/dT) dT, several % at
    20-40 K: with T_err given the fit is consistent (reduced chi^2 near 1) and recovers E_D;
    without, the stated density errors alone are far too small (effective-variance method;
    ISO/IEC Guide 98-3, 5.1.2)."""
    from dataclasses import replace

    run = _run("Si", [(1e16, 0.045)], [(1e13, None)], 20, 300, n=40, noise=0.005, seed=8)
    rng = np.random.default_rng(9)
    u_t = np.full(run.temperature.size, 0.3)
    shifted = replace(run, temperature=run.temperature + rng.normal(0, 0.3, run.temperature.size))
    plain = fit_run(shifted, get_material("Si"))
    with_t = fit_run(replace(shifted, temperature_err=u_t), get_material("Si"))
    assert plain.reduced_chi2 > 5
    assert with_t.reduced_chi2 < 2
    assert _within(with_t.levels[0].energy, 0.045)


def test_information_criteria_prefer_the_right_number_of_levels():
    """With stated uncertainties AIC = chi^2 + 2k, BIC = chi^2 + k ln N (Akaike 1974; Schwarz
    1978); the two-level truth is preferred over one level by both."""
    run = _run("4H-SiC", [(4e15, 0.052), (6e15, 0.092)], [(3e14, None)], 40, 800, noise=0.01)
    one = fit_run(run, get_material("4H-SiC"), donors=1)
    two = fit_run(run, get_material("4H-SiC"), donors=2)
    assert two.aic < one.aic and two.bic < one.bic
    assert two.aic == pytest.approx(two.chi2 + 2 * 5)
    assert two.bic == pytest.approx(two.chi2 + 5 * np.log(two.n_points))
