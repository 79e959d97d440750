"""Donor excited states: g_eff(T), the Si:P ionized fraction, and the fit/simulate options.

Sources: the Si:P 1s binding energies 1s(A1) 45.59 meV (g = 2), 1s(T2) 33.89 meV (g = 6) and
1s(E) 32.58 meV (g = 4) are from A. K. Ramdas, S. Rodriguez, Rep. Prog. Phys. 44, 1297
(1981) (from memory); the occupancy with the impurity's internal partition function is that
of J. S. Blakemore, *Semiconductor Statistics* (Pergamon, 1962), Sec. 3.2 (from memory). The
limits g_eff -> 2 (cold: the spin of the 1s(A1) singlet) and g_eff -> 12 (hot: six valleys
times spin) are common practice, no source.
"""

from __future__ import annotations

import json

import mpmath
import numpy as np
import pytest

import freezeout
from cli_runner import cli
from freezeout.errors import InputError
from freezeout.fitting.fit import fit_run
from freezeout.physics.constants import K_B_EV
from freezeout.physics.excited_states import (
    EXCITED_STATE_SETS,
    effective_degeneracy,
    get_excited_states,
)
from freezeout.physics.materials import get_material
from freezeout.physics.neutrality import DopantLevel, solve_charge_neutrality
from freezeout.records.run import RunData

SI_P = get_excited_states("si-p")


def test_bundled_si_p_energies():
    """Ramdas & Rodriguez (1981), from memory: 45.59, 33.89 (g 6), 32.58 (g 4) meV."""
    assert SI_P.ground_energy == pytest.approx(0.04559)
    assert SI_P.ground_degeneracy == 2.0
    assert SI_P.states == ((0.03389, 6.0), (0.03258, 4.0))
    assert sum(g for _, g in SI_P.states) + SI_P.ground_degeneracy == 12.0
    for states in EXCITED_STATE_SETS.values():  # every set: 1s(A1) deepest, 12 states
        assert all(e < states.ground_energy for e, _ in states.states)
        assert states.ground_degeneracy + sum(g for _, g in states.states) == 12.0


def test_effective_degeneracy_limits():
    """g_eff -> 2 when kT << 11.7 meV, -> 12 when kT >> 13 meV (common practice)."""
    kt = K_B_EV * np.array([4.0, 10.0, 1e6])
    g = effective_degeneracy(kt, SI_P.ground_degeneracy, SI_P.splittings)
    assert g[0] == pytest.approx(2.0, abs=1e-12)
    assert g[1] == pytest.approx(2.0, abs=1e-5)
    assert g[2] == pytest.approx(12.0, rel=2e-4)
    # and strictly rising in between
    g_mid = effective_degeneracy(K_B_EV * np.geomspace(5, 3000, 50), 2.0, SI_P.splittings)
    assert np.all(np.diff(g_mid) > 0)


def _mp_ionized(ef_minus_ec, t):
    """N_D+/N_D = 1/Z, Z = 1 + sum_states g exp((E_F - E_state)/kT), E_state = E_c - E_b:
    the impurity's grand partition function, computed here with mpmath (40 digits)."""
    mpmath.mp.dps = 40
    kt = mpmath.mpf(K_B_EV) * mpmath.mpf(t)
    z = mpmath.mpf(1)
    for e_b, g in ((SI_P.ground_energy, SI_P.ground_degeneracy), *SI_P.states):
        z += g * mpmath.exp((mpmath.mpf(ef_minus_ec) + mpmath.mpf(e_b)) / kt)
    return 1 / z


def test_si_p_ionized_fraction_against_partition_function():
    """The solve's ionized fraction at its own Fermi level against the partition-function
    form, computed here with mpmath: agreement to 1e-12 relative from 15 to 400 K."""
    si = get_material("Si")
    t = np.geomspace(15.0, 400.0, 25)
    donor = DopantLevel("donor", 1e16, SI_P.ground_energy, SI_P.ground_degeneracy,
                        SI_P.splittings)
    res = solve_charge_neutrality(t, si, [donor], [DopantLevel("acceptor", 1e14, None)])
    for i, ti in enumerate(t):
        ef_ec = float(res.fermi_level[i] - res.band_gap[i])
        ref = float(_mp_ionized(ef_ec, ti))
        assert res.donor_ionized[0][i] == pytest.approx(ref, rel=1e-12)
    # the excited states hold electrons: less ionized than with g = 2 alone, in freeze-out
    plain = solve_charge_neutrality(t, si, [DopantLevel("donor", 1e16, SI_P.ground_energy)],
                                    [DopantLevel("acceptor", 1e14, None)])
    mid = (t > 40) & (t < 150)
    assert np.all(res.n[mid] < plain.n[mid])


def _simulated(noise=0.0, seed=0):
    sim = freezeout.simulate("Si", donors=[(2e15, 0.04559)], acceptors=[(4e13, None)],
                             temperatures=(20.0, 500.0, 40), excited_states="si-p")
    d = sim.n * np.exp(np.random.default_rng(seed).normal(0.0, noise, sim.n.size))
    return RunData("synthetic.csv", "0" * 64, sim.temperature, d,
                   noise * d if noise else None, "n", ("n",) * d.size)


def test_fit_recovers_simulated_excited_state_run():
    """simulate with si-p -> fit with si-p returns the levels (recovery; common practice);
    the constant-g fit of the same run is off in E_D by more than 0.1 meV."""
    run = _simulated()
    res = fit_run(run, get_material("Si"), excited=SI_P.splittings)
    d, a = res.levels
    assert d.concentration.value == pytest.approx(2e15, rel=1e-5)
    assert d.energy.value == pytest.approx(0.04559, abs=1e-7)
    assert a.concentration.value == pytest.approx(4e13, rel=1e-4)
    assert d.to_dict()["excited_states"][0]["degeneracy"] == 6.0
    plain = fit_run(run, get_material("Si"))
    assert abs(plain.levels[0].energy.value - 0.04559) > 1e-4


@pytest.mark.parametrize("seed", [1, 2])
def test_fit_recovers_noisy_excited_state_run(seed):
    run = _simulated(noise=0.02, seed=seed)
    d, a = fit_run(run, get_material("Si"), excited=SI_P.splittings).levels
    assert abs(d.energy.value - 0.04559) < 4 * d.energy.stderr
    assert abs(np.log10(d.concentration.value) - np.log10(2e15)) < 0.05


def test_cli_fit_records_set(monkeypatch, capsys, tmp_path):
    csv = tmp_path / "run.csv"
    code, _, _ = cli(monkeypatch, capsys, "simulate", "-t", "20:500:40", "--donor",
                     "2e15,0.04559", "--acceptor", "4e13,none", "--excited-states", "si-p",
                     "-o", csv)
    assert code == 0
    code, out, _ = cli(monkeypatch, capsys, "fit", csv, "--json", "--no-history",
                       "--excited-states", "si-p")
    assert code == 0
    d = json.loads(out)
    assert d["provenance"]["options"]["excited_states"]["name"] == "si-p"
    assert d["levels"][0]["energy_eV"]["value"] == pytest.approx(0.04559, abs=1e-6)


def test_bad_requests(monkeypatch, capsys, tmp_path):
    with pytest.raises(InputError, match="known: si-p"):
        get_excited_states("ge-p")
    code, _, err = cli(monkeypatch, capsys, "fit", "sample_data/harrowgate_si_n_run.csv",
                       "--json", "--no-history", "--excited-states", "si-x")
    assert code == 2 and "si-x" in err
    code, _, err = cli(monkeypatch, capsys, "fit", "sample_data/harrowgate_si_n_run.csv",
                       "--json", "--no-history", "--excited-states", "si-p", "--mobility",
                       "lattice+brooks-herring")
    assert code == 2 and "density-only" in err
    code, _, err = cli(monkeypatch, capsys, "simulate", "-t", "20:400:5", "--material", "Ge",
                       "--donor", "1e15,0.01", "--excited-states", "si-p")
    assert code == 2 and "for Si" in err


def test_plan_refuses_a_fit_with_excited_states(monkeypatch, capsys, tmp_path):
    """plan cannot yet model the option: it says so instead of dropping it."""
    code, out, _ = cli(monkeypatch, capsys, "fit", "sample_data/harrowgate_si_n_run.csv",
                       "--json", "--no-history", "--excited-states", "si-p")
    assert code == 0
    doc = tmp_path / "fit.json"
    doc.write_text(out)
    code, _, err = cli(monkeypatch, capsys, "plan", "--from-fit", doc, "--range", "20:400",
                       "-n", "10")
    assert code == 2 and "--excited-states" in err
