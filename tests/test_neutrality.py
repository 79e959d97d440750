"""Charge neutrality: identities, limits and worked textbook numbers."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from freezeout.physics.bands import thermal_energy
from freezeout.physics.materials import get_material, library, material_from_mapping
from freezeout.physics.neutrality import (
    DopantLevel,
    acceptor_ionized_fraction,
    donor_ionized_fraction,
    solve_charge_neutrality,
)

SI = get_material("Si")


def _balance(res, donors, acceptors):
    """Relative charge-neutrality residual (p + N_D+ - n - N_A-)/(largest term)."""
    pos = res.p + sum(f * d.concentration for f, d in zip(res.donor_ionized, donors, strict=True))
    neg = res.n + sum(f * a.concentration for f, a in zip(res.acceptor_ionized, acceptors,
                                                          strict=True))
    return np.abs(pos - neg) / np.maximum(pos, neg)


def test_np_equals_ni_squared_non_degenerate():
    """n p = n_i^2 = Nc Nv exp(-Eg/kT) in non-degenerate equilibrium, whatever the doping
    (mass-action law; S. M. Sze, K. K. Ng, Physics of Semiconductor Devices, 3rd ed., Eq. 1.22)."""
    t = np.linspace(250.0, 700.0, 10)
    for nd, na in ((1e15, 0.0), (1e16, 1e15), (1e12, 1e14)):
        donors = [DopantLevel("donor", nd, 0.045)]
        acceptors = [DopantLevel("acceptor", na, 0.045)] if na else []
        res = solve_charge_neutrality(t, SI, donors, acceptors, "boltzmann")
        np.testing.assert_allclose(res.n * res.p, SI.intrinsic_density(t) ** 2, rtol=1e-9)
        res = solve_charge_neutrality(t, SI, donors, acceptors)  # Fermi-Dirac, non-degenerate
        np.testing.assert_allclose(res.n * res.p, SI.intrinsic_density(t) ** 2, rtol=1e-3)


def test_intrinsic_case_fermi_level_near_midgap():
    """Undoped: n = p = n_i and E_F - E_v = Eg/2 + (3/4) kT ln(m_h/m_e) (Sze & Ng, Eq. 1.21)."""
    t = np.array([300.0, 600.0])
    res = solve_charge_neutrality(t, SI, [], [], "boltzmann")
    np.testing.assert_allclose(res.n, res.p, rtol=1e-10)
    expect = SI.band_gap(t) / 2 + 0.75 * thermal_energy(t) * np.log(SI.hole_dos_mass /
                                                                    SI.electron_dos_mass)
    np.testing.assert_allclose(res.fermi_level, expect, atol=1e-10)


def test_occupancy_one_half_at_the_fermi_level():
    """A level with g = 1 at the Fermi level is half occupied (Fermi-Dirac distribution)."""
    assert donor_ionized_fraction(0.3, 0.3, 0.025, 1.0) == pytest.approx(0.5, abs=1e-15)
    assert acceptor_ionized_fraction(0.3, 0.3, 0.025, 1.0) == pytest.approx(0.5, abs=1e-15)
    # with g: N_D+/N_D = 1/(1 + g) at E_F = E_D (common practice, no source)
    assert donor_ionized_fraction(0.3, 0.3, 0.025) == pytest.approx(1 / 3, abs=1e-15)
    # the solver's ionized fractions follow the same function of its own E_F
    t = np.array([40.0, 100.0])
    res = solve_charge_neutrality(t, SI, [DopantLevel("donor", 1e16, 0.045, 1.0)])
    ed = SI.band_gap(t) - 0.045
    np.testing.assert_allclose(res.donor_ionized[0],
                               donor_ionized_fraction(res.fermi_level, ed, thermal_energy(t), 1.0),
                               rtol=1e-12)


def test_boltzmann_close_to_fermi_dirac_when_non_degenerate():
    """When E_F is more than 3 kT from both band edges, Boltzmann statistics give densities
    within a few percent of Fermi-Dirac (common practice, no source): e^eta/F_1/2(eta) - 1 is
    1.8 % at eta = -3."""
    t = np.linspace(50.0, 600.0, 30)
    donors = [DopantLevel("donor", 1e17, 0.045)]
    fd = solve_charge_neutrality(t, SI, donors, [])
    bz = solve_charge_neutrality(t, SI, donors, [], "boltzmann")
    kt = thermal_energy(t)
    far = ((SI.band_gap(t) - fd.fermi_level) > 3 * kt) & (fd.fermi_level > 3 * kt)
    assert far.sum() > 10
    assert np.all(np.abs(bz.n[far] / fd.n[far] - 1) < 0.03)


def test_freeze_out_slope_uncompensated():
    """N_A << n << N_D: ln(n T^-3/4) versus 1/T has slope -E_D/(2k) (n ~ sqrt(Nc N_D / g)
    exp(-E_D/2kT); J. S. Blakemore, Semiconductor Statistics, 1962, Ch. 3). Si, N_D = 1e16,
    E_D = 45 meV, N_A = 1e10, 20-30 K."""
    t = np.linspace(20.0, 30.0, 11)
    res = solve_charge_neutrality(t, SI, [DopantLevel("donor", 1e16, 0.045)],
                                  [DopantLevel("acceptor", 1e10, None)])
    slope = np.polyfit(1 / t, np.log(res.n * t**-0.75), 1)[0]
    assert -2 * slope * thermal_energy(1.0) == pytest.approx(0.045, rel=0.02)


def test_freeze_out_slope_compensated():
    """n << N_A: ln(n T^-3/2) versus 1/T has slope -E_D/k (n ~ ((N_D - N_A)/(g N_A)) Nc
    exp(-E_D/kT); same source). Si, N_D = 1e16, N_A = 1e14, 14-20 K."""
    t = np.linspace(14.0, 20.0, 11)
    res = solve_charge_neutrality(t, SI, [DopantLevel("donor", 1e16, 0.045)],
                                  [DopantLevel("acceptor", 1e14, None)])
    assert np.all(res.n < 0.01 * 1e14)
    slope = np.polyfit(1 / t, np.log(res.n * t**-1.5), 1)[0]
    assert -slope * thermal_energy(1.0) == pytest.approx(0.045, rel=0.01)


def _custom(nc300, nv300):
    m_e = (nc300 / 2.50941e19) ** (2 / 3)
    m_h = (nv300 / 2.50941e19) ** (2 / 3)
    return material_from_mapping({"name": "Si-textbook", "band_gap_0K_eV": 1.12,
                                  "varshni_alpha_eV_per_K": 0.0, "varshni_beta_K": 636.0,
                                  "electron_dos_mass": m_e, "hole_dos_mass": m_h})


def test_worked_example_fraction_on_donors():
    """Si:P, N_D = 1e16 cm^-3, E_c - E_d = 0.045 eV, Nc = 2.8e19, T = 300 K, g = 2: 0.41 % of
    the electrons are still on donors (D. A. Neamen, Semiconductor Physics and Devices,
    Ch. 4 example; from memory). Boltzmann statistics as in the textbook."""
    mat = _custom(2.8e19, 1.04e19)
    res = solve_charge_neutrality([300.0], mat, [DopantLevel("donor", 1e16, 0.045)], [],
                                  "boltzmann")
    frac_on_donors = 1 - res.donor_ionized[0][0]
    assert frac_on_donors == pytest.approx(0.0041, abs=0.0001)


def test_worked_example_ninety_percent_boron_ionization():
    """Si:B, N_A = 1e16, E_a = 0.045 eV, Nv = 1.04e19 (T/300)^3/2, g = 4: 90 % ionized at about
    193 K (Neamen, Ch. 4 example/problem; from memory), from (Nv/(4 N_A)) exp(-E_a/kT) = 9,
    which takes p = N_A. With p = N_A- = 0.9 N_A exactly the right-hand side is 9 x 0.9 = 8.1
    (same algebra); the solver must agree with that exact form."""
    mat = _custom(2.8e19, 1.04e19)
    t = np.linspace(150.0, 250.0, 401)
    res = solve_charge_neutrality(t, mat, [], [DopantLevel("acceptor", 1e16, 0.045)],
                                  "boltzmann")
    kt = thermal_energy(t)
    lhs = mat.nv(t) / (4 * 1e16) * np.exp(-0.045 / kt)
    assert np.interp(9.0, lhs, t) == pytest.approx(193.0, abs=1.0)
    t_exact = np.interp(8.1, lhs, t)
    t_solver = np.interp(0.9, res.acceptor_ionized[0], t)
    assert t_solver == pytest.approx(t_exact, abs=0.3)


@settings(max_examples=60, deadline=None)
@given(
    t=st.floats(2.0, 1500.0),
    nd=st.floats(10.0, 21.0),
    na=st.floats(10.0, 21.0),
    ed=st.floats(0.005, 0.6),
    ea=st.floats(0.005, 0.6),
    name=st.sampled_from(sorted(library())),
    stats=st.sampled_from(["fermi-dirac", "boltzmann"]),
)
def test_neutrality_holds_everywhere(t, nd, na, ed, ea, name, stats):
    """2 K to 1500 K, levels 1e10 to 1e21 cm^-3: no overflow, no NaN, the neutrality residual
    below 1e-9 of the largest term, ionized fractions in [0, 1] (identity)."""
    mat = get_material(name)
    donors = [DopantLevel("donor", 10**nd, min(ed, 0.9 * float(mat.band_gap(t))))]
    acceptors = [DopantLevel("acceptor", 10**na, min(ea, 0.9 * float(mat.band_gap(t)))),
                 DopantLevel("acceptor", 10**na / 7, None)]
    res = solve_charge_neutrality(np.array([t]), mat, donors, acceptors, stats)
    assert np.all(np.isfinite(res.fermi_level)) and np.all(np.isfinite(res.log_n))
    for f in (*res.donor_ionized, *res.acceptor_ionized):
        assert np.all((f >= 0) & (f <= 1))
    # in log form: ln(pos) - ln(neg), robust where densities underflow
    lpos = np.logaddexp(res.log_p, np.log(res.donor_ionized[0] * 10**nd + 1e-300))
    lneg = np.logaddexp.reduce([res.log_n, np.log(res.acceptor_ionized[0] * 10**na + 1e-300),
                                np.log(np.full_like(res.log_n, 10**na / 7))])
    assert np.all(np.abs(lpos - lneg) < 1e-9)


def test_multi_level_vectorized_and_exact_root():
    """Two donors and an acceptor over 2-1500 K: n and p within 1e-9 of the exact root (checked
    by re-solving with a tighter tolerance)."""
    from freezeout.physics.neutrality import BandState, solve_levels

    mat = get_material("4H-SiC")
    t = np.geomspace(2.0, 1500.0, 80)
    donors = [DopantLevel("donor", 5e15, 0.052), DopantLevel("donor", 8e15, 0.092)]
    acceptors = [DopantLevel("acceptor", 1e14, None)]
    bands = BandState.from_material(mat, t)
    a = solve_levels(bands, donors, acceptors)
    b = solve_levels(bands, donors, acceptors, tolerance=1e-14)
    np.testing.assert_allclose(a.log_n, b.log_n, atol=1e-9)
    np.testing.assert_allclose(a.log_p, b.log_p, atol=1e-9)
    assert np.all(_balance(a, donors, acceptors)[t > 30] < 1e-9)


def test_bad_levels_rejected():
    with pytest.raises(ValueError):
        DopantLevel("donor", -1.0, 0.05)
    with pytest.raises(ValueError):
        DopantLevel("neutral", 1e15, 0.05)
    with pytest.raises(ValueError):
        solve_charge_neutrality([-5.0], SI)
    with pytest.raises(ValueError):
        solve_charge_neutrality([300.0], SI, statistics="maxwell")
