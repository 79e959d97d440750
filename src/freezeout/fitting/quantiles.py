"""Student-t, chi^2 and F quantiles, cached by degrees of freedom.

The fits ask for the same few quantiles hundreds of times (the plateau search tests every
window). They come from the inverse distribution functions of scipy.special (the Cephes
routines stdtrit, chdtri and fdtri), which scipy.stats's ``ppf`` of the same distributions
also uses; scipy.stats itself takes about 0.3 s to import, a third of a command's budget.
"""

from __future__ import annotations

import functools

from scipy import special


@functools.lru_cache(maxsize=1024)
def t_quantile(p: float, dof: float) -> float:
    """Quantile p of Student's t with ``dof`` degrees of freedom (scipy.special.stdtrit)."""
    return float(special.stdtrit(dof, p))


@functools.lru_cache(maxsize=1024)
def chi2_quantile(p: float, dof: float) -> float:
    """Quantile p of chi^2 with ``dof`` degrees of freedom (scipy.special.chdtri of 1 - p)."""
    return float(special.chdtri(dof, 1.0 - p))


@functools.lru_cache(maxsize=1024)
def f_quantile(p: float, dfn: float, dfd: float) -> float:
    """Quantile p of Fisher's F with (dfn, dfd) degrees of freedom (scipy.special.fdtri)."""
    return float(special.fdtri(dfn, dfd, p))
