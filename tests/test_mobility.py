"""Scattering-limited mobilities, Matthiessen's rule and the Brooks-Herring screening density.

The impurity check values (Si-like and GaAs-like rows) are recomputed here with mpmath (30
digits) from the published formulas: Brooks-Herring from H. Brooks, Phys. Rev. 83, 879
(1951) in the form of D. Chattopadhyay, H. J. Queisser, Rev. Mod. Phys. 53, 745 (1981);
Conwell-Weisskopf from E. Conwell, V. F. Weisskopf, Phys. Rev. 77, 388 (1950); neutral
impurities from C. Erginsoy, Phys. Rev. 79, 1013 (1950). The four-figure values beside them
are the same computation rounded ("computed here with mpmath").
"""

from __future__ import annotations

import mpmath as mp
import numpy as np
import pytest
from scipy import constants as sc

from freezeout.errors import InputError
from freezeout.physics import mobility as mob
from freezeout.physics.screening import (
    ionized_impurity_density,
    neutral_impurity_density,
    screening_density,
    screening_density_one_level,
)

mp.mp.dps = 30
_Q, _K, _HBAR = mp.mpf(sc.e), mp.mpf(sc.k), mp.mpf(sc.hbar)
_M0, _EPS0 = mp.mpf(sc.m_e), mp.mpf(sc.epsilon_0)


def _mp_bh(mass, eps_r, density, temperature):
    """mu_BH [cm^2/Vs] and b from the published formula, N_I = n' = density."""
    eps, kt, n = eps_r * _EPS0, _K * temperature, mp.mpf(density) * 10**6
    b = 24 * mass * _M0 * eps * kt**2 / (_Q**2 * _HBAR**2 * n)
    g = mp.log(1 + b) - b / (1 + b)
    mu = (mp.mpf(2) ** mp.mpf(3.5) * (4 * mp.pi * eps) ** 2 * kt**mp.mpf(1.5)
          / (mp.pi**mp.mpf(1.5) * _Q**3 * mp.sqrt(mass * _M0) * n * g))
    return float(mu * 10**4), float(b)


def _mp_cw(mass, eps_r, density, temperature):
    eps, kt, n = eps_r * _EPS0, _K * temperature, mp.mpf(density) * 10**6
    x = 12 * mp.pi * eps * kt / (_Q**2 * mp.cbrt(n))
    mu = (64 * mp.sqrt(mp.pi) * eps**2 * (2 * kt) ** mp.mpf(1.5)
          / (n * _Q**3 * mp.sqrt(mass * _M0)) / mp.log(1 + x**2))
    return float(mu * 10**4)


# (m*, eps_r, N, T, mu_BH, b, mu_CW): computed here with mpmath, rounded to four figures.
ROWS = [
    (0.26, 11.7, 1e17, 300.0, 9408, 353.9, 8782),
    (0.26, 11.7, 1e16, 77.0, 1.337e4, 233.1, 1.473e4),
    (0.067, 12.9, 1e16, 300.0, 1.857e5, 1005, 1.581e5),
    (0.067, 12.9, 1e15, 77.0, 2.597e5, 662.4, 2.477e5),
]


@pytest.mark.parametrize("row", ROWS)
def test_brooks_herring_and_conwell_weisskopf_check_values(row):
    mass, eps_r, density, t, mu_bh, b, mu_cw = row
    ref_mu, ref_b = _mp_bh(mp.mpf(mass), mp.mpf(eps_r), density, mp.mpf(t))
    got_b = mob.brooks_herring_parameter(t, density, mass, eps_r)
    got_mu = mob.brooks_herring_mobility(t, density, density, mass, eps_r)
    got_cw = mob.conwell_weisskopf_mobility(t, density, mass, eps_r)
    assert got_b == pytest.approx(ref_b, rel=1e-6)
    assert got_mu == pytest.approx(ref_mu, rel=1e-6)
    assert got_cw == pytest.approx(_mp_cw(mp.mpf(mass), mp.mpf(eps_r), density, mp.mpf(t)),
                                   rel=1e-6)
    # the rounded four-figure values (computed here with mpmath)
    assert got_mu == pytest.approx(mu_bh, rel=6e-4)
    assert got_b == pytest.approx(b, rel=6e-4)
    assert got_cw == pytest.approx(mu_cw, rel=6e-4)


def test_erginsoy_check_value():
    # computed here with mpmath from Erginsoy's 1/tau = 20 N_N a_B hbar / m* (Phys. Rev. 79,
    # 1013 (1950)): Si-like m* = 0.26, eps_r = 11.7, N_N = 1e17 cm^-3 gives 3190 cm^2/Vs
    mass, eps_r = mp.mpf("0.26"), mp.mpf("11.7")
    ref = _Q**3 * mass * _M0 / (80 * mp.pi * _EPS0 * eps_r * _HBAR**3 * mp.mpf(10) ** 23) * 10**4
    got = mob.erginsoy_mobility(1e17, 0.26, 11.7)
    assert got == pytest.approx(float(ref), rel=1e-6)
    assert got == pytest.approx(3190, rel=2e-4)
    # temperature independent, inversely proportional to N_N, infinite without scatterers
    assert mob.erginsoy_mobility(2e17, 0.26, 11.7) == pytest.approx(got / 2, rel=1e-14)
    assert np.isinf(mob.erginsoy_mobility(0.0, 0.26, 11.7))


def test_brooks_herring_practical_prefactor():
    # D. C. Look, Electrical Characterization of GaAs Materials and Devices (Wiley, 1989)
    # writes mu_BH = 3.28e15 eps_r^2 T^1.5 / (N_I (m*/m0)^0.5 G(b)) (from memory); the SI
    # formula gives 3.2874e15 (computed here)
    t, n, mass, eps_r = 300.0, 1e17, 0.26, 11.7
    g = mob.screening_function(mob.brooks_herring_parameter(t, n, mass, eps_r))
    prefactor = mob.brooks_herring_mobility(t, n, n, mass, eps_r) * n * np.sqrt(mass) * g / (
        eps_r**2 * t**1.5)
    assert prefactor == pytest.approx(3.28e15, rel=3e-3)
    # b = 1.2925e14 (m*/m0) eps_r T^2 / n' (computed here from the SI form)
    assert mob.brooks_herring_parameter(t, n, mass, eps_r) == pytest.approx(
        1.2925e14 * mass * eps_r * t**2 / n, rel=1e-4)


def test_conwell_weisskopf_and_brooks_herring_share_the_prefactor():
    # both are 2^(7/2) sqrt(pi) 16 eps^2 (kT)^1.5 / (N q^3 m^0.5) over their log factor
    # (computed here): their ratio is G(b) / ln(1 + x^2)
    t, n, mass, eps_r = 150.0, 3e16, 0.26, 11.7
    eps = eps_r * sc.epsilon_0
    x = 12 * np.pi * eps * sc.k * t / (sc.e**2 * np.cbrt(n * 1e6))
    g = mob.screening_function(mob.brooks_herring_parameter(t, n, mass, eps_r))
    ratio = mob.conwell_weisskopf_mobility(t, n, mass, eps_r) / mob.brooks_herring_mobility(
        t, n, n, mass, eps_r)
    assert ratio == pytest.approx(g / np.log1p(x**2), rel=1e-12)


@pytest.mark.parametrize("b", [1e-6, 1e-3, 0.00999, 0.01, 0.0101, 0.5, 10.0, 1e4])
def test_screening_function_matches_mpmath_on_both_sides_of_the_series(b):
    # computed here with mpmath: G(b) = ln(1 + b) - b / (1 + b), 30 digits
    bb = mp.mpf(b)
    ref = float(mp.log(1 + bb) - bb / (1 + bb))
    assert mob.screening_function(b) == pytest.approx(ref, rel=1e-13)


def test_brooks_herring_is_vectorized_and_scales_as_expected():
    t = np.linspace(20.0, 400.0, 50)
    mu = mob.brooks_herring_mobility(t, 1e16, 5e15, 0.26, 11.7)
    assert mu.shape == (50,)
    single = [mob.brooks_herring_mobility(ti, 1e16, 5e15, 0.26, 11.7) for ti in t]
    np.testing.assert_allclose(mu, single, rtol=1e-14)
    # at fixed b, mu ~ T^1.5 / N_I (b ~ T^2 / n'): doubling T and quadrupling n' keeps b
    a = mob.brooks_herring_mobility(100.0, 1e16, 1e15, 0.26, 11.7)
    b = mob.brooks_herring_mobility(200.0, 1e16, 4e15, 0.26, 11.7)
    assert b / a == pytest.approx(2**1.5, rel=1e-12)
    assert np.all(np.diff(mu) > 0)


def test_lattice_power_law():
    assert mob.lattice_mobility(300.0, 1417.0, 2.5) == pytest.approx(1417.0, rel=1e-15)
    assert mob.lattice_mobility(150.0, 1417.0, 2.5) == pytest.approx(1417.0 * 2**2.5, rel=1e-14)
    assert mob.lattice_mobility(np.array([100.0, 300.0]), 1000.0, 1.5).shape == (2,)


def test_matthiessen_rule():
    assert mob.matthiessen_mobility(1000.0, 1000.0) == pytest.approx(500.0)
    assert mob.matthiessen_mobility(1000.0, np.inf) == pytest.approx(1000.0)
    got = mob.matthiessen_mobility(np.array([1e3, 2e3]), 4e3, np.array([np.inf, 4e3]))
    np.testing.assert_allclose(got, [800.0, 1e3])
    with pytest.raises(InputError):
        mob.matthiessen_mobility()


# The screening density (Chattopadhyay and Queisser 1981: n' = n + (n + N_A)(1 - (n + N_A)
# / N_D) for one donor level); the sum over levels is derived in physics/screening.py.

def test_general_screening_reduces_to_the_one_level_form():
    n = np.logspace(12, 16.9, 30)
    n_a, n_d = 2e15, 1e17
    ionized = n + n_a  # neutrality with fully ionized acceptors, holes neglected
    general = screening_density(n, [(ionized, n_d), (n_a, n_a)])  # acceptor: fully ionized
    np.testing.assert_allclose(general, screening_density_one_level(n, n_a, n_d), rtol=1e-14)
    # mirror for p-type: p, compensating donors, one acceptor level
    p = 3e15
    assert screening_density(p, [(p + 1e15, 5e16)]) == pytest.approx(
        screening_density_one_level(p, 1e15, 5e16), rel=1e-14)


def test_screening_level_terms():
    # a fully ionized and an empty level add nothing; a half-ionized level adds N / 4
    assert screening_density(1e15, [(1e16, 1e16)]) == pytest.approx(1e15)
    assert screening_density(1e15, [(0.0, 1e16)]) == pytest.approx(1e15)
    assert screening_density(1e15, [(0.0, 0.0)]) == pytest.approx(1e15)
    assert screening_density(1e15, [(5e15, 1e16), (2.5e15, 5e15)]) == pytest.approx(
        1e15 + 2.5e15 + 1.25e15)
    assert screening_density(1e15, [], minority=1e14) == pytest.approx(1.1e15)


def test_ionized_and_neutral_densities():
    levels = [(4e15, 1e16), (1e15, 5e15)]
    assert ionized_impurity_density([lv[0] for lv in levels], 2e15) == pytest.approx(7e15)
    assert neutral_impurity_density(levels) == pytest.approx(6e15 + 4e15)
    np.testing.assert_allclose(
        neutral_impurity_density([(np.array([1e15, 1e16]), 1e16)]), [9e15, 0.0])
