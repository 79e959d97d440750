"""--hall-factor scattering: one r_H(T) from the scattering for the density and the mobility.

The run is built as a measured one: freezeout's simulation gives R_H = -r_H(T) / (q n)
(K. Seeger, Semiconductor Physics, ch. 4; from memory) and mu_H = r_H mu; the density
column is the Hall density with r = 1, 1 / (q |R_H|) = n / r_H(T), as a run reduced with
r = 1 carries it. Levels of the fictional Harrowgate lot H-17 wafer: N_D = 1e16 cm^-3 at
0.045 eV over N_A = 2e14 cm^-3 in Si, lattice 1400 cm^2/(V s), a = 2.4; 2 % seeded noise.
Tolerances are project choices, no source.
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from freezeout import api
from freezeout.fitting.joint import fit_run_joint
from freezeout.physics.constants import Q
from freezeout.physics.materials import get_material
from freezeout.physics.neutrality import DopantLevel, solve_charge_neutrality
from freezeout.records.run import RunData

SI = get_material("Si")
MECH = "lattice+brooks-herring"
TRUE_ND, TRUE_NA = 1e16, 2e14


def _sim(n_points=50):
    return api.simulate(material="Si", donors=[(TRUE_ND, 0.045, None)],
                        acceptors=[(TRUE_NA, None, None)],
                        temperatures=(60.0, 300.0, n_points), mobility=MECH,
                        lattice_mu300=1400.0, lattice_exponent=2.4)


def _write_measured(path, stated_r=None, seed=1, n_points=50):
    """The Harrowgate run file: T, n_H = 1/(q |R_H|) and mu_H, each with 2 % noise."""
    sim = _sim(n_points)
    rng = np.random.default_rng(seed)
    n_h = 1.0 / (Q * np.abs(sim.transport.hall_coefficient))
    n_h = n_h * (1 + 0.02 * rng.standard_normal(n_points))
    mu = sim.transport.hall_mobility * (1 + 0.02 * rng.standard_normal(n_points))
    rows = ["T [K],n [cm^-3],n_err [cm^-3],mu_H [cm^2/(V s)],mu_H_err [cm^2/(V s)]"]
    rows += [",".join(repr(float(x)) for x in row)
             for row in zip(sim.temperature, n_h, 0.02 * n_h, mu, 0.02 * mu, strict=True)]
    head = "# material: Si\n# sample: Harrowgate H-17\n"
    if stated_r is not None:
        head += f"# hall_factor: {stated_r:g}\n"
    path.write_text(head + "\n".join(rows) + "\n")
    return path


@pytest.fixture(scope="module")
def run_file(tmp_path_factory):
    return _write_measured(tmp_path_factory.mktemp("hfs") / "h17.csv")


@pytest.fixture(scope="module")
def fits(run_file):
    return (api.fit_file(run_file, mobility=MECH, hall_factor="scattering"),
            api.fit_file(run_file, mobility=MECH, hall_factor=1.0))


def test_scattering_recovers_the_levels_and_beats_a_constant_r(fits):
    scat, const = fits
    nd, na = (lv.concentration for lv in scat.levels)
    # measured here: N_D 9.97e15 (9.86e15 ... 1.008e16), N_A 1.96e14 (1.39e14 ... 2.76e14)
    assert nd.ci95[0] < TRUE_ND < nd.ci95[1] and na.ci95[0] < TRUE_NA < na.ci95[1]
    assert nd.value == pytest.approx(TRUE_ND, rel=0.02)
    assert na.value == pytest.approx(TRUE_NA, rel=0.1)
    assert scat.mobility.lattice_mu300.value == pytest.approx(1400.0, rel=0.02)
    # the constant r = 1 misreads the Hall density: measured here N_D 9.42e15 and N_A
    # 8.5e13, both intervals missing the truth, and a larger joint chi^2 (116 against 73)
    cd, ca = (lv.concentration for lv in const.levels)
    assert not cd.ci95[0] < TRUE_ND < cd.ci95[1]
    assert not ca.ci95[0] < TRUE_NA < ca.ci95[1]
    assert abs(np.log(nd.value / TRUE_ND)) < abs(np.log(cd.value / TRUE_ND)) / 5
    assert abs(np.log(na.value / TRUE_NA)) < abs(np.log(ca.value / TRUE_NA)) / 5
    assert scat.mobility.chi2 < const.mobility.chi2
    # 100 residuals of unit variance, 5 parameters (common practice, no source)
    assert 50 < scat.mobility.chi2 < 160


def test_density_model_is_r_n_over_r_h(fits):
    # the model density is the model of the measured column: r_run n(T) / r_H(T), with
    # n(T) from the neutrality of the fitted levels and r_H the one of the mobility series
    scat, _ = fits
    d_lv, a_lv = scat.levels
    res = solve_charge_neutrality(scat.data.temperature, SI,
                                  [DopantLevel("donor", d_lv.concentration.value,
                                               d_lv.energy.value, d_lv.degeneracy)],
                                  [DopantLevel("acceptor", a_lv.concentration.value, None)],
                                  "fermi-dirac")
    mob = scat.mobility
    np.testing.assert_allclose(scat.data.model_density,
                               mob.run_hall_factor * res.n / mob.point_hall_factor, rtol=1e-6)
    np.testing.assert_allclose(mob.model_hall_factor, mob.point_hall_factor, rtol=1e-12)
    assert 1.0 < mob.point_hall_factor.min() and mob.point_hall_factor.max() < 1.3


def test_json_records_the_hall_factor(fits):
    scat, const = fits
    doc = json.loads(json.dumps(scat.to_dict(), allow_nan=False))
    assert doc["provenance"]["options"]["hall_factor"] == "scattering"
    assert doc["provenance"]["options"]["mobility"]["hall_factor"] == "scattering"
    block = doc["mobility"]["electron"]
    assert block["hall_factor"] == "scattering" and block["run_hall_factor"] == 1.0
    assert len(block["point_hall_factor"]) == len(doc["data"]["temperature_K"])
    assert set(block["mechanism_mobility_cm2_per_Vs"]) == {"lattice", "brooks-herring"}
    cdoc = const.to_dict()
    assert cdoc["provenance"]["options"]["mobility"]["hall_factor"] == 1.0
    assert cdoc["mobility"]["electron"]["hall_factor"] == "constant"
    assert any("r_H(T) from the scattering applied to both series" in w
               for w in doc["warnings"])


def test_default_rule(run_file, tmp_path):
    # project choice: no stated r -> scattering; a stated '# hall_factor:' -> that constant
    auto = api.fit_file(run_file, mobility=MECH)
    assert auto.mobility.hall_factor_source == "scattering"
    stated = api.fit_file(_write_measured(tmp_path / "stated.csv", stated_r=1.1),
                          mobility=MECH)
    assert stated.mobility.hall_factor_source == "constant"
    assert stated.mobility.run_hall_factor == 1.1
    np.testing.assert_allclose(stated.mobility.model_hall_factor, 1.1)


def test_a_number_keeps_the_previous_results():
    # the constant factor on the previous joint-fit test run (density column = n, r = 1):
    # the same figures as the previous code's hall_factor="run" (measured here with commit
    # 07df283 before this change)
    sim = _sim()
    rng = np.random.default_rng(1)
    n = sim.n * (1 + 0.02 * rng.standard_normal(50))
    mu = sim.transport.hall_mobility * (1 + 0.02 * rng.standard_normal(50))
    run = RunData(source="synthetic", sha256="0" * 64, temperature=sim.temperature,
                  density=n, density_err=0.02 * n, carrier="n", point_carrier=("n",) * 50,
                  mobility=mu, mobility_err=0.02 * mu)
    joint = fit_run_joint(run, SI, mobility=MECH, hall_factor="constant")
    nd, na = (lv.concentration.value for lv in joint.levels)
    assert nd == pytest.approx(9.846594904459342e15, rel=1e-5)
    assert na == pytest.approx(3.3163974247690277e13, rel=1e-4)
    assert joint.levels[0].energy.value == pytest.approx(0.04543126660986406, rel=1e-5)
    assert joint.mobility.lattice_mu300.value == pytest.approx(1391.6942418517804, rel=1e-5)
    assert joint.mobility.chi2 == pytest.approx(114.06507606030335, rel=1e-4)


def test_cli(run_file, tmp_path, monkeypatch, capsys):
    from cli_runner import cli

    code, _, err = cli(monkeypatch, capsys, "fit", run_file, "--no-history", "--json",
                       "--hall-factor", "scattering")
    assert code == 2 and "--mobility" in err and "r_H(T)" in err
    code, _, err = cli(monkeypatch, capsys, "fit", run_file, "--no-history", "--json",
                       "--hall-factor", "phonons", "--mobility", MECH)
    assert code == 2 and "a number or 'scattering'" in err
    code, out, err = cli(monkeypatch, capsys, "fit", run_file, "--no-history", "--json",
                         "--hall-factor", "Scattering", "--mobility", MECH)
    assert code == 0, err
    doc = json.loads(out)
    assert doc["mobility"]["electron"]["hall_factor"] == "scattering"
    assert doc["provenance"]["options"]["mobility"]["hall_factor"] == "scattering"
    code, out, err = cli(monkeypatch, capsys, "fit", run_file, "--no-history", "--json",
                         "--hall-factor", "1.1", "--mobility", MECH)
    assert code == 0, err
    block = json.loads(out)["mobility"]["electron"]
    assert block["hall_factor"] == "constant" and block["run_hall_factor"] == 1.1
