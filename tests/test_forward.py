"""The forward simulation (physics/simulation.py): neutrality, mass action, ionization."""

from __future__ import annotations

import math

import numpy as np
import pytest

from freezeout.physics.bands import thermal_energy
from freezeout.physics.materials import get_material
from freezeout.physics.neutrality import DopantLevel
from freezeout.physics.simulation import Simulation, simulate, temperature_grid

SI = get_material("Si")


def _charge_residual(sim: Simulation) -> np.ndarray:
    """|p + N_D+ - n - N_A-| over the largest of the two sides."""
    pos = sim.p + sum(f * d.concentration for f, d in zip(sim.donor_ionized, sim.donors,
                                                          strict=True))
    neg = sim.n + sum(f * a.concentration for f, a in zip(sim.acceptor_ionized, sim.acceptors,
                                                          strict=True))
    return np.abs(pos - neg) / np.maximum(pos, neg)


@pytest.mark.parametrize("statistics", ["fermi-dirac", "boltzmann"])
@pytest.mark.parametrize(("donors", "acceptors"), [
    ([(1e16, 0.045)], [(1e14, None)]),
    ([(3e15, 0.045), (2e15, 0.12)], []),
    ([(1e13, None)], [(2e17, 0.045)]),
    ([(5e19, 0.045)], []),
])
def test_neutral_and_fractions_within_zero_and_one(statistics, donors, acceptors):
    """Each temperature is charge neutral to 1e-9 of the largest term (the solver's stated
    accuracy) and every ionized fraction lies in [0, 1] from 5 K to 1200 K (definition of an
    occupancy; common practice, no source)."""
    t = temperature_grid(5.0, 1200.0, 60)
    sim = simulate(SI, t, [DopantLevel("donor", c, e) for c, e in donors],
                   [DopantLevel("acceptor", c, e) for c, e in acceptors], statistics)
    assert np.max(_charge_residual(sim)) < 1e-9
    for f in (*sim.donor_ionized, *sim.acceptor_ionized):
        assert np.all((f >= 0.0) & (f <= 1.0))
    assert np.all(sim.n >= 0) and np.all(sim.p >= 0)  # may underflow to 0 when frozen
    assert np.all((sim.fermi_level > -1.0) & (sim.fermi_level < sim.band_gap + 1.0))


def test_mass_action_in_the_non_degenerate_range():
    """n p = n_i^2 = Nc Nv exp(-Eg/kT) (mass-action law; S. M. Sze, K. K. Ng, Physics of
    Semiconductor Devices, 3rd ed., Eq. 1.22): exact with Boltzmann statistics, and within
    1e-6 with Fermi-Dirac where n/Nc and p/Nv are below 1e-6 (F_1/2(eta) = e^eta (1 -
    e^eta/2^(3/2) + ...), DLMF 25.12(iii))."""
    t = temperature_grid(200.0, 400.0, 15)
    ni2 = SI.intrinsic_density(t) ** 2
    for nd, na in ((1e12, 0.0), (1e12, 3e11), (1e11, 1e12)):
        donors = [DopantLevel("donor", nd, 0.045)]
        acceptors = [DopantLevel("acceptor", na, 0.045)] if na else []
        boltz = simulate(SI, t, donors, acceptors, "boltzmann")
        np.testing.assert_allclose(boltz.n * boltz.p, ni2, rtol=1e-9)
        fd = simulate(SI, t, donors, acceptors)
        assert np.all(fd.n / SI.nc(t) < 1e-6) and np.all(fd.p / SI.nv(t) < 1e-6)
        np.testing.assert_allclose(fd.n * fd.p, ni2, rtol=1e-6)


def test_silicon_phosphorus_at_300k_against_the_closed_form():
    """Si:P, N_D = 1e16 cm^-3, E_D = 45 meV, g = 2, 300 K, no compensation. With holes
    negligible, n (n + N_A) / (N_D - N_A - n) = (Nc/g) exp(-E_D/kT) (Boltzmann statistics);
    the quadratic's root with the material's own Nc, computed here, gives the ionized
    fraction n/N_D. The textbook worked example (D. A. Neamen, Semiconductor Physics and
    Devices, ch. 4 example, from memory) finds 99.6 % with Nc(300 K) = 2.8e19 cm^-3; with
    this library's Nc it also rounds to 99.6 %."""
    nd, ed, g = 1e16, 0.045, 2.0
    sim = simulate(SI, np.array([300.0]), [DopantLevel("donor", nd, ed, g)], [], "boltzmann")
    k = SI.nc(300.0) / g * math.exp(-ed / float(thermal_energy(300.0)))
    n = (-k + math.sqrt(k * k + 4.0 * k * nd)) / 2.0  # n^2 / (N_D - n) = k
    assert sim.n[0] == pytest.approx(n, rel=1e-9)
    assert sim.donor_ionized[0][0] == pytest.approx(n / nd, rel=1e-9)
    assert round(float(sim.donor_ionized[0][0]), 3) == 0.996
    # the same with compensation: n (n + N_A) / (N_D - N_A - n) = k
    na = 2e15
    sim = simulate(SI, np.array([300.0]), [DopantLevel("donor", nd, ed, g)],
                   [DopantLevel("acceptor", na, None)], "boltzmann")
    b = k + na
    n = (-b + math.sqrt(b * b + 4.0 * k * (nd - na))) / 2.0
    assert sim.n[0] == pytest.approx(n, rel=1e-9)


def test_temperature_grid_is_even_in_reciprocal_temperature():
    """n points from t_min to t_max, ascending, equally spaced in 1000/T (project choice)."""
    t = temperature_grid(20.0, 600.0, 12)
    assert t[0] == pytest.approx(20.0) and t[-1] == pytest.approx(600.0)
    assert np.all(np.diff(t) > 0)
    np.testing.assert_allclose(np.diff(1000.0 / t), np.diff(1000.0 / t)[0], rtol=1e-12)
    for bad in ((600.0, 20.0, 5), (0.0, 10.0, 5), (10.0, 20.0, 1), (float("nan"), 10.0, 3)):
        with pytest.raises(ValueError):
            temperature_grid(*bad)


def test_columns_and_document_hold_the_solution():
    """columns() are a fittable run (headers with units) and to_dict the same numbers."""
    t = temperature_grid(30.0, 500.0, 8)
    sim = simulate(SI, t, [DopantLevel("donor", 1e16, 0.045)],
                   [DopantLevel("acceptor", 1e14, None)])
    cols = sim.columns()
    assert list(cols) == ["T [K]", "n [cm^-3]", "p [cm^-3]", "E_F - E_v [eV]",
                          "ionized donor 1 [1]", "ionized acceptor 1 [1]"]
    np.testing.assert_array_equal(cols["n [cm^-3]"], sim.n)
    d = sim.to_dict()
    assert d["material"] == SI.to_dict() and d["statistics"] == "fermi-dirac"
    assert d["n_cm3"] == sim.n.tolist() and d["temperature_K"] == t.tolist()
    assert d["levels"][1] == {"kind": "acceptor", "concentration_cm3": 1e14, "energy_eV": None,
                              "degeneracy": None}
    assert d["acceptor_ionized"] == [[1.0] * 8]
