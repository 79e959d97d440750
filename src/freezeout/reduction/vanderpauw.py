"""Van der Pauw reduction: characteristic resistances to sheet resistance and resistivity.

Pure functions on numpy arrays, canonical units (ohm, cm, ohm cm). The contact bookkeeping
(which reading belongs to which configuration, with which orientation) lives here too, as
tables, because it encodes the same convention as the equations.

Contact convention (van der Pauw geometry): contacts 1 to 4 on the edge of the sample,
numbered counter-clockwise as seen with the positive field pointing towards the viewer.
A reading with current into ``a`` and out of ``b`` and voltage ``V(c) - V(d)`` is written
``(a, b, c, d)``; its transresistance is ``R_ab,cd = (V(c) - V(d)) / I_ab``.

References
----------
.. [1] L. J. van der Pauw, "A method of measuring specific resistivity and Hall effect of
   discs of arbitrary shape", Philips Res. Rep. 13, 1-9 (1958).
"""

from __future__ import annotations

import math

import numpy as np
from scipy.optimize import brentq

__all__ = [
    "VAN_DER_PAUW",
    "HALL_BAR",
    "GEOMETRIES",
    "classify_configurations",
    "configuration_label",
    "correction_factor",
    "hall_bar_sheet_resistance",
    "members",
    "resistivity",
    "sheet_resistance",
    "sheet_resistance_gradient",
    "sheet_resistance_uncertainty",
]

_LN2 = math.log(2.0)

#: Configuration members of the van der Pauw geometry, in canonical orientation
#: ``(current in, current out, voltage +, voltage -)``. Each role lists equivalent members:
#: ``A`` is R_12,43 and its reciprocal R_43,12; ``B`` is R_23,14 and its reciprocal R_14,23
#: (both positive for any sample); ``H`` holds the two Hall diagonals, current 1->3 with
#: V2 - V4 and current 2->4 with V3 - V1, whose field-odd part is positive for holes.
VAN_DER_PAUW: dict[str, tuple[tuple[int, int, int, int], ...]] = {
    "A": ((1, 2, 4, 3), (4, 3, 1, 2)),
    "B": ((2, 3, 1, 4), (1, 4, 2, 3)),
    "H": ((1, 3, 2, 4), (2, 4, 3, 1)),
}

#: Configuration members of the six-contact Hall bar: contact 1 at the left end, 2 and 3 on
#: the lower side (left, right), 4 at the right end, 5 and 6 on the upper side (right, left),
#: counter-clockwise with the positive field towards the viewer. ``A`` holds the longitudinal
#: resistance of the lower side (V2 - V3) and of the upper side (V6 - V5), current 1->4;
#: ``H`` the Hall pairs V2 - V6 and V3 - V5, current 1->4 (positive for holes).
HALL_BAR: dict[str, tuple[tuple[int, int, int, int], ...]] = {
    "A": ((1, 4, 2, 3), (1, 4, 6, 5)),
    "H": ((1, 4, 2, 6), (1, 4, 3, 5)),
}

#: Geometry name -> (configuration table, number of contacts).
GEOMETRIES: dict[str, tuple[dict[str, tuple[tuple[int, int, int, int], ...]], int]] = {
    "van-der-pauw": (VAN_DER_PAUW, 4),
    "hall-bar": (HALL_BAR, 6),
}


def configuration_label(member: tuple[int, int, int, int]) -> str:
    """Plain-text label of a configuration member, e.g. ``"I 1->2, V4-V3"``.

    Parameters
    ----------
    member
        ``(current in, current out, voltage +, voltage -)`` contact numbers.

    Returns
    -------
    str
        The label.
    """
    a, b, c, d = member
    return f"I {a}->{b}, V{c}-V{d}"


def classify_configurations(i_plus, i_minus, v_plus, v_minus, geometry: str = "van-der-pauw"):
    """Assign each reading to a configuration member and give its orientation signs.

    Parameters
    ----------
    i_plus, i_minus
        Contact the current flows into and out of, per reading.
    v_plus, v_minus
        Contacts of the voltage V(v_plus) - V(v_minus), per reading.
    geometry
        ``"van-der-pauw"`` or ``"hall-bar"``.

    Returns
    -------
    member : ndarray of int
        Index into :func:`members` of ``geometry`` (flattened role order), or -1 where the
        contacts form no configuration of that geometry.
    current_sign, voltage_sign : ndarray of int
        +1 where the reading's current (voltage) orientation is the member's canonical one,
        -1 where it is reversed; the canonical current is ``current_sign * I`` and the
        canonical voltage ``voltage_sign * V``.

    Notes
    -----
    A configuration is identified by its unordered current pair and unordered voltage pair,
    so a current-reversed reading (swapped ``I+``/``I-``) and a reading with swapped voltage
    leads land on the same member with the orientation carried by the signs.
    """
    ip = np.asarray(i_plus, dtype=int)
    im = np.asarray(i_minus, dtype=int)
    vp = np.asarray(v_plus, dtype=int)
    vm = np.asarray(v_minus, dtype=int)
    member = np.full(ip.shape, -1, dtype=int)
    current_sign = np.zeros(ip.shape, dtype=int)
    voltage_sign = np.zeros(ip.shape, dtype=int)
    for index, (a, b, c, d) in enumerate(members(geometry)):
        same_i = (ip == a) & (im == b)
        rev_i = (ip == b) & (im == a)
        same_v = (vp == c) & (vm == d)
        rev_v = (vp == d) & (vm == c)
        hit = (same_i | rev_i) & (same_v | rev_v)
        member[hit] = index
        current_sign[hit] = np.where(same_i[hit], 1, -1)
        voltage_sign[hit] = np.where(same_v[hit], 1, -1)
    return member, current_sign, voltage_sign


def members(geometry: str) -> tuple[tuple[int, int, int, int], ...]:
    """All configuration members of a geometry, flattened in role order.

    Parameters
    ----------
    geometry
        ``"van-der-pauw"`` or ``"hall-bar"``.

    Returns
    -------
    tuple
        Members ``(a, b, c, d)``; :func:`classify_configurations` indexes into this.
    """
    table = GEOMETRIES[geometry][0]
    return tuple(m for role in table.values() for m in role)


def _reduced_root(q: float) -> float:
    """Solve exp(-y) + exp(-q y) = 1 for y > 0, with ``q >= 1``.

    Written as ``h(y) = y - log1p(exp(-(q - 1) y)) = 0`` (the logarithm of the van der Pauw
    sum divided by exp(-y)), which neither underflows nor loses digits for large ``q``. ``h``
    is increasing; the root lies in ``[2 ln2 / (1 + q), ln 2]`` because ``0 < f <= 1``.
    """
    if q == 1.0:
        return _LN2

    def h(y: float) -> float:
        return y - math.log1p(math.exp(-(q - 1.0) * y))

    lo = 2.0 * _LN2 / (1.0 + q)
    hi = _LN2
    if h(lo) >= 0.0:
        return lo
    if h(hi) <= 0.0:
        return hi
    return brentq(h, lo, hi, xtol=1e-300, rtol=4.0 * np.finfo(float).eps, maxiter=500)


def _check_positive(name: str, value: np.ndarray) -> None:
    if not np.all(np.isfinite(value)) or np.any(value <= 0.0):
        raise ValueError(f"{name} must be finite and positive")


def sheet_resistance(r_a, r_b):
    """Solve van der Pauw's equation for the sheet resistance.

    Solves ``exp(-pi R_A / R_s) + exp(-pi R_B / R_s) = 1`` for ``R_s`` to machine precision
    (about 1e-15 relative) for any ratio ``R_A / R_B``, with no table or approximation.

    Parameters
    ----------
    r_a
        Characteristic resistance R_12,43 (averaged over reciprocal and current-reversed
        configurations). [ohm]
    r_b
        Characteristic resistance R_23,14, likewise averaged. [ohm]

    Returns
    -------
    ndarray
        Sheet resistance, same shape as the broadcast inputs. [ohm]

    Raises
    ------
    ValueError
        If a resistance is not finite and positive.

    References
    ----------
    .. [1] L. J. van der Pauw, Philips Res. Rep. 13, 1-9 (1958), Eq. (3).
    """
    ra, rb = np.broadcast_arrays(np.asarray(r_a, dtype=float), np.asarray(r_b, dtype=float))
    _check_positive("r_a", ra)
    _check_positive("r_b", rb)
    r_min = np.minimum(ra, rb)
    r_max = np.maximum(ra, rb)
    out = np.empty(ra.shape, dtype=float)
    for idx in np.ndindex(ra.shape):
        y = _reduced_root(float(r_max[idx] / r_min[idx]))
        out[idx] = math.pi * r_min[idx] / y
    return out


def correction_factor(r_a, r_b):
    """Van der Pauw's correction factor f of the ratio R_A / R_B.

    Defined by ``R_s = (pi / ln 2) ((R_A + R_B) / 2) f``; f = 1 for equal resistances and
    decreases for unequal ones. Symmetric in its arguments.

    Parameters
    ----------
    r_a
        Characteristic resistance R_A. [ohm]
    r_b
        Characteristic resistance R_B. [ohm]

    Returns
    -------
    ndarray
        The correction factor. [1]

    References
    ----------
    .. [1] L. J. van der Pauw, Philips Res. Rep. 13, 1-9 (1958), Eqs. (4)-(5) and Fig. 5.
    """
    ra = np.asarray(r_a, dtype=float)
    rb = np.asarray(r_b, dtype=float)
    return sheet_resistance(ra, rb) * 2.0 * _LN2 / (math.pi * (ra + rb))


def sheet_resistance_gradient(r_a, r_b, r_s=None):
    """Partial derivatives of the sheet resistance with respect to R_A and R_B.

    From implicit differentiation of ``F = exp(-pi R_A/R_s) + exp(-pi R_B/R_s) - 1 = 0``:
    ``dR_s/dR_A = R_s e_A / (R_A e_A + R_B e_B)`` with ``e_X = exp(-pi R_X / R_s)``, and
    likewise for R_B. They satisfy Euler's relation ``R_A dR_s/dR_A + R_B dR_s/dR_B = R_s``
    (R_s is homogeneous of degree one).

    Parameters
    ----------
    r_a
        Characteristic resistance R_A. [ohm]
    r_b
        Characteristic resistance R_B. [ohm]
    r_s
        Sheet resistance if already solved, else None. [ohm]

    Returns
    -------
    d_a, d_b : ndarray
        dR_s/dR_A and dR_s/dR_B. [1]

    References
    ----------
    .. [1] L. J. van der Pauw, Philips Res. Rep. 13, 1-9 (1958), Eq. (3).
    """
    ra = np.asarray(r_a, dtype=float)
    rb = np.asarray(r_b, dtype=float)
    rs = sheet_resistance(ra, rb) if r_s is None else np.asarray(r_s, dtype=float)
    e_a = np.exp(-math.pi * ra / rs)
    e_b = np.exp(-math.pi * rb / rs)
    denom = ra * e_a + rb * e_b
    return rs * e_a / denom, rs * e_b / denom


def sheet_resistance_uncertainty(r_a, r_b, r_a_err, r_b_err):
    """Sheet resistance and its standard uncertainty from those of R_A and R_B.

    First-order propagation with the analytic gradient of
    :func:`sheet_resistance_gradient`, R_A and R_B taken as uncorrelated.

    Parameters
    ----------
    r_a
        Characteristic resistance R_A. [ohm]
    r_b
        Characteristic resistance R_B. [ohm]
    r_a_err
        Standard uncertainty of R_A. [ohm]
    r_b_err
        Standard uncertainty of R_B. [ohm]

    Returns
    -------
    r_s, r_s_err : ndarray
        Sheet resistance and its standard uncertainty. [ohm]

    References
    ----------
    .. [1] L. J. van der Pauw, Philips Res. Rep. 13, 1-9 (1958), Eq. (3).
    .. [2] JCGM 100:2008 (GUM), Eq. (10), law of propagation of uncertainty.
    """
    rs = sheet_resistance(r_a, r_b)
    d_a, d_b = sheet_resistance_gradient(r_a, r_b, rs)
    err = np.hypot(d_a * np.asarray(r_a_err, dtype=float), d_b * np.asarray(r_b_err, dtype=float))
    return rs, err


def hall_bar_sheet_resistance(r_xx, width, spacing):
    """Sheet resistance of a Hall bar from its longitudinal resistance.

    ``R_s = R_xx w / L`` for a bar of width ``w`` with voltage contacts a distance ``L``
    apart along the current (common practice, no source).

    Parameters
    ----------
    r_xx
        Longitudinal resistance V_xx / I. [ohm]
    width
        Width of the bar. [cm]
    spacing
        Distance between the voltage contacts along the bar. [cm]

    Returns
    -------
    ndarray
        Sheet resistance. [ohm]
    """
    return np.asarray(r_xx, dtype=float) * np.asarray(width, dtype=float) / np.asarray(
        spacing, dtype=float
    )


def resistivity(r_s, thickness):
    """Resistivity from sheet resistance and thickness, ``rho = R_s t``.

    Parameters
    ----------
    r_s
        Sheet resistance. [ohm]
    thickness
        Thickness of the conducting layer. [cm]

    Returns
    -------
    ndarray
        Resistivity. [ohm cm]

    References
    ----------
    .. [1] L. J. van der Pauw, Philips Res. Rep. 13, 1-9 (1958), Eq. (3) with rho = R_s d.
    """
    return np.asarray(r_s, dtype=float) * np.asarray(thickness, dtype=float)
