"""freezeout's fit against an independent plain implementation of the same carrier model.

The reference below is written from the textbook equations with scipy only, sharing nothing
with freezeout but the material's parameters (``get_material("Si")``): its own N_c and N_v
from the density-of-states masses, its own Varshni gap, the Fermi-Dirac integral F_1/2 by
``scipy.integrate.quad``, charge neutrality solved for E_F by ``scipy.optimize.brentq`` at
each temperature, and a weighted least-squares fit in ln n by ``scipy.optimize.least_squares``.

The synthetic run is n-type Si: one donor N_D = 1e16 cm^-3 at E_c - 0.045 eV (degeneracy 2),
a fully ionized compensating acceptor N_A = 1e14 cm^-3, 30 points from 30 to 400 K evenly in
1000/T, 1 % log-normal noise (seeded) and n_err = 1 % of n. N_A is determined by these data
(the reference's standard error of N_A is about 2 %, checked below): at the cold end n falls
below N_A, where the slope of ln n against 1/T turns from E_D/2k to E_D/k and its position
fixes N_A (the compensated freeze-out regime; S. M. Sze, K. K. Ng, *Physics of Semiconductor
Devices*, 3rd ed. (Wiley, 2007), Sec. 1.4.2; from memory). So all three parameters get the
same tolerance.

Tolerances (project choice, no source): both codes minimise the same chi^2 of the same data,
so their parameters must agree to far better than the statistical error; 1 % relative on
N_D, E_D and N_A is the required agreement (observed: a few parts in 1e7). Standard errors
agree within 3 % and chi^2 within 1e-4 relative (observed: at most 4e-5 and 1e-10); the
model curves at the fit agree within 1e-6 in ln n (observed: 1e-11).

Wall time on this 2-core machine: 10-20 s for the module (the reference fit, a quad per
band per brentq step per point per evaluation, takes nearly all of it).
"""

from __future__ import annotations

import math
import time

import numpy as np
import pytest
from scipy import constants as sc
from scipy.integrate import quad
from scipy.optimize import brentq, least_squares

import freezeout
from freezeout.physics.materials import get_material

#: The synthetic run's truth: log10 N_D [cm^-3], E_D [eV], log10 N_A [cm^-3].
TRUTH = (16.0, 0.045, 14.0)
#: Donor ground-state degeneracy. [1]
DONOR_DEGENERACY = 2.0
#: Relative noise of each density, and its stated uncertainty. [1]
NOISE = 0.01
N_POINTS = 30
SEED = 20240611

MATERIAL = get_material("Si")
K_B_EV = sc.k / sc.e  # [eV/K]


# ---- the independent reference ------------------------------------------------------------
def ln_fermi_half(eta: float) -> float:
    """ln F_1/2(eta), F_1/2(eta) = (2/sqrt(pi)) int_0^inf sqrt(x) / (1 + exp(x - eta)) dx.

    For eta < 0 the integrand is rewritten exactly as exp(eta) sqrt(x) exp(-x) / (1 +
    exp(eta - x)) and exp(eta) is taken out, so that quad works on an integral of order one
    however far below the band edge the Fermi level sits (J. S. Blakemore, *Semiconductor
    Statistics* (Pergamon, 1962), App. C, for the definition; from memory).
    """
    norm = 2.0 / math.sqrt(math.pi)
    if eta < 0.0:
        val, _ = quad(lambda x: math.sqrt(x) * math.exp(-x) / (1.0 + math.exp(eta - x)),
                      0.0, math.inf, epsabs=0.0, epsrel=1e-11, limit=200)
        return eta + math.log(norm * val)
    val, _ = quad(lambda x: math.sqrt(x) / (1.0 + math.exp(x - eta)) if x - eta < 700 else 0.0,
                  0.0, math.inf, epsabs=0.0, epsrel=1e-11, limit=200)
    return math.log(norm * val)


def effective_dos(temperature: float, dos_mass: float) -> float:
    """2 (2 pi m k T / h^2)^(3/2) in cm^-3 (Sze and Ng 2007, Eq. 1.15; from memory)."""
    per_m3 = 2.0 * (2.0 * math.pi * dos_mass * sc.m_e * sc.k * temperature / sc.h**2) ** 1.5
    return per_m3 * 1e-6


def band_gap(temperature: float) -> float:
    """Varshni: Eg(0) - alpha T^2 / (T + beta) in eV (Y. P. Varshni, Physica 34, 149 (1967))."""
    m = MATERIAL
    return m.band_gap_0k - m.varshni_alpha * temperature**2 / (temperature + m.varshni_beta)


def ln_electron_density(temperature: float, nd: float, ed: float, na: float) -> float:
    """ln n [cm^-3] from p + N_D+ = n + N_A, E_F found by brentq (energies from E_c)."""
    kt = K_B_EV * temperature
    eg = band_gap(temperature)
    ln_nc = math.log(effective_dos(temperature, MATERIAL.electron_dos_mass))
    ln_nv = math.log(effective_dos(temperature, MATERIAL.hole_dos_mass))

    def imbalance(ef: float) -> float:  # ln(positive charge) - ln(negative charge)
        n = math.exp(ln_nc + ln_fermi_half(ef / kt))
        p = math.exp(ln_nv + ln_fermi_half((-eg - ef) / kt))
        nd_plus = nd / (1.0 + DONOR_DEGENERACY * math.exp((ef + ed) / kt))
        return math.log(p + nd_plus) - math.log(n + na)

    # at E_v - 5kT the holes alone exceed N_A + n, at E_c + 5kT the electrons exceed N_D
    ef = brentq(imbalance, -eg - 5.0 * kt, 5.0 * kt, xtol=1e-15, rtol=4 * np.finfo(float).eps)
    return ln_nc + ln_fermi_half(ef / kt)


def reference_ln_n(x, temperatures) -> np.ndarray:
    """ln n at each temperature for x = (log10 N_D, E_D [eV], log10 N_A)."""
    nd, ed, na = 10.0 ** x[0], float(x[1]), 10.0 ** x[2]
    return np.array([ln_electron_density(float(t), nd, ed, na) for t in temperatures])


def reference_fit(temperatures, density, density_err):
    """Weighted least squares in ln n; returns (x, standard errors of x, chi^2, dof).

    The covariance is (J^T J)^-1, inflated by the reduced chi^2 when it exceeds 1 (the Birge
    ratio; R. T. Birge, Phys. Rev. 40, 207 (1932); from memory).
    """
    y = np.log(density)
    sigma = density_err / density

    def residual(x):
        return (reference_ln_n(x, temperatures) - y) / sigma

    start = (15.7, 0.040, 13.5)  # a plain start away from the truth
    out = least_squares(residual, start, diff_step=1e-6, x_scale=(0.1, 1e-3, 0.1),
                        xtol=1e-12, ftol=1e-12)
    chi2 = float(np.sum(out.fun**2))
    dof = y.size - len(start)
    cov = np.linalg.inv(out.jac.T @ out.jac) * max(chi2 / dof, 1.0)
    return out.x, np.sqrt(np.diag(cov)), chi2, dof


# ---- the run, fitted both ways ----------------------------------------------------------
@pytest.fixture(scope="module")
def fits(tmp_path_factory):
    temperatures = np.sort(1000.0 / np.linspace(1000.0 / 30.0, 1000.0 / 400.0, N_POINTS))
    rng = np.random.default_rng(SEED)
    density = np.exp(reference_ln_n(TRUTH, temperatures) + rng.normal(0.0, NOISE, N_POINTS))
    density_err = NOISE * density

    path = tmp_path_factory.mktemp("independent") / "si_one_donor.csv"
    rows = ["# material: Si", "T [K],n [cm^-3],n_err [cm^-3]"]
    rows += [f"{t:.17g},{n:.17g},{e:.17g}" for t, n, e in zip(temperatures, density,
                                                               density_err, strict=True)]
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")

    t0 = time.perf_counter()
    ours = freezeout.fit_file(path, "Si", degeneracy=DONOR_DEGENERACY)
    t_freezeout = time.perf_counter() - t0
    t0 = time.perf_counter()
    x, se, chi2, dof = reference_fit(temperatures, density, density_err)
    t_reference = time.perf_counter() - t0
    print(f"\nfit times: freezeout {t_freezeout:.2f} s, reference {t_reference:.2f} s")
    return {"temperature": temperatures, "density": density, "result": ours, "x": x,
            "se": se, "chi2": chi2, "dof": dof}


def _freezeout_values(result):
    donor, acceptor = result.levels
    return (donor.concentration, donor.energy, acceptor.concentration)


def test_parameters_agree_within_one_percent(fits):
    """N_D, E_D and N_A of freezeout and of the reference agree within 1 % (project choice,
    no source: the same chi^2 minimum found twice; observed agreement a few parts in 1e7)."""
    nd, ed, na = _freezeout_values(fits["result"])
    x = fits["x"]
    ref = (10.0 ** x[0], x[1], 10.0 ** x[2])
    for name, mine, theirs in zip(("N_D", "E_D", "N_A"), (nd.value, ed.value, na.value), ref,
                                  strict=True):
        print(f"{name}: freezeout {mine:.8g}  reference {theirs:.8g}  "
              f"relative difference {mine / theirs - 1:.2e}")
        assert mine == pytest.approx(theirs, rel=0.01), name


def test_chi2_and_standard_errors_agree(fits):
    """Same chi^2 (1e-4 relative) and the same standard errors within 3 % (project choice, no
    source): both take the covariance from the Jacobian and inflate it by a reduced chi^2
    above 1. The reference's errors are of log10 N, so sigma_N / N = ln(10) sigma_log10N."""
    res = fits["result"]
    assert res.chi2 == pytest.approx(fits["chi2"], rel=1e-4)
    nd, ed, na = _freezeout_values(res)
    se = fits["se"]
    ln10 = math.log(10.0)
    assert nd.stderr / nd.value == pytest.approx(ln10 * se[0], rel=0.03)
    assert ed.stderr == pytest.approx(se[1], rel=0.03)
    assert na.stderr / na.value == pytest.approx(ln10 * se[2], rel=0.03)


def test_model_curves_agree_at_the_fit(fits):
    """freezeout's model density at its own fit equals the reference model evaluated at those
    parameters, point by point, within 1e-6 in ln n (project choice, no source: both are the
    same equations; the tolerance covers freezeout's F_1/2 approximation)."""
    res = fits["result"]
    nd, ed, na = _freezeout_values(res)
    x = (math.log10(nd.value), ed.value, math.log10(na.value))
    ref = reference_ln_n(x, res.data.temperature)
    diff = np.max(np.abs(np.log(res.data.model_density) - ref))
    print(f"max |ln n_freezeout - ln n_reference| = {diff:.2e}")
    assert diff < 1e-6


def test_design_determines_every_parameter(fits):
    """The check is not vacuous: the reference pins N_A to better than 10 % and both fits
    recover the truth within 4 standard errors (recovery of known parameters; common
    practice, no source)."""
    se = fits["se"]
    assert math.log(10.0) * se[2] < 0.10
    x = fits["x"]
    assert np.all(np.abs(x - np.array(TRUTH)) < 4.0 * se)
    nd, ed, na = _freezeout_values(fits["result"])
    for est, truth in zip((nd, ed, na), (10.0 ** TRUTH[0], TRUTH[1], 10.0 ** TRUTH[2]),
                          strict=True):
        assert abs(est.value - truth) < 4.0 * est.stderr
