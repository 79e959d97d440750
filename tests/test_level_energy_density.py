"""Lowering of the ionization energy with the level's concentration.

Sources: G. L. Pearson, J. Bardeen, Phys. Rev. 75, 865 (1949): E = E_0 - alpha N^(1/3) with
alpha about 4.3e-8 eV cm for Si:B and Si:P (from memory), i.e. a drop of about 43 meV at
1e18 cm^-3 (from memory). P. P. Altermatt, A. Schenk, B. Schmithüsen, G. Heiser, J. Appl.
Phys. 100, 113714 and 113715 (2006): E = E_0 / (1 + (N/N_ref)^c), Si:P N_ref = 3e18 cm^-3,
c = 2, Si:B N_ref = 1.7e18 cm^-3, c = 1.4 (parameter sets as quoted in public device-model
code). The derivative checks use central differences of fresh solves (computed here).
"""

from __future__ import annotations

import json

import numpy as np
import pytest

import freezeout
from cli_runner import cli
from freezeout.errors import InputError
from freezeout.fitting.fit import fit_run
from freezeout.fitting.jacobian import majority_log_jacobian
from freezeout.fitting.model import CarrierModel
from freezeout.physics.level_energy import (
    ALTERMATT_SETS,
    PEARSON_BARDEEN_ALPHA_SI,
    PearsonBardeen,
    parse_energy_vs_density,
    pearson_bardeen_energy,
)
from freezeout.physics.materials import get_material
from freezeout.physics.neutrality import DopantLevel, solve_charge_neutrality
from freezeout.records.run import RunData

TRUTH = (3e16, 0.0455, 1e15)  # N_D [cm^-3], E_0 [eV], N_A [cm^-3]


def test_published_drop_at_1e18():
    """Pearson & Bardeen (1949), alpha from memory: about 43 meV lower at 1e18 cm^-3."""
    assert PEARSON_BARDEEN_ALPHA_SI == 4.3e-8
    drop = 0.045 - pearson_bardeen_energy(0.045, 1e18)
    assert drop == pytest.approx(0.043, rel=1e-9)
    # N^(1/3): 8 times the concentration, twice the drop
    assert 0.045 - pearson_bardeen_energy(0.045, 8e18) == pytest.approx(2 * drop)


def test_solve_uses_lowered_energy():
    """A level with lowering solves exactly as the plain level at E_0 - alpha N^(1/3)."""
    si = get_material("Si")
    t = np.geomspace(20, 500, 30)
    acc = [DopantLevel("acceptor", 1e15, None)]
    a = solve_charge_neutrality(t, si, [DopantLevel("donor", 3e16, 0.0455,
                                                    lowering=PearsonBardeen())], acc)
    b = solve_charge_neutrality(t, si, [DopantLevel("donor", 3e16, 0.0455 - 4.3e-8 * 3e16
                                                    ** (1 / 3))], acc)
    np.testing.assert_allclose(a.log_n, b.log_n, rtol=0, atol=1e-12)


@pytest.mark.parametrize("lowering", [PearsonBardeen(), ALTERMATT_SETS["altermatt-p"]],
                         ids=["pearson-bardeen", "altermatt-p"])
def test_jacobian_includes_the_energy_shift(lowering):
    """d ln n / d log10 N_D and d E_0 with lowering (the energy moves with N) against central
    differences of fresh solves (computed here): 1e-5 relative."""
    si = get_material("Si")
    t = np.geomspace(25, 400, 20)
    model = CarrierModel(si, t, "n", 1, True, lowering=lowering)
    big = isinstance(lowering, PearsonBardeen)  # Altermatt's form matters near N_ref only
    values = {"log10_N_D1": np.log10(TRUTH[0] if big else 1e18), "E_D1": TRUTH[1],
              "log10_N_A": np.log10(TRUTH[2])}
    res = model.solve(values, warm=False)
    names = ["log10_N_D1", "E_D1", "log10_N_A"]
    jac = majority_log_jacobian(model, model.bands, values, res, names)
    for k, name in enumerate(names):
        h = 1e-5 if name.startswith("log10") else 1e-7
        up = model.log_density({**values, name: values[name] + h}, warm=False)
        down = model.log_density({**values, name: values[name] - h}, warm=False)
        np.testing.assert_allclose(jac[k], (up - down) / (2 * h), rtol=1e-5, atol=1e-7)
    # and it differs from the Jacobian without lowering (the term is there)
    plain = CarrierModel(si, t, "n", 1, True)
    jp = majority_log_jacobian(plain, plain.bands, values, plain.solve(values, warm=False),
                               names)
    assert np.max(np.abs(jp[0] - jac[0])) > 0.01


def _run(noise=0.0, seed=0):
    sim = freezeout.simulate("Si", donors=[TRUTH[:2]], acceptors=[(TRUTH[2], None)],
                             temperatures=(25.0, 500.0, 40), energy_vs_density="pearson-bardeen")
    d = sim.n * np.exp(np.random.default_rng(seed).normal(0.0, noise, sim.n.size))
    return RunData("synthetic.csv", "0" * 64, sim.temperature, d,
                   noise * d if noise else None, "n", ("n",) * d.size)


def test_fit_recovers_e0_and_n():
    """simulate with Pearson-Bardeen -> fit with it: E_0 and N_D back (common practice);
    the plain fit gives the lowered energy E_0 - alpha N^(1/3) instead."""
    run = _run()
    d, a = fit_run(run, get_material("Si"), lowering=PearsonBardeen()).levels
    assert d.concentration.value == pytest.approx(TRUTH[0], rel=1e-5)
    assert d.energy.value == pytest.approx(TRUTH[1], abs=1e-7)
    assert a.concentration.value == pytest.approx(TRUTH[2], rel=1e-4)
    assert d.to_dict()["energy_vs_density"]["alpha_eV_cm"] == PEARSON_BARDEEN_ALPHA_SI
    plain = fit_run(run, get_material("Si")).levels[0]
    lowered = float(pearson_bardeen_energy(TRUTH[1], TRUTH[0]))
    assert plain.energy.value == pytest.approx(lowered, abs=1e-6)


@pytest.mark.parametrize("seed", [1, 2])
def test_fit_recovers_noisy_run(seed):
    d, _ = fit_run(_run(0.02, seed), get_material("Si"),
                   lowering=PearsonBardeen()).levels
    assert abs(d.energy.value - TRUTH[1]) < 4 * d.energy.stderr
    assert abs(np.log10(d.concentration.value / TRUTH[0])) < 0.05


def test_option_parsing_and_json(monkeypatch, capsys):
    assert parse_energy_vs_density(None) is None
    assert parse_energy_vs_density("pearson-bardeen") == PearsonBardeen(4.3e-8)
    assert parse_energy_vs_density("Pearson-Bardeen:3e-8") == PearsonBardeen(3e-8, host=None)
    assert parse_energy_vs_density("altermatt-b") is ALTERMATT_SETS["altermatt-b"]
    for bad in ("altermatt", "altermatt-p:2", "pearson-bardeen:x", "pearson-bardeen:-1e-8"):
        with pytest.raises(InputError):
            parse_energy_vs_density(bad)
    code, out, _ = cli(monkeypatch, capsys, "fit", "sample_data/harrowgate_si_n_run.csv",
                       "--json", "--no-history", "--energy-vs-density", "pearson-bardeen")
    assert code == 0
    d = json.loads(out)
    assert d["provenance"]["options"]["energy_vs_density"]["alpha_eV_cm"] == 4.3e-8
    code, _, err = cli(monkeypatch, capsys, "fit", "sample_data/harrowgate_si_n_run.csv",
                       "--no-history", "--energy-vs-density", "bardeen")
    assert code == 2 and "pearson-bardeen" in err


def test_altermatt_sets():
    """Altermatt et al. (2006): E(N_ref) = E_0 / 2; Si:P at 1e18 cm^-3 with their E_0 =
    45.5 meV: 45.5 / (1 + (1/3)^2) = 40.95 meV (computed here from the published set)."""
    p, b = ALTERMATT_SETS["altermatt-p"], ALTERMATT_SETS["altermatt-b"]
    assert (p.n_ref, p.exponent, b.n_ref, b.exponent) == (3e18, 2.0, 1.7e18, 1.4)
    assert float(p.energy(0.0455, 3e18)) == pytest.approx(0.0455 / 2)
    assert float(p.energy(0.0455, 1e18)) == pytest.approx(0.04095, rel=1e-12)
    assert float(b.energy(0.04439, 1.7e18)) == pytest.approx(0.04439 / 2)
    # below 1e16 the form leaves the energy within 1e-4 relative (P)
    assert float(p.energy(0.0455, 1e16)) == pytest.approx(0.0455, rel=2e-5)


def test_fit_recovers_altermatt_run():
    """simulate with altermatt-p at N_D = 5e17 -> fit with it: E_0 and N_D back (recovery;
    common practice)."""
    sim = freezeout.simulate("Si", donors=[(5e17, 0.0455)], acceptors=[(1e16, None)],
                             temperatures=(25.0, 500.0, 40), energy_vs_density="altermatt-p")
    run = RunData("synthetic.csv", "0" * 64, sim.temperature, sim.n, None, "n",
                  ("n",) * sim.n.size)
    d, a = fit_run(run, get_material("Si"), lowering=ALTERMATT_SETS["altermatt-p"]).levels
    assert d.concentration.value == pytest.approx(5e17, rel=1e-4)
    assert d.energy.value == pytest.approx(0.0455, abs=1e-6)
    assert a.concentration.value == pytest.approx(1e16, rel=1e-3)
    plain = fit_run(run, get_material("Si")).levels[0]
    assert plain.energy.value == pytest.approx(float(ALTERMATT_SETS["altermatt-p"].energy(
        0.0455, 5e17)), abs=2e-4)


@pytest.mark.parametrize("args, says", [
    # the default alpha and the Altermatt sets are silicon's (G. L. Pearson, J. Bardeen,
    # Phys. Rev. 75, 865 (1949); P. P. Altermatt et al., J. Appl. Phys. 100, 113714 and
    # 113715 (2006)): another host needs its own alpha; a set belongs to one kind of level
    (("sample_data/harrowgate_gan_p_epilayer.csv", "--energy-vs-density", "pearson-bardeen"),
     "values are for Si"),
    (("sample_data/harrowgate_gan_p_epilayer.csv", "--energy-vs-density", "altermatt-b"),
     "values are for Si"),
    (("sample_data/harrowgate_si_n_run.csv", "-m", "Si", "--energy-vs-density",
      "altermatt-b"), "for acceptor levels"),
    (("sample_data/harrowgate_si_n_run.csv", "-m", "Si", "--energy-vs-density",
      "pearson-bardeen:"), "after the colon"),
    (("sample_data/harrowgate_si_n_run.csv", "-m", "Si", "--energy-vs-density",
      "pearson-bardeen:1e-6"), "outside"),
    (("sample_data/harrowgate_si_n_run.csv", "-m", "Si", "--excited-states", "si-p",
      "--donors", "2"), "one donor level"),
])
def test_options_refused_off_their_host_or_level(monkeypatch, capsys, args, says):
    code, _, err = cli(monkeypatch, capsys, "fit", *args, "--json", "--no-history")
    assert code == 2 and says in err and "Traceback" not in err


def test_explicit_alpha_is_accepted_on_another_host(monkeypatch, capsys):
    code, out, _ = cli(monkeypatch, capsys, "fit", "sample_data/harrowgate_gan_p_epilayer.csv",
                       "--energy-vs-density", "pearson-bardeen:3e-8", "--json",
                       "--no-history")
    assert code == 0
    doc = json.loads(out)
    assert any(w.startswith("level physics used:") and "E_0" in w for w in doc["warnings"])
    assert doc.get("spectroscopy") is None  # the spectrum assumes a constant energy


def test_simulate_refuses_a_level_lowered_into_the_band():
    # 4.3e-8 eV cm x (1e20)^(1/3) = 0.2 eV > 0.045 eV (computed here)
    with pytest.raises(InputError, match="into the band"):
        freezeout.api.simulate("Si", donors=[(1e20, 0.045)], temperatures=(20.0, 400.0, 5),
                               energy_vs_density="pearson-bardeen")
