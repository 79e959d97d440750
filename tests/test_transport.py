"""Two-carrier Hall coefficient and conductivity, and the Hall sign-change temperature.

R_H = (r_p p mu_p^2 - r_n n mu_n^2) / (q (p mu_p + n mu_n)^2), sigma = q (n mu_n + p mu_p)
(E. H. Putley, The Hall Effect and Semiconductor Physics (1968), ch. 4; from memory).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import constants as sc

from freezeout.errors import InputError
from freezeout.physics.transport import (
    conductivity,
    hall_coefficient,
    hall_sign_change_temperature,
    resistivity,
)


def test_one_carrier_limits():
    # n -> 0 gives r_p / (q p); p -> 0 gives -r_n / (q n) (Putley 1968; from memory)
    assert hall_coefficient(0.0, 1e16, 1400.0, 450.0, 1.1, 1.3) == pytest.approx(
        1.3 / (sc.e * 1e16), rel=1e-14)
    assert hall_coefficient(1e16, 0.0, 1400.0, 450.0, 1.1, 1.3) == pytest.approx(
        -1.1 / (sc.e * 1e16), rel=1e-14)
    # a vanishing minority is a continuous limit
    assert hall_coefficient(1e3, 1e16, 1400.0, 450.0) == pytest.approx(
        1 / (sc.e * 1e16), rel=1e-11)


def test_sign_reversal_where_the_weighted_products_balance():
    # r_p p mu_p^2 = r_n n mu_n^2 (Putley 1968; from memory)
    n, mu_n, mu_p, r_n, r_p = 1e14, 1400.0, 450.0, 1.15, 1.4
    p = r_n * n * mu_n**2 / (r_p * mu_p**2)
    scale = 1 / (sc.e * p)
    assert abs(hall_coefficient(n, p, mu_n, mu_p, r_n, r_p)) < 1e-13 * scale
    assert hall_coefficient(n, 1.01 * p, mu_n, mu_p, r_n, r_p) > 0
    assert hall_coefficient(n, 0.99 * p, mu_n, mu_p, r_n, r_p) < 0


def test_conductivity_and_resistivity():
    # sigma = q (n mu_n + p mu_p) in S/cm with cm^-3 and cm^2/Vs (Putley 1968; from memory)
    sigma = conductivity(1e16, 1e10, 1400.0, 450.0)
    assert sigma == pytest.approx(sc.e * (1e16 * 1400.0 + 1e10 * 450.0), rel=1e-15)
    assert resistivity(1e16, 1e10, 1400.0, 450.0) == pytest.approx(1 / sigma, rel=1e-15)
    # about 0.45 ohm cm for n = 1e16 cm^-3 at 1400 cm^2/Vs (computed here)
    assert resistivity(1e16, 0.0, 1400.0, 450.0) == pytest.approx(0.4458, rel=1e-3)
    got = conductivity(np.array([1e15, 1e16]), 0.0, np.array([1400.0, 1200.0]), 450.0)
    assert got.shape == (2,)


def _ptype_model(temperature):
    """p-type with thermally excited electrons: n = A exp(-E / kT), p = N + n (computed here)."""
    kt = sc.k / sc.e * np.asarray(temperature, dtype=float)
    n = 1e19 * np.exp(-0.5 / kt)
    return hall_coefficient(n, 1e15 + n, 1350.0, 450.0)


def test_sign_change_temperature_is_found_and_refined():
    # root where (N + n) mu_p^2 = n mu_n^2: n = N / ((mu_n/mu_p)^2 - 1) = 1.25e14 here, so
    # T = E / (k ln(A / n)) (computed here)
    n_root = 1e15 / ((1350.0 / 450.0) ** 2 - 1)
    expected = 0.5 / (sc.k / sc.e * np.log(1e19 / n_root))
    grid = np.linspace(200.0, 1200.0, 41)
    got = hall_sign_change_temperature(_ptype_model, grid)
    assert got == pytest.approx(expected, rel=1e-10)
    assert grid[0] < got < grid[-1]


def test_no_sign_change_gives_none():
    assert hall_sign_change_temperature(_ptype_model, np.linspace(100.0, 300.0, 21)) is None
    assert hall_sign_change_temperature(lambda t: -1.0 / t, [10.0, 20.0, 30.0]) is None
    # non-finite model values are skipped, not bracketed
    def holes(t):
        return np.where(t < 15.0, np.nan, 1.0 / t)

    assert hall_sign_change_temperature(holes, [10.0, 20.0, 30.0]) is None


def test_zero_on_a_grid_point_and_the_first_of_two_roots():
    assert hall_sign_change_temperature(lambda t: t - 20.0, [10.0, 20.0, 30.0]) == 20.0
    assert hall_sign_change_temperature(lambda t: t - 30.0, [10.0, 20.0, 30.0]) == 30.0

    def two_roots(t):
        return (t - 50.0) * (t - 150.0)

    got = hall_sign_change_temperature(two_roots, np.linspace(10.0, 200.0, 20))
    assert got == pytest.approx(50.0, rel=1e-12)


@pytest.mark.parametrize("grid", [[10.0], [20.0, 10.0], [10.0, 10.0], [10.0, np.nan],
                                  [[10.0, 20.0]]])
def test_bad_grids(grid):
    with pytest.raises(InputError):
        hall_sign_change_temperature(lambda t: t, grid)


def test_model_returning_the_wrong_shape():
    with pytest.raises(InputError):
        hall_sign_change_temperature(lambda t: np.ones(3), [10.0, 20.0])
