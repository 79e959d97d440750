"""The fits' t, chi^2 and F quantiles against printed tables and scipy.stats."""

from __future__ import annotations

import pytest

from freezeout.fitting.quantiles import chi2_quantile, f_quantile, t_quantile


def test_quantiles_match_the_printed_tables():
    """NIST/SEMATECH e-Handbook of Statistical Methods, section 1.3.6.7 (tables of the t,
    chi-square and F distributions; the values from memory): t(0.975, 10) = 2.228,
    chi^2(0.95, 10) = 18.307, F(0.95; 3, 10) = 3.708 (the tables print 3 or 4 digits)."""
    assert t_quantile(0.975, 10) == pytest.approx(2.228, abs=5e-4)
    assert chi2_quantile(0.95, 10) == pytest.approx(18.307, abs=5e-4)
    assert f_quantile(0.95, 3, 10) == pytest.approx(3.708, abs=5e-4)


@pytest.mark.parametrize("p", [0.16, 0.5, 0.84, 0.95, 0.975, 0.995])
@pytest.mark.parametrize("dof", [1, 2.5, 7, 44, 1000])
def test_quantiles_match_scipy_stats(p, dof):
    """The same numbers as scipy.stats's ppf (a general-purpose reference library)."""
    stats = pytest.importorskip("scipy.stats")
    assert t_quantile(p, dof) == pytest.approx(stats.t.ppf(p, dof), rel=1e-12, abs=1e-14)
    assert chi2_quantile(p, dof) == pytest.approx(stats.chi2.ppf(p, dof), rel=1e-12)
    assert f_quantile(p, dof, 12) == pytest.approx(stats.f.ppf(p, dof, 12), rel=1e-12)
