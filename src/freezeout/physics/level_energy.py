"""Concentration dependence of a level's ionization energy (Pearson-Bardeen).

    E(N) = E_0 - alpha N^(1/3)                                                       [1]

The lowering grows with the mean impurity spacing N^(-1/3) shrinking: neighbouring centres'
potentials overlap and the bound states broaden towards the band. Here N is the level's own
concentration (N_D of a donor level, N_A of an acceptor level), the form of [1]; the
compensating species does not enter. ``E_0`` is the isolated-centre energy, the one a fit
reports.

References
----------
.. [1] G. L. Pearson, J. Bardeen, "Electrical properties of pure silicon and silicon alloys
   containing boron and phosphorus", Phys. Rev. 75, 865 (1949): alpha about 4.3e-8 eV cm
   for Si:B and Si:P (value from memory).
"""

from __future__ import annotations

import numpy as np

from freezeout.errors import InputError

#: Pearson-Bardeen alpha for Si:B and Si:P [1] (from memory). [eV cm]
PEARSON_BARDEEN_ALPHA_SI = 4.3e-8


def pearson_bardeen_energy(energy_0k, concentration, alpha=PEARSON_BARDEEN_ALPHA_SI):
    """E = E_0 - alpha N^(1/3).

    Parameters
    ----------
    energy_0k
        Ionization energy of an isolated centre E_0. [eV]
    concentration
        The level's concentration N. [cm^-3]
    alpha
        Lowering coefficient. [eV cm]

    Returns
    -------
    numpy.ndarray
        Ionization energy at that concentration (may go below zero: the level has then
        merged with its band, and the solve treats it as a shallow state). [eV]

    References
    ----------
    [1].
    """
    return energy_0k - alpha * np.cbrt(concentration)  # [1]


def parse_energy_vs_density(text: str | None) -> float | None:
    """The lowering coefficient of an option ``pearson-bardeen`` or ``pearson-bardeen:ALPHA``.

    Parameters
    ----------
    text
        None or ``"none"`` (no lowering), ``"pearson-bardeen"`` (alpha =
        :data:`PEARSON_BARDEEN_ALPHA_SI`), or ``"pearson-bardeen:ALPHA"`` with ALPHA in eV cm.

    Returns
    -------
    float or None
        alpha [eV cm], or None.

    Raises
    ------
    InputError
        Any other text, or an alpha that is not a number in [0, 1e-6] eV cm.
    """
    if text is None or text.strip().lower() in ("", "none"):
        return None
    name, _, value = text.strip().lower().partition(":")
    if name != "pearson-bardeen":
        raise InputError(f"unknown energy-vs-density model {text!r}; use 'pearson-bardeen' or "
                         "'pearson-bardeen:ALPHA' (ALPHA in eV cm)")
    if not value:
        return PEARSON_BARDEEN_ALPHA_SI
    try:
        alpha = float(value)
    except ValueError:
        raise InputError(f"pearson-bardeen alpha {value!r} is not a number (eV cm)") from None
    if not (np.isfinite(alpha) and 0.0 <= alpha <= 1e-6):
        raise InputError(f"pearson-bardeen alpha {alpha!r} is outside [0, 1e-6] eV cm")
    return alpha
