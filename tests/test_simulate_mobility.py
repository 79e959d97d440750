"""``freezeout simulate --mobility``: mu_H, rho and R_H of the majority carrier.

Single-carrier forms mu_H = r_H mu, rho = 1/(q n mu), R_H = -+ r_H/(q n) (K. Seeger,
Semiconductor Physics, ch. 4; from memory); the mobilities themselves are those of
freezeout.physics.carrier_mobility (tested in test_mobility.py / test_hall_factor.py).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import constants as sc

from cli_runner import cli
from freezeout import api
from freezeout.errors import InputError
from freezeout.io.reduced_csv_reader import read_reduced_csv
from freezeout.physics.carrier_mobility import carrier_mobility
from freezeout.physics.materials import get_material
from freezeout.physics.screening import screening_density_one_level

SI = get_material("Si")


def _sim(**kw):
    args = dict(material="Si", donors=[(1e16, 0.045, None)], acceptors=[(2e14, None, None)],
                temperatures=(60.0, 300.0, 25), mobility=("lattice", "brooks-herring"),
                lattice_mu300=1400.0, lattice_exponent=2.4)
    args.update(kw)
    return api.simulate(**args)


def test_single_carrier_relations():
    # mu_H = r_H mu, rho = 1/(q n mu), R_H = -r_H/(q n) for electrons (Seeger; from memory)
    sim = _sim()
    tr = sim.transport
    assert tr.carrier == "n" and tr.models == ("lattice", "brooks-herring")
    np.testing.assert_allclose(tr.hall_mobility, tr.hall_factor * tr.drift_mobility, rtol=1e-14)
    np.testing.assert_allclose(tr.resistivity * sc.e * sim.n * tr.drift_mobility, 1.0,
                               rtol=1e-12)
    np.testing.assert_allclose(tr.hall_coefficient, -tr.hall_factor / (sc.e * sim.n),
                               rtol=1e-12)
    # Hall factor between the Brooks-Herring-alone 315 pi/512 and below 2 (Putley 1968,
    # ch. 4; from memory), lattice-limited at 300 K near 3 pi/8 at most
    assert np.all(tr.hall_factor > 0.9) and np.all(tr.hall_factor < 315 * np.pi / 512)


def test_impurity_and_screening_densities_from_the_neutrality():
    # one donor level over fully ionized acceptors, holes negligible: N_I = n + 2 N_A and
    # n' = n + (n + N_A)(1 - (n + N_A)/N_D) (Chattopadhyay and Queisser, Rev. Mod. Phys. 53,
    # 745 (1981)); the simulated columns equal carrier_mobility with those densities
    sim = _sim()
    n, n_a, n_d = sim.n, 2e14, 1e16
    expected = carrier_mobility(sim.temperature, mass=0.26, permittivity=11.7,
                                lattice_mobility_300=1400.0, lattice_exponent=2.4,
                                ionized_density=n + 2 * n_a,
                                screening_density=screening_density_one_level(n, n_a, n_d))
    np.testing.assert_allclose(sim.transport.drift_mobility, expected.drift, rtol=1e-9)
    np.testing.assert_allclose(sim.transport.hall_factor, expected.hall_factor, rtol=1e-9)


def test_p_type_and_other_mechanisms():
    # holes: R_H > 0, the hole conductivity mass (project choice, no source)
    sim = _sim(donors=[(1e14, None, None)], acceptors=[(1e16, 0.045, None)],
               mobility="lattice+conwell-weisskopf+neutral", lattice_mu300=470.0)
    tr = sim.transport
    assert tr.carrier == "p" and tr.models == ("lattice", "conwell-weisskopf", "neutral")
    assert np.all(tr.hall_coefficient > 0)
    np.testing.assert_allclose(tr.hall_coefficient, tr.hall_factor / (sc.e * sim.p),
                               rtol=1e-12)
    # lattice alone: mu = mu_300 (T/300)^-a and r_H = 3 pi/8 (Putley 1968; from memory)
    lat = _sim(mobility=["lattice"]).transport
    np.testing.assert_allclose(lat.drift_mobility,
                               1400.0 * (_sim().temperature / 300.0) ** -2.4, rtol=1e-9)
    np.testing.assert_allclose(lat.hall_factor, 3 * np.pi / 8, rtol=1e-9)
    # impurities alone need no lattice parameters; erginsoy is the neutral mechanism
    alone = _sim(mobility="brooks-herring+erginsoy", lattice_mu300=None,
                 lattice_exponent=None).transport
    assert alone.models == ("brooks-herring", "neutral")
    assert alone.to_dict()["lattice_mu300_cm2_per_Vs"] is None


@pytest.mark.parametrize(("kw", "match"), [
    ({"mobility": "lattice+phonons"}, "valid: lattice, brooks-herring, conwell-weisskopf, "
                                      "neutral"),
    ({"mobility": ("brooks-herring", "conwell-weisskopf")}, "choose one"),
    ({"lattice_mu300": None}, "lattice mechanism needs"),
    ({"lattice_mu300": -5.0}, "must be > 0"),
])
def test_bad_mobility_input(kw, match):
    with pytest.raises(InputError, match=match):
        _sim(**kw)


def test_simulated_csv_is_a_fit_input(tmp_path, monkeypatch, capsys):
    # common practice, no source: the run a user plans with must read back as a run
    path = tmp_path / "sim.csv"
    code, _, err = cli(monkeypatch, capsys, "simulate", "-t", "60:300:20", "--donor",
                       "1e16,0.045", "--acceptor", "2e14,none", "--mobility",
                       "lattice+brooks-herring", "--lattice-mu300", "1400",
                       "--lattice-exponent", "2.4", "-o", path)
    assert code == 0, err
    text = path.read_text()
    assert "mu_H [cm^2/(V s)]" in text and "rho [ohm cm]" in text and "R_H [cm^3/C]" in text
    run = read_reduced_csv(path)
    sim = _sim(temperatures=(60.0, 300.0, 20))
    assert run.carrier == "n"
    np.testing.assert_allclose(run.mobility, sim.transport.hall_mobility, rtol=1e-9)
    np.testing.assert_allclose(run.resistivity, sim.transport.resistivity, rtol=1e-9)
    np.testing.assert_allclose(run.hall_coefficient, sim.transport.hall_coefficient, rtol=1e-9)
    np.testing.assert_allclose(run.density, sim.n, rtol=1e-9)
    # the temperature-dependent r_H of R_H is not reported as a disagreement with n
    assert not any("disagree" in note for note in run.notes)
    code, _, err = cli(monkeypatch, capsys, "simulate", "-t", "60:300:5", "--donor",
                       "1e16,0.045", "--mobility", "lattice+foo", "--lattice-mu300", "1400",
                       "--lattice-exponent", "2.4")
    assert code != 0 and "valid: lattice" in err
    code, _, err = cli(monkeypatch, capsys, "simulate", "-t", "60:300:5", "--donor",
                       "1e16,0.045", "--lattice-mu300", "1400")
    assert code != 0 and "need --mobility" in err


def test_without_mobility_unchanged():
    sim = api.simulate(material="Si", donors=[(1e16, 0.045, None)],
                       temperatures=(60.0, 300.0, 5))
    assert sim.transport is None
    assert "transport" not in sim.to_dict()
    assert not any(k.startswith(("mu_H", "rho", "R_H")) for k in sim.columns())
