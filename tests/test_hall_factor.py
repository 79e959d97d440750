"""Hall factor r_H = <tau^2>/<tau>^2 and drift mobility of the combined relaxation time.

Single-mechanism values: r_H = Gamma(2s + 5/2) Gamma(5/2) / Gamma(s + 5/2)^2 over the
Maxwell-Boltzmann distribution (E. H. Putley, The Hall Effect and Semiconductor Physics
(1968), ch. 4; from memory): 3 pi / 8 for acoustic phonons (s = -1/2), 315 pi / 512 for
ionized impurities (s = 3/2), 1 for neutral impurities; the exact numbers and the mixtures'
integrals are computed here with mpmath.
"""

from __future__ import annotations

import mpmath as mp
import numpy as np
import pytest

from freezeout.errors import InputError
from freezeout.physics import hall_factor as hf
from freezeout.physics import mobility as mob

S_L, S_I, S_N = hf.LATTICE_EXPONENT, hf.IONIZED_IMPURITY_EXPONENT, hf.NEUTRAL_IMPURITY_EXPONENT


def _mp_average(mobilities, exponents):
    """(drift mobility, r_H) by mpmath quadrature of the defining integrals (computed here)."""
    mp.mp.dps = 30
    pref = [mp.mpf(mu) * mp.gamma(mp.mpf(5) / 2) / mp.gamma(mp.mpf(s) + mp.mpf(5) / 2)
            for mu, s in zip(mobilities, exponents, strict=True)]

    def tau(x):
        return 1 / sum(x ** (-mp.mpf(s)) / p for p, s in zip(pref, exponents, strict=True))

    pts = [0, mp.mpf("1e-6"), mp.mpf("1e-4"), mp.mpf("1e-2"), mp.mpf("0.1"), 1, 5, 20, mp.inf]
    den = mp.gamma(mp.mpf(5) / 2)
    m1 = mp.quad(lambda x: tau(x) * x ** mp.mpf(1.5) * mp.exp(-x), pts) / den
    m2 = mp.quad(lambda x: tau(x) ** 2 * x ** mp.mpf(1.5) * mp.exp(-x), pts) / den
    return float(m1), float(m2 / m1**2)


@pytest.mark.parametrize(("s", "exact"), [
    (S_L, 3 * mp.pi / 8),
    (S_I, 315 * mp.pi / 512),
    (S_N, mp.mpf(1)),
])
def test_single_mechanism_limits(s, exact):
    mp.mp.dps = 30
    closed = (mp.gamma(2 * mp.mpf(s) + mp.mpf(5) / 2) * mp.gamma(mp.mpf(5) / 2)
              / mp.gamma(mp.mpf(s) + mp.mpf(5) / 2) ** 2)
    assert float(closed) == pytest.approx(float(exact), rel=1e-15)
    got = hf.scattering_average([1234.0], [s])
    assert got.hall_factor == pytest.approx(float(exact), rel=1e-12)
    # the prefactor mapping makes <tau> of one mechanism reproduce its mobility
    assert got.drift_mobility == pytest.approx(1234.0, rel=1e-12)
    assert got.hall_mobility == pytest.approx(1234.0 * float(exact), rel=1e-12)
    assert hf.power_law_hall_factor(s) == pytest.approx(float(exact), rel=1e-13)


def test_rounded_literature_values():
    # 3 pi / 8 = 1.1781 and 315 pi / 512 = 1.9328 (Putley 1968, ch. 4; from memory)
    assert hf.scattering_average([1.0], [S_L]).hall_factor == pytest.approx(1.1781, abs=5e-5)
    assert hf.scattering_average([1.0], [S_I]).hall_factor == pytest.approx(1.9328, abs=5e-5)


def test_prefactor_mapping():
    # q tau_0 / m_c = mu Gamma(5/2) / Gamma(s + 5/2): 3 sqrt(pi)/4, sqrt(pi)/8, 1 (computed
    # here)
    assert hf.relaxation_prefactor(1.0, S_L) == pytest.approx(3 * np.sqrt(np.pi) / 4, rel=1e-14)
    assert hf.relaxation_prefactor(1.0, S_I) == pytest.approx(np.sqrt(np.pi) / 8, rel=1e-14)
    assert hf.relaxation_prefactor(1.0, S_N) == pytest.approx(1.0, rel=1e-14)


@pytest.mark.parametrize(("mobilities", "rtol"), [
    ((1000.0, 1000.0, np.inf), 1e-10),
    ((1000.0, 3000.0, 2000.0), 1e-10),
    ((3000.0, 1000.0, 5000.0), 1e-10),
    ((1e5, 1000.0, np.inf), 1e-10),     # impurity dominated
    ((1000.0, 1e5, np.inf), 1e-9),      # lattice dominated: the hardest case for the rule
    ((1000.0, 1e6, 3000.0), 1e-8),
    ((1.0, 1e4, np.inf), 1e-7),
])
def test_mixtures_against_mpmath(mobilities, rtol):
    finite = [(m, s) for m, s in zip(mobilities, (S_L, S_I, S_N), strict=True) if np.isfinite(m)]
    ref_mu, ref_rh = _mp_average([m for m, _ in finite], [s for _, s in finite])
    got = hf.scattering_average(list(mobilities), [S_L, S_I, S_N])
    assert got.drift_mobility == pytest.approx(ref_mu, rel=rtol)
    assert got.hall_factor == pytest.approx(ref_rh, rel=rtol)


def test_drift_mobility_never_exceeds_matthiessen():
    # tau -> (sum 1/tau_i)^-1 is concave, so <tau> <= (sum 1/<tau_i>)^-1 (Jensen's
    # inequality; computed here), with equality when all exponents are equal
    rng = np.random.default_rng(7)
    mu = 10 ** rng.uniform(2, 5, size=(3, 200))
    got = hf.scattering_average(list(mu), [S_L, S_I, S_N]).drift_mobility
    assert np.all(got <= mob.matthiessen_mobility(*mu) * (1 + 1e-12))
    same = hf.scattering_average([mu[0], mu[1]], [S_L, S_L])
    np.testing.assert_allclose(same.drift_mobility, mob.matthiessen_mobility(mu[0], mu[1]),
                               rtol=1e-12)
    np.testing.assert_allclose(same.hall_factor, 3 * np.pi / 8, rtol=1e-12)


def test_hall_factor_moves_between_the_limits():
    # impurity-limited at low T, lattice and impurity together above
    t = np.linspace(10.0, 500.0, 50)
    lattice = mob.lattice_mobility(t, 1400.0, 1.5)
    ionized = mob.brooks_herring_mobility(t, 1e17, 1e16, 0.26, 11.7)
    got = hf.scattering_average([lattice, ionized], [S_L, S_I])
    assert got.hall_factor.shape == (50,)
    # <tau^2> >= <tau>^2 (Cauchy-Schwarz); the impurity limit is approached at low T, and
    # a mixture of the two dips below both single-mechanism values (computed here)
    assert np.all(got.hall_factor >= 1.0)
    assert got.hall_factor[0] > 1.9
    assert got.hall_factor.min() < 3 * np.pi / 8
    # vectorized equals scalar calls
    scalar = [hf.scattering_average([lattice[i], ionized[i]], [S_L, S_I]).hall_factor
              for i in (0, 17, 49)]
    np.testing.assert_allclose(got.hall_factor[[0, 17, 49]], scalar, rtol=1e-14)


def test_quadrature_rule_integrates_the_weight_moments():
    # int_0^inf u^k e^(-u^2) du = Gamma((k + 1)/2) / 2 (computed here with mpmath)
    nodes, weights = hf.half_range_hermite()
    assert nodes.size == hf.QUADRATURE_NODES
    for k in range(0, 21):
        exact = float(mp.gamma(mp.mpf(k + 1) / 2) / 2)
        assert float(weights @ nodes**k) == pytest.approx(exact, rel=1e-12)


def test_bad_arguments():
    with pytest.raises(InputError):
        hf.scattering_average([1.0, 2.0], [S_L])
    with pytest.raises(InputError):
        hf.scattering_average([], [])


def test_carrier_mobility_puts_the_mechanisms_together():
    from freezeout.physics.carrier_mobility import carrier_mobility

    t = np.linspace(20.0, 400.0, 50)
    got = carrier_mobility(t, mass=0.26, permittivity=11.7, lattice_mobility_300=1400.0,
                           lattice_exponent=2.4, ionized_density=2e16,
                           screening_density=np.full_like(t, 1e16), neutral_density=5e15)
    np.testing.assert_allclose(got.ionized,
                               mob.brooks_herring_mobility(t, 2e16, 1e16, 0.26, 11.7))
    np.testing.assert_allclose(got.matthiessen,
                               mob.matthiessen_mobility(got.lattice, got.ionized, got.neutral))
    ref = hf.scattering_average([got.lattice, got.ionized, got.neutral], [S_L, S_I, S_N])
    np.testing.assert_allclose(got.hall_factor, ref.hall_factor, rtol=1e-15)
    np.testing.assert_allclose(got.hall, got.hall_factor * got.drift, rtol=1e-15)
    # unscreened form when no screening density is given; no impurities, lattice alone
    cw = carrier_mobility(300.0, mass=0.26, permittivity=11.7, lattice_mobility_300=1400.0,
                          lattice_exponent=2.4, ionized_density=1e17)
    assert cw.ionized == pytest.approx(mob.conwell_weisskopf_mobility(300.0, 1e17, 0.26, 11.7))
    pure = carrier_mobility(t, mass=0.26, permittivity=11.7, lattice_mobility_300=1400.0,
                            lattice_exponent=2.4, ionized_density=0.0, screening_density=1e15)
    np.testing.assert_allclose(pure.drift, mob.lattice_mobility(t, 1400.0, 2.4), rtol=1e-12)
    np.testing.assert_allclose(pure.hall_factor, 3 * np.pi / 8, rtol=1e-12)


def test_missing_material_keys_are_named():
    from freezeout.physics.carrier_mobility import scattering_parameters
    from freezeout.physics.materials import get_material, material_from_mapping

    assert scattering_parameters(get_material("Si"), "n") == (
        get_material("Si").electron_conductivity_mass, get_material("Si").relative_permittivity)
    base = {"name": "X", "band_gap_0K_eV": 1.0, "varshni_alpha_eV_per_K": 1e-4,
            "varshni_beta_K": 100.0, "electron_dos_mass": 1.0, "hole_dos_mass": 1.0}
    no_eps = material_from_mapping({**base, "electron_conductivity_mass": 0.3})
    with pytest.raises(InputError, match="relative_permittivity"):
        scattering_parameters(no_eps, "n")
    with pytest.raises(InputError, match="hole_conductivity_mass"):
        scattering_parameters(no_eps, "p")
