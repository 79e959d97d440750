"""Resistivity <-> dopant density of silicon after ASTM F723 (Thurber et al., NBS SP 400-64).

ASTM F723-99 (withdrawn 2003, maintained as SEMI MF723) states four empirical relations between
the resistivity of uncompensated, single-crystal silicon at 23 degC and its boron or phosphorus
density, fitted by Thurber, Mattis, Liu and Filliben (NBS Special Publication 400-64, 1981):

* eq. (1)  boron, resistivity -> density
* eq. (2), (3)  phosphorus, resistivity -> density
* eq. (4)  boron, density -> resistivity
* eq. (5), (6)  phosphorus, density -> resistivity

The two directions are separate fits, so a round trip is not the identity: it differs by up to
about 4 %. Never invert one relation numerically in place of the other.

The standard states the self-consistency of the relations as within 3 % for boron over
1e-4 to 1e4 ohm cm and within 4.5 % for phosphorus over 2e-4 to 4e3 ohm cm. freezeout treats
these figures, conservatively, as relative *standard* uncertainties of the conversion (reading
them as half-widths of a rectangular distribution would give 3 %/sqrt(3) and 4.5 %/sqrt(3)) and
adds them in quadrature to the propagated measurement uncertainty.

Valid ranges are enforced: a resistivity outside the stated range, or a density outside the image
of that range under eq. (1) or eq. (2), raises :class:`freezeout.errors.InputError` (a
``ValueError``).

The standard also gives a relation for arsenic-doped silicon; it is not implemented here, so an
arsenic claim that needs a conversion is refused rather than converted with the phosphorus
relation. The edition of the standard (or of SEMI MF723) named in the purchase contract governs;
these relations are the ones of the 1999 edition as published by Thurber et al. (from memory).

References
----------
.. [1] ASTM F723-99, standard practice for conversion between resistivity and dopant density
   of silicon, ASTM International (withdrawn 2003; continued as SEMI MF723). Title paraphrased
   from memory.
.. [2] W. R. Thurber, R. L. Mattis, Y. M. Liu, J. J. Filliben, "The Relationship Between
   Resistivity and Dopant Density for Phosphorus- and Boron-Doped Silicon", NBS Special
   Publication 400-64, National Bureau of Standards, Washington DC, 1981 (title from memory).
"""

from __future__ import annotations

import math

import numpy as np

from freezeout.errors import InputError

#: Reference temperature of the F723 relations (23 degC). [K]
REFERENCE_TEMPERATURE_K = 296.15

#: Dopants covered by the relations.
DOPANTS = ("boron", "phosphorus")

_ALIASES = {
    "b": "boron",
    "boron": "boron",
    "p": "phosphorus",
    "phosphorus": "phosphorus",
    "phosphorous": "phosphorus",
}

#: Conductivity type each dopant produces in silicon.
CARRIER_OF_DOPANT = {"boron": "p", "phosphorus": "n"}

#: Ionization energy of each dopant's level in silicon, from its band edge (phosphorus below
#: E_c, boron above E_v): 45 meV each (C. Kittel, Introduction to Solid State Physics, tables
#: of donor and acceptor ionization energies in Si and Ge; from memory). Used to check that a
#: single room-temperature Hall density is the net doping (:mod:`freezeout.claims.single_point`).
#: [eV]
IONIZATION_ENERGY_EV = {"boron": 0.045, "phosphorus": 0.045}

#: Resistivity range over which ASTM F723 states the relations' self-consistency. [ohm cm]
RESISTIVITY_RANGE = {"boron": (1e-4, 1e4), "phosphorus": (2e-4, 4e3)}

#: Stated self-consistency of the relations, used as relative standard uncertainty. [1]
RELATIVE_UNCERTAINTY = {"boron": 0.03, "phosphorus": 0.045}

# eq. (3) and eq. (6) coefficients: (A0, A1, A2, A3), (B1, B2, B3)
_P_RHO_TO_N = ((-3.1083, -3.2626, -1.2196, -0.13923), (1.0265, 0.38755, 0.041833))
_P_N_TO_RHO = ((-3.0769, 2.2108, -0.62272, 0.057501), (-0.68157, 0.19833, -0.018376))


def normalize_dopant(dopant: str) -> str:
    """Return the canonical name (``"boron"`` or ``"phosphorus"``) of a dopant spelling.

    Parameters
    ----------
    dopant
        ``"boron"``, ``"B"``, ``"phosphorus"`` or ``"P"`` (any case). [1]

    Returns
    -------
    str
        ``"boron"`` or ``"phosphorus"``.

    Raises
    ------
    InputError
        For any other dopant: ASTM F723 gives relations for boron and phosphorus only.
    """
    key = str(dopant).strip().lower()
    if key not in _ALIASES:
        raise InputError(
            f"no ASTM F723 resistivity relation for dopant {dopant!r}: "
            "the relations cover boron and phosphorus only"
        )
    return _ALIASES[key]


def _rational(x, coeffs):
    (a0, a1, a2, a3), (b1, b2, b3) = coeffs
    return (a0 + a1 * x + a2 * x**2 + a3 * x**3) / (1.0 + b1 * x + b2 * x**2 + b3 * x**3)


def _density_raw(rho, dopant: str):
    rho = np.asarray(rho, dtype=float)
    if dopant == "boron":
        # ASTM F723 eq. (1)
        return 1.330e16 / rho + 1.082e17 / (rho * (1.0 + (54.56 * rho) ** 1.105))
    # ASTM F723 eq. (2), (3)
    z = _rational(np.log10(rho), _P_RHO_TO_N)
    return 6.242e18 / rho * 10.0**z


def _resistivity_raw(density, dopant: str):
    n = np.asarray(density, dtype=float)
    if dopant == "boron":
        # ASTM F723 eq. (4)
        return 1.305e16 / n + 1.133e17 / (n * (1.0 + (2.58e-19 * n) ** -0.737))
    # ASTM F723 eq. (5), (6)
    z = _rational(np.log10(n) - 16.0, _P_N_TO_RHO)
    return 6.242e18 / n * 10.0**z


def _image_of_resistivity_range(dopant: str) -> tuple[float, float]:
    lo, hi = RESISTIVITY_RANGE[dopant]
    return float(_density_raw(hi, dopant)), float(_density_raw(lo, dopant))


#: Dopant-density range: the image of :data:`RESISTIVITY_RANGE` under eq. (1) / eq. (2)
#: (about 1.33e12 to 1.21e21 for boron, 1.02e12 to 5.52e20 for phosphorus). [cm^-3]
DENSITY_RANGE = {d: _image_of_resistivity_range(d) for d in DOPANTS}


def _check_range(values, lo: float, hi: float, what: str, unit: str, dopant: str) -> None:
    v = np.asarray(values, dtype=float)
    slack = 1e-9  # relative; only forgives rounding at the very edge of the range
    bad = ~np.isfinite(v) | (v < lo * (1.0 - slack)) | (v > hi * (1.0 + slack))
    if np.any(bad):
        first = float(v[bad].flat[0])
        raise InputError(
            f"{what} {first:.4g} {unit} is outside the ASTM F723 {dopant} range "
            f"{lo:.3g} to {hi:.3g} {unit}"
        )


def dopant_density_from_resistivity(resistivity, dopant: str):
    """Boron or phosphorus density of silicon from its resistivity at 23 degC (ASTM F723).

    Parameters
    ----------
    resistivity
        Resistivity at 23 degC, scalar or array, within :data:`RESISTIVITY_RANGE`. [ohm cm]
    dopant
        ``"boron"`` or ``"phosphorus"`` (see :func:`normalize_dopant`). [1]

    Returns
    -------
    float or numpy.ndarray
        Dopant density. [cm^-3]

    Raises
    ------
    InputError
        If a resistivity is outside the stated range or the dopant is not covered.

    References
    ----------
    .. [1] ASTM F723-99, eq. (1) (boron) and eq. (2), (3) (phosphorus).
    .. [2] Thurber et al., NBS Special Publication 400-64 (1981).
    """
    d = normalize_dopant(dopant)
    lo, hi = RESISTIVITY_RANGE[d]
    _check_range(resistivity, lo, hi, "resistivity", "ohm cm", d)
    out = _density_raw(resistivity, d)
    return float(out) if np.ndim(out) == 0 else out


def resistivity_from_dopant_density(density, dopant: str):
    """Resistivity of silicon at 23 degC from its boron or phosphorus density (ASTM F723).

    Parameters
    ----------
    density
        Dopant density, scalar or array, within :data:`DENSITY_RANGE`. [cm^-3]
    dopant
        ``"boron"`` or ``"phosphorus"`` (see :func:`normalize_dopant`). [1]

    Returns
    -------
    float or numpy.ndarray
        Resistivity at 23 degC. [ohm cm]

    Raises
    ------
    InputError
        If a density is outside the range or the dopant is not covered.

    References
    ----------
    .. [1] ASTM F723-99, eq. (4) (boron) and eq. (5), (6) (phosphorus).
    .. [2] Thurber et al., NBS Special Publication 400-64 (1981).
    """
    d = normalize_dopant(dopant)
    lo, hi = DENSITY_RANGE[d]
    _check_range(density, lo, hi, "dopant density", "cm^-3", d)
    out = _resistivity_raw(density, d)
    return float(out) if np.ndim(out) == 0 else out


def _log_slope(func, x: float, dopant: str) -> float:
    """d ln f / d ln x by a central difference (the raw relations are smooth)."""
    h = 1e-4
    up = float(func(x * math.exp(h), dopant))
    down = float(func(x * math.exp(-h), dopant))
    return (math.log(up) - math.log(down)) / (2.0 * h)


def resistivity_with_uncertainty(
    density: float, density_stderr: float | None, dopant: str
) -> tuple[float, float | None]:
    """Resistivity from dopant density with its standard uncertainty (ASTM F723 eq. 4-6).

    The measurement's relative uncertainty is carried through the relation's logarithmic
    slope, ``u_rel(rho) = |d ln rho / d ln N| u_rel(N)``, and the relation's own stated
    uncertainty (:data:`RELATIVE_UNCERTAINTY`) is added in quadrature (GUM, JCGM 100:2008,
    law of propagation of uncertainty for uncorrelated inputs).

    Parameters
    ----------
    density
        Dopant (net) density. [cm^-3]
    density_stderr
        Its standard uncertainty, or None when unknown (the result's is then None too). [cm^-3]
    dopant
        ``"boron"`` or ``"phosphorus"``. [1]

    Returns
    -------
    tuple of float
        Resistivity at 23 degC and its standard uncertainty (or None). [ohm cm]

    References
    ----------
    .. [1] ASTM F723-99; Thurber et al., NBS Special Publication 400-64 (1981).
    .. [2] JCGM 100:2008, Evaluation of measurement data - Guide to the expression of
       uncertainty in measurement, 5.1.2.
    """
    d = normalize_dopant(dopant)
    rho = resistivity_from_dopant_density(float(density), d)
    if density_stderr is None:
        return rho, None
    if not (density_stderr >= 0.0):
        raise InputError(f"standard uncertainty must be >= 0, got {density_stderr!r}")
    slope = _log_slope(_resistivity_raw, float(density), d)
    rel = math.hypot(slope * density_stderr / density, RELATIVE_UNCERTAINTY[d])
    return rho, rho * rel


def density_with_uncertainty(
    resistivity: float, resistivity_stderr: float | None, dopant: str
) -> tuple[float, float | None]:
    """Dopant density from resistivity with its standard uncertainty (ASTM F723 eq. 1-3).

    Same propagation as :func:`resistivity_with_uncertainty`, in the other direction.

    Parameters
    ----------
    resistivity
        Resistivity at 23 degC. [ohm cm]
    resistivity_stderr
        Its standard uncertainty, or None when unknown. [ohm cm]
    dopant
        ``"boron"`` or ``"phosphorus"``. [1]

    Returns
    -------
    tuple of float
        Dopant density and its standard uncertainty (or None). [cm^-3]

    References
    ----------
    .. [1] ASTM F723-99; Thurber et al., NBS Special Publication 400-64 (1981).
    .. [2] JCGM 100:2008, 5.1.2.
    """
    d = normalize_dopant(dopant)
    n = dopant_density_from_resistivity(float(resistivity), d)
    if resistivity_stderr is None:
        return n, None
    if not (resistivity_stderr >= 0.0):
        raise InputError(f"standard uncertainty must be >= 0, got {resistivity_stderr!r}")
    slope = _log_slope(_density_raw, float(resistivity), d)
    rel = math.hypot(slope * resistivity_stderr / resistivity, RELATIVE_UNCERTAINTY[d])
    return n, n * rel
