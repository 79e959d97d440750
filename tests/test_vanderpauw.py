"""Van der Pauw sheet resistance against the published equation, solved independently.

Source throughout: L. J. van der Pauw, "A method of measuring specific resistivity and
Hall effect of discs of arbitrary shape", Philips Research Reports 13, 1-9 (1958):
exp(-pi R_A / R_s) + exp(-pi R_B / R_s) = 1 (Eq. 3) and its form with the correction
factor f, rho = (pi d / ln 2) ((R_A + R_B) / 2) f(Q), with
cosh[((Q - 1)/(Q + 1)) ln 2 / f] = (1/2) exp(ln 2 / f), Q = R_B / R_A. The independent
solver is mpmath's findroot at 50 significant digits.
"""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from freezeout.reduction import (
    classify_configurations,
    correction_factor,
    hall_bar_sheet_resistance,
    resistivity,
    sheet_resistance,
    sheet_resistance_gradient,
    sheet_resistance_uncertainty,
)
from freezeout.reduction.vanderpauw import members
from test_hall_reduction import reduce_rows, synth_rows

mp.mp.dps = 50


def mp_correction_factor(q: float) -> mp.mpf:
    """f(Q) from van der Pauw's cosh form, bracketed root in (0.01, 1] (Q <= 1e4)."""
    q = mp.mpf(q)
    a = (q - 1) / (q + 1)
    ln2 = mp.log(2)
    if q == 1:
        return mp.mpf(1)

    def g(f):
        return mp.cosh(a * ln2 / f) - mp.exp(ln2 / f) / 2

    return mp.findroot(g, (mp.mpf("0.01"), mp.mpf(1)), solver="ridder", maxsteps=400)


def mp_sheet_resistance(r_a: float, r_b: float) -> mp.mpf:
    """R_s from Eq. 3 directly, bracketed between pi R_min/ln 2 and pi (R_A + R_B)/(2 ln 2)."""
    ra, rb = mp.mpf(r_a), mp.mpf(r_b)

    def g(rs):
        return mp.exp(-mp.pi * ra / rs) + mp.exp(-mp.pi * rb / rs) - 1

    lo = mp.pi * min(ra, rb) / mp.log(2) * (1 - mp.mpf("1e-30"))
    hi = mp.pi * (ra + rb) / (2 * mp.log(2)) * (1 + mp.mpf("1e-30"))
    return mp.findroot(g, (lo, hi), solver="ridder", maxsteps=400)


def test_symmetric_case_is_pi_over_ln2():
    """R_A = R_B = R gives R_s = pi R / ln 2 = 4.532360 R (van der Pauw 1958, Eq. 5)."""
    for r in (1e-3, 1.0, 7.25, 3.3e6):
        assert sheet_resistance(r, r) == pytest.approx(math.pi * r / math.log(2), rel=1e-14)
    assert sheet_resistance(1.0, 1.0) == pytest.approx(4.532360, abs=5e-7)  # pi/ln 2, computed here
    assert correction_factor(5.0, 5.0) == pytest.approx(1.0, rel=1e-14)


@pytest.mark.parametrize(
    ("q", "f_listed", "rs_listed"),
    [(2.0, 0.96028, 6.528503), (5.0, 0.82166, 11.172110), (10.0, 0.69926, 17.431126)],
)
def test_correction_factor_against_mpmath_and_listed_values(q, f_listed, rs_listed):
    """f(Q) and R_s (R_A = 1 ohm) against mpmath's root of the cosh form.

    The listed values are rounded roots of van der Pauw's equation (1958), computed here with
    mpmath beforehand; the mpmath root in this test is the tight check.
    """
    f_mp = mp_correction_factor(q)
    assert correction_factor(1.0, q) == pytest.approx(float(f_mp), rel=1e-12)
    assert correction_factor(1.0, q) == pytest.approx(f_listed, abs=6e-6)
    rs = sheet_resistance(1.0, q)
    rs_from_f = float(mp.pi / mp.log(2) * (1 + mp.mpf(q)) / 2 * f_mp)
    assert rs == pytest.approx(rs_from_f, rel=1e-12)
    assert rs == pytest.approx(rs_listed, abs=6e-7)


@pytest.mark.parametrize("q", [1.0 + 1e-9, 1.01, 1.5, 3.0, 30.0, 100.0, 1e3, 1e4, 1e6, 1e9])
def test_sheet_resistance_any_ratio_to_1e12(q):
    """Eq. 3 solved to 1e-12 relative for ratios up to 1e9 (no underflow), both orders."""
    expected = float(mp_sheet_resistance(2.5, 2.5 * q))
    assert sheet_resistance(2.5, 2.5 * q) == pytest.approx(expected, rel=1e-12)
    assert sheet_resistance(2.5 * q, 2.5) == pytest.approx(expected, rel=1e-12)
    if q <= 1e4:
        assert correction_factor(1.0, q) == pytest.approx(float(mp_correction_factor(q)),
                                                          rel=1e-12)


@settings(max_examples=60, deadline=None)
@given(log_a=st.floats(-6.0, 9.0), log_q=st.floats(-5.0, 5.0))
def test_sheet_resistance_random_against_mpmath(log_a, log_q):
    r_a = 10.0**log_a
    r_b = r_a * 10.0**log_q
    assert sheet_resistance(r_a, r_b) == pytest.approx(float(mp_sheet_resistance(r_a, r_b)),
                                                       rel=1e-12)


def test_vectorized_shapes_and_homogeneity():
    """R_s(c R_A, c R_B) = c R_s and symmetry in R_A, R_B (both follow from Eq. 3)."""
    ra = np.array([[1.0, 2.0], [3.0, 4.0]])
    rb = np.array([[2.0, 1.0], [30.0, 0.4]])
    rs = sheet_resistance(ra, rb)
    assert rs.shape == (2, 2)
    assert np.allclose(sheet_resistance(7.0 * ra, 7.0 * rb), 7.0 * rs, rtol=1e-13)
    assert np.allclose(sheet_resistance(rb, ra), rs, rtol=1e-14)


@pytest.mark.parametrize("bad", [0.0, -1.0, math.nan, math.inf])
def test_rejects_non_positive_resistances(bad):
    with pytest.raises(ValueError):
        sheet_resistance(bad, 1.0)
    with pytest.raises(ValueError):
        sheet_resistance(1.0, bad)


@pytest.mark.parametrize(("r_a", "r_b"), [(1.0, 1.0), (1.0, 2.0), (3.0, 0.3), (1.0, 1e3)])
def test_gradient_against_mpmath_derivative(r_a, r_b):
    """dR_s/dR_A, dR_s/dR_B against mpmath numerical derivatives of the mpmath root."""
    d_a, d_b = sheet_resistance_gradient(r_a, r_b)
    num_a = mp.diff(lambda x: mp_sheet_resistance(x, r_b), r_a)
    num_b = mp.diff(lambda x: mp_sheet_resistance(r_a, x), r_b)
    assert d_a == pytest.approx(float(num_a), rel=1e-9)
    assert d_b == pytest.approx(float(num_b), rel=1e-9)
    # Euler's relation for a degree-one homogeneous function
    assert r_a * d_a + r_b * d_b == pytest.approx(sheet_resistance(r_a, r_b), rel=1e-12)


def test_uncertainty_propagation_first_order():
    """u(R_s)^2 = (dR_s/dR_A u_A)^2 + (dR_s/dR_B u_B)^2 (JCGM 100:2008 Eq. 10)."""
    rs, err = sheet_resistance_uncertainty(10.0, 15.0, 0.1, 0.2)
    d_a, d_b = sheet_resistance_gradient(10.0, 15.0)
    assert err == pytest.approx(math.hypot(0.1 * d_a, 0.2 * d_b), rel=1e-14)
    # symmetric sample: by symmetry and Euler's relation dR_s/dR_A = dR_s/dR_B = R_s/(2R),
    # so equal uncorrelated relative uncertainties u_r give u(R_s)/R_s = u_r / sqrt(2)
    rs_sym, err_sym = sheet_resistance_uncertainty(8.0, 8.0, 0.08, 0.08)
    assert err_sym / rs_sym == pytest.approx(0.01 / math.sqrt(2.0), rel=1e-12)


def test_resistivity_and_hall_bar():
    """rho = R_s t (Eq. 3 with rho = R_s d); Hall bar R_s = R_xx w / L (common practice)."""
    assert resistivity(100.0, 0.035) == pytest.approx(3.5)
    assert hall_bar_sheet_resistance(50.0, 0.1, 0.4) == pytest.approx(12.5)


def test_configuration_classification_orientation():
    """Swapping I+/I- or V+/V- keeps the configuration and flips the matching sign."""
    vdp = members("van-der-pauw")
    member, si, sv = classify_configurations([1, 2, 1, 2, 1, 3], [2, 1, 2, 1, 3, 1],
                                             [4, 4, 3, 3, 2, 2], [3, 3, 4, 4, 4, 4])
    assert [vdp[m] for m in member[:4]] == [(1, 2, 4, 3)] * 4
    assert si.tolist() == [1, -1, 1, -1, 1, -1]
    assert sv.tolist() == [1, 1, -1, -1, 1, 1]
    assert vdp[member[4]] == (1, 3, 2, 4)
    # a three-terminal arrangement is no configuration
    bad, _, _ = classify_configurations([1], [2], [1], [3])
    assert bad.tolist() == [-1]


def test_round_trip_known_resistivity():
    """Readings made from a known rho (R_A, R_B from mpmath for Q = 1.7) reduce back.

    Offsets and noise-free readings: the reduced rho equals the input within rounding.
    """
    t = 0.035
    rho_true = 6.87
    r_s = rho_true / t
    # R_A such that R_s(R_A, 1.7 R_A) = r_s: by homogeneity R_A = r_s / R_s(1, 1.7)
    r_a = float(r_s / mp_sheet_resistance(1.0, 1.7))
    run = reduce_rows(synth_rows(r_a=r_a, r_b=1.7 * r_a, emf=(2e-6, -4e-6, 1e-6, 3e-6)),
                      thickness=t)
    assert run.resistivity[0] == pytest.approx(rho_true, rel=1e-10)
    assert run.sheet_resistance[0] == pytest.approx(r_s, rel=1e-10)
    assert run.r_a[0] == pytest.approx(r_a, rel=1e-10)
    assert run.r_b[0] == pytest.approx(1.7 * r_a, rel=1e-10)
