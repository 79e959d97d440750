"""Student-t and chi^2 quantiles, cached by degrees of freedom.

The fits ask for the same few quantiles hundreds of times (the plateau search tests every
window), and one scipy.stats call costs tens of microseconds; scipy.stats is imported on
the first call only.
"""

from __future__ import annotations

import functools


@functools.lru_cache(maxsize=1024)
def t_quantile(p: float, dof: float) -> float:
    """Quantile p of Student's t with ``dof`` degrees of freedom (scipy.stats.t.ppf)."""
    from scipy import stats

    return float(stats.t.ppf(p, dof))


@functools.lru_cache(maxsize=1024)
def chi2_quantile(p: float, dof: float) -> float:
    """Quantile p of chi^2 with ``dof`` degrees of freedom (scipy.stats.chi2.ppf)."""
    from scipy import stats

    return float(stats.chi2.ppf(p, dof))


@functools.lru_cache(maxsize=1024)
def f_quantile(p: float, dfn: float, dfd: float) -> float:
    """Quantile p of Fisher's F with (dfn, dfd) degrees of freedom (scipy.stats.f.ppf)."""
    from scipy import stats

    return float(stats.f.ppf(p, dfn, dfd))
