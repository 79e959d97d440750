"""Hall reduction: field- and current-reversed transresistances to R_H, density and mobility.

Pure functions on numpy arrays in canonical units (ohm, T, cm, ohm cm, cm^3/C, cm^-3,
cm^2/(V s)).

Sign convention: contacts numbered counter-clockwise as seen with the positive field
pointing towards the viewer; with current from 1 to 3 and positive field the voltage
V2 - V4 is positive for holes, so the Hall coefficient is positive for holes.

References
----------
.. [1] L. J. van der Pauw, "A method of measuring specific resistivity and Hall effect of
   discs of arbitrary shape", Philips Res. Rep. 13, 1-9 (1958).
.. [2] E. H. Putley, The Hall Effect and Related Phenomena (Butterworths, London, 1960),
   ch. 3 (Hall coefficient, Hall mobility, scattering factor r_H); cited from memory.
"""

from __future__ import annotations

import numpy as np

from freezeout.physics.constants import Q

__all__ = [
    "CM2_PER_M2",
    "carrier_type",
    "field_reversed_slope",
    "hall_coefficient",
    "hall_density",
    "hall_mobility",
    "sheet_density",
]

#: Square centimetres per square metre: converts t[cm] * (V/A) / T to cm^3/C,
#: since 1 T = 1 V s / m^2.
CM2_PER_M2 = 1.0e4


def field_reversed_slope(r_pos, r_neg, b_pos, b_neg):
    """Field-odd part of a transresistance per unit field, ``dR/dB``.

    With ``R(B) = R_m + k B`` (misalignment ``R_m`` even in field, Hall part odd),
    ``k = (R(+B) - R(-B)) / (B_+ - B_-)``; the misalignment cancels exactly, and unequal
    magnitudes of the two fields are allowed. ``r_pos`` and ``r_neg`` should already be
    current-reversed (offset-free) transresistances.

    Parameters
    ----------
    r_pos
        Transresistance at the positive field. [ohm]
    r_neg
        Transresistance at the negative field. [ohm]
    b_pos
        The positive field. [T]
    b_neg
        The negative field (a negative number). [T]

    Returns
    -------
    ndarray
        Hall transresistance per unit field. [ohm/T]

    References
    ----------
    .. [1] L. J. van der Pauw, Philips Res. Rep. 13, 1-9 (1958), Hall measurement with
       field reversal.
    """
    r_pos = np.asarray(r_pos, dtype=float)
    r_neg = np.asarray(r_neg, dtype=float)
    return (r_pos - r_neg) / (np.asarray(b_pos, dtype=float) - np.asarray(b_neg, dtype=float))


def hall_coefficient(slope, thickness):
    """Hall coefficient from the Hall transresistance per unit field.

    ``R_H = t V_H / (I B) = t k``, with ``k = V_H / (I B)``; in canonical units
    ``R_H [cm^3/C] = 1e4 t [cm] k [ohm/T]`` because 1 T = 1 V s/m^2.

    Parameters
    ----------
    slope
        Hall transresistance per unit field, ``V_H / (I B)``, signed. [ohm/T]
    thickness
        Thickness of the conducting layer. [cm]

    Returns
    -------
    ndarray
        Hall coefficient, positive for holes. [cm^3/C]

    References
    ----------
    .. [1] E. H. Putley, The Hall Effect and Related Phenomena (1960), ch. 3.
    """
    return CM2_PER_M2 * np.asarray(thickness, dtype=float) * np.asarray(slope, dtype=float)


def carrier_type(r_h):
    """Carrier type from the sign of the Hall coefficient.

    Parameters
    ----------
    r_h
        Hall coefficient. [cm^3/C]

    Returns
    -------
    tuple of str
        ``"p"`` where ``R_H >= 0``, ``"n"`` where ``R_H < 0``, one per element.
    """
    r = np.atleast_1d(np.asarray(r_h, dtype=float))
    return tuple("n" if v < 0 else "p" for v in r.ravel())


def hall_density(r_h, hall_factor=1.0):
    """Hall carrier density ``r_H / (q |R_H|)``.

    Parameters
    ----------
    r_h
        Hall coefficient, signed. [cm^3/C]
    hall_factor
        Hall scattering factor r_H; 1 gives the Hall density 1/(q|R_H|). [1]

    Returns
    -------
    ndarray
        Carrier density, unsigned; infinite where R_H is zero. [cm^-3]

    References
    ----------
    .. [1] E. H. Putley, The Hall Effect and Related Phenomena (1960), ch. 3.
    """
    r = np.abs(np.asarray(r_h, dtype=float))
    with np.errstate(divide="ignore"):
        return np.asarray(hall_factor, dtype=float) / (Q * r)


def hall_mobility(r_h, rho):
    """Hall mobility ``|R_H| / rho``.

    Parameters
    ----------
    r_h
        Hall coefficient. [cm^3/C]
    rho
        Resistivity. [ohm cm]

    Returns
    -------
    ndarray
        Hall mobility (unsigned). [cm^2/(V s)]

    References
    ----------
    .. [1] E. H. Putley, The Hall Effect and Related Phenomena (1960), ch. 3.
    """
    return np.abs(np.asarray(r_h, dtype=float)) / np.asarray(rho, dtype=float)


def sheet_density(current, field, hall_voltage, hall_factor=1.0):
    """Hall sheet density ``r_H I B / (q |V_H|)``.

    Parameters
    ----------
    current
        Current magnitude. [A]
    field
        Field magnitude. [T]
    hall_voltage
        Hall voltage. [V]
    hall_factor
        Hall scattering factor r_H. [1]

    Returns
    -------
    ndarray
        Sheet density. [cm^-2]

    References
    ----------
    .. [1] E. H. Putley, The Hall Effect and Related Phenomena (1960), ch. 3.
    """
    i = np.abs(np.asarray(current, dtype=float))
    b = np.abs(np.asarray(field, dtype=float))
    v = np.abs(np.asarray(hall_voltage, dtype=float))
    with np.errstate(divide="ignore"):
        per_m2 = np.asarray(hall_factor, dtype=float) * i * b / (Q * v)
    return per_m2 / CM2_PER_M2
