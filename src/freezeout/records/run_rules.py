"""Rules shared by every path that builds a :class:`~freezeout.records.run.RunData`.

A reduced CSV read back and a raw file reduced on the way into a fit both use them, beside
the carrier-type rule :func:`freezeout.records.run.run_carrier`: the note on points of the
other Hall sign, and the split of an uncertainty common to all points.
"""

from __future__ import annotations

import numpy as np

__all__ = ["mixed_note", "split_scale_uncertainty"]


def mixed_note(point_carrier, carrier, temperature, include_mixed: bool) -> str | None:
    """Plain-language note on points whose Hall sign differs from the run's.

    Parameters
    ----------
    point_carrier
        ``"n"`` or ``"p"`` per point.
    carrier
        The run's carrier type.
    temperature
        Temperature per point. [K]
    include_mixed
        Whether those points are kept in the single-carrier fit.

    Returns
    -------
    str or None
        The note, or None when every point has the run's type.
    """
    minority = [i for i, c in enumerate(point_carrier) if c != carrier]
    if not minority:
        return None
    t = np.asarray(temperature)[minority]
    what = "kept in" if include_mixed else "left out of"
    return (f"the Hall coefficient changes sign (mixed conduction): {len(minority)} point(s) "
            f"between {t.min():g} K and {t.max():g} K have the opposite sign and are {what} "
            "the single-carrier fit")


def split_scale_uncertainty(density, density_err, scale: float):
    """Take a relative uncertainty common to all points out of per-point uncertainties.

    ``density_err`` holds the total (point-to-point and common parts in quadrature); the
    point-to-point part is returned with the common relative part ``scale``. The remainder is
    floored at 1e-6 relative so that no point gets an infinite weight.

    Parameters
    ----------
    density
        Densities. [cm^-3]
    density_err
        Their total standard uncertainties, or None. [cm^-3]
    scale
        Relative standard uncertainty common to every point (e.g. of the thickness). [1]

    Returns
    -------
    density_err, scale
        The point-to-point uncertainties [cm^-3] and the common relative one [1] (0 when
        nothing was split off).
    """
    if density_err is None or not scale > 0:
        return density_err, 0.0
    rel = density_err / density
    rest = np.sqrt(np.maximum(rel**2 - scale**2, 1e-12))
    return rest * density, float(scale)
