"""Joint fit of ln n and ln mu_H (freezeout.fitting.joint) on runs made by the simulation.

The mobility sees the ionized-impurity density N_I = n + 2 N_A of an n-type sample with one
donor level over fully ionized acceptors (Brooks-Herring; D. Chattopadhyay, H. J. Queisser,
Rev. Mod. Phys. 53, 745 (1981)), so a compensation the density of a run without deep
freeze-out bounds only from above becomes measurable. Seeded noise; the tolerances are
project choices, no source.

The runs are built as a measured run is: the density column is the Hall density with r = 1,
n_H = 1 / (q |R_H|) = n / r_H(T) (R_H = -r_H / (q n); K. Seeger, Semiconductor Physics,
ch. 4; from memory), the mobility column mu_H = r_H mu, both from the simulation's scattering.
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from freezeout import api
from freezeout.errors import InputError
from freezeout.fitting.fit import fit_run
from freezeout.fitting.joint import fit_run_joint
from freezeout.fitting.mobility_model import measured_hall_mobility
from freezeout.physics.constants import Q
from freezeout.physics.materials import get_material
from freezeout.records.run import RunData

SI = get_material("Si")
MECH = ("lattice", "brooks-herring")


def _sim(n_points=50):
    return api.simulate(material="Si", donors=[(1e16, 0.045, None)],
                        acceptors=[(2e14, None, None)], temperatures=(60.0, 300.0, n_points),
                        mobility=MECH, lattice_mu300=1400.0, lattice_exponent=2.4)


def _run(seed=1, n_points=50, errors=True, **extra):
    sim = _sim(n_points)
    rng = np.random.default_rng(seed)
    n = sim.n / sim.transport.hall_factor * (1 + 0.02 * rng.standard_normal(n_points))
    mu = sim.transport.hall_mobility * (1 + 0.02 * rng.standard_normal(n_points))
    fields = dict(mobility=mu, mobility_err=0.02 * mu if errors else None)
    fields.update(extra)
    return RunData(source="synthetic", sha256="0" * 64, temperature=sim.temperature,
                   density=n, density_err=0.02 * n if errors else None, carrier="n",
                   point_carrier=("n",) * n_points, **fields)


@pytest.fixture(scope="module")
def fits():
    run = _run()
    base = fit_run(run, SI)
    return run, base, fit_run_joint(run, SI, mobility=MECH, base=base)


def test_mobility_pins_the_compensation(fits):
    _, base, joint = fits
    # density alone (60-300 K, no deep freeze-out): N_A bounded only from above (and, with
    # r = 1 against a Hall density carrying r_H(T), biased low)
    dens_a = base.levels[-1].concentration
    assert dens_a.ci95[0] <= 1.01e8
    a = joint.levels[-1].concentration
    assert a.value == pytest.approx(2e14, rel=0.25)
    assert a.ci95[0] > 1e13 and a.ci95[0] < 2e14 < a.ci95[1]
    assert joint.levels[0].concentration.value == pytest.approx(1e16, rel=0.05)
    assert joint.levels[0].energy.value == pytest.approx(0.045, abs=0.002)
    m = joint.mobility
    assert m.lattice_mu300.value == pytest.approx(1400.0, rel=0.05)
    assert m.lattice_exponent.value == pytest.approx(2.4, abs=0.1)
    assert m.lattice_mu300.ci95[0] < m.lattice_mu300.value < m.lattice_mu300.ci95[1]
    assert m.sigma_from == {"density": "stated", "mobility": "stated"}
    # chi^2 of 100 residuals of unit variance with 5 parameters (common practice, no source)
    assert 50 < m.chi2 < 160


def test_json_block(fits):
    _, base, joint = fits
    assert "mobility" not in base.to_dict()
    doc = json.loads(json.dumps(joint.to_dict()))
    block = doc["mobility"]["electron"]
    assert block["models"] == ["lattice", "brooks-herring"]
    for key in ("lattice_mu300_cm2_per_Vs", "lattice_exponent"):
        assert set(block[key]) >= {"value", "stderr", "ci95"}
        assert block[key]["stderr"] > 0 and len(block[key]["ci95"]) == 2
    assert block["hall_factor"] == "scattering" and block["run_hall_factor"] == 1.0
    # the r_H(T) applied to the density is the one of the mobility, at every point
    np.testing.assert_allclose(block["point_hall_factor"], block["model_hall_factor"])
    assert not any(w.startswith("compensation only bounded") for w in doc["warnings"])
    assert len(block["model_hall_mobility_cm2_per_Vs"]) == 50


def test_without_errors_each_series_scatter_is_estimated():
    joint = fit_run_joint(_run(seed=2, errors=False), SI, mobility="lattice+brooks-herring")
    m = joint.mobility
    assert m.sigma_from == {"density": "scatter", "mobility": "scatter"}
    # the 2 % noise of each series, within what 50 draws allow (project choice, no source)
    assert m.sigma_ln_density == pytest.approx(0.02, rel=0.3)
    assert m.sigma_ln_mobility == pytest.approx(0.02, rel=0.3)
    assert joint.levels[-1].concentration.value == pytest.approx(2e14, rel=0.3)


def test_mobility_from_resistivity():
    # mu_H = |R_H| / rho = 1 / (q n_H rho) (K. Seeger, Semiconductor Physics, ch. 4; from
    # memory), checked on the noiseless simulation
    sim = _sim(20)
    tr = sim.transport
    base = dict(source="s", sha256="0" * 64, temperature=sim.temperature, density=sim.n,
                density_err=None, carrier="n", point_carrier=("n",) * 20)
    mu, err, how = measured_hall_mobility(RunData(**base, resistivity=tr.resistivity,
                                                  hall_coefficient=tr.hall_coefficient))
    assert how == "|R_H| / rho" and err is None
    np.testing.assert_allclose(mu, tr.hall_mobility, rtol=1e-12)
    # a run with r = 1 carries the Hall density n_H = 1/(q |R_H|) = n / r_H
    n_hall = sim.n / tr.hall_factor
    mu, _, how = measured_hall_mobility(RunData(**{**base, "density": n_hall},
                                                resistivity=tr.resistivity))
    assert how == "1 / (q n_H rho)"
    np.testing.assert_allclose(mu, 1 / (Q * n_hall * tr.resistivity), rtol=1e-12)
    np.testing.assert_allclose(mu, tr.hall_mobility, rtol=1e-12)
    with pytest.raises(InputError, match="mobility column"):
        measured_hall_mobility(RunData(**base))


def test_bad_options():
    run = _run(n_points=10)
    with pytest.raises(InputError, match="valid: lattice"):
        fit_run_joint(run, SI, mobility="lattice+phonon")
    with pytest.raises(InputError, match="include 'lattice'"):
        fit_run_joint(run, SI, mobility="brooks-herring")
    with pytest.raises(InputError, match="hall factor source"):
        fit_run_joint(run, SI, mobility=MECH, hall_factor="bogus")


def test_constant_hall_factor_option(fits):
    run, base, _ = fits
    joint = fit_run_joint(run, SI, mobility=MECH, hall_factor="run", base=base)
    block = joint.to_dict()["mobility"]["electron"]
    assert block["hall_factor"] == "constant" and block["run_hall_factor"] == 1.0
    # mu_H = r mu and the density n with the run's r = 1; the fit stays within 10 % in N_D
    # (r_H is 1.03-1.18 here; project choice, no source)
    np.testing.assert_allclose(joint.mobility.model_hall_factor, 1.0)
    np.testing.assert_allclose(joint.mobility.point_hall_factor, 1.0)
    assert joint.levels[0].concentration.value == pytest.approx(1e16, rel=0.1)


def test_p_type_with_neutral_impurities():
    # holes, Brooks-Herring plus Erginsoy neutral scattering (C. Erginsoy, Phys. Rev. 79,
    # 1013 (1950)); tolerances project choice, no source
    sim = api.simulate(material="Si", acceptors=[(1e16, 0.045, None)],
                       donors=[(2e14, None, None)], temperatures=(60.0, 300.0, 40),
                       mobility="lattice+brooks-herring+neutral", lattice_mu300=470.0,
                       lattice_exponent=2.2)
    rng = np.random.default_rng(3)
    p = sim.p / sim.transport.hall_factor * (1 + 0.02 * rng.standard_normal(40))
    mu = sim.transport.hall_mobility * (1 + 0.02 * rng.standard_normal(40))
    run = RunData(source="s", sha256="0" * 64, temperature=sim.temperature, density=p,
                  density_err=0.02 * p, carrier="p", point_carrier=("p",) * 40, mobility=mu,
                  mobility_err=0.02 * mu)
    joint = fit_run_joint(run, SI, mobility="lattice+brooks-herring+neutral")
    assert joint.levels[-1].kind == "donor"
    assert joint.levels[-1].concentration.value == pytest.approx(2e14, rel=0.25)
    assert joint.mobility.lattice_mu300.value == pytest.approx(470.0, rel=0.05)
    assert list(joint.to_dict()["mobility"]) == ["hole"]


def _measured_file(path, n_points=30):
    """A noiseless simulated run written as a measured one: T, n_H = 1/(q |R_H|), mu_H."""
    sim = _sim(n_points)
    n_hall = 1.0 / (Q * np.abs(sim.transport.hall_coefficient))
    rows = ["T [K],n [cm^-3],mu_H [cm^2/(V s)]"]
    rows += [f"{t!r},{n!r},{m!r}" for t, n, m in zip(sim.temperature.tolist(), n_hall.tolist(),
                                                   sim.transport.hall_mobility.tolist(),
                                                   strict=True)]
    path.write_text("# material: Si\n" + "\n".join(rows) + "\n")
    return path


def test_fit_command_with_mobility(tmp_path, monkeypatch, capsys):
    # the CLI path: a noiseless measured-like run, density-only versus joint (project
    # choice, no source: the joint fit must give back the simulated levels)
    from cli_runner import cli

    path = _measured_file(tmp_path / "sim.csv")
    code, out, err = cli(monkeypatch, capsys, "fit", path, "--json", "--no-history")
    assert code == 0, err
    plain = json.loads(out)
    assert "mobility" not in plain and "mobility" not in plain["provenance"]["options"]
    code, out, err = cli(monkeypatch, capsys, "fit", path, "--json", "--no-history",
                         "--mobility", "lattice+brooks-herring")
    assert code == 0, err
    doc = json.loads(out)
    opts = doc["provenance"]["options"]["mobility"]
    assert opts["models"] == ["lattice", "brooks-herring"]
    assert opts["hall_factor"] == "scattering"  # no '# hall_factor:' line: the default
    block = doc["mobility"]["electron"]
    assert block["lattice_mu300_cm2_per_Vs"]["value"] == pytest.approx(1400.0, rel=1e-3)
    assert doc["levels"][-1]["concentration_cm3"]["value"] == pytest.approx(2e14, rel=1e-3)
    code, _, err = cli(monkeypatch, capsys, "fit", path, "--no-history", "--json",
                       "--lattice-mu300", "1400")
    assert code != 0 and "need --mobility" in err
    bare = tmp_path / "bare.csv"
    bare.write_text("T [K],n [cm^-3]\n" + "".join(f"{t},{1e15 * (1 + t / 100)}\n"
                                                 for t in range(60, 301, 20)))
    code, _, err = cli(monkeypatch, capsys, "fit", bare, "--no-history", "--json",
                       "--mobility", "lattice+brooks-herring")
    assert code != 0 and "mobility column" in err
