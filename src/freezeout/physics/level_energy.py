"""Concentration dependence of a level's ionization energy.

    E(N) = E_0 - alpha N^(1/3)                      (Pearson-Bardeen [1])
    E(N) = E_0 / (1 + (N / N_ref)^c)                (the E(N) form of Altermatt et al. [2])

The lowering grows as the mean impurity spacing N^(-1/3) shrinks: neighbouring centres'
potentials overlap and the bound states broaden towards the band. Here N is the level's own
concentration (N_D of a donor level, N_A of an acceptor level); the compensating species
does not enter. ``E_0`` is the isolated-centre energy, the one a fit reports. Of [2] only
the E(N) form is taken, not its share of states in the impurity band.

Each model is a small object with ``energy(E_0, N)``, ``scale(N)`` = dE/dE_0 and
``slope(E_0, N)`` = dE/d ln N (for the fit's analytic Jacobian), and ``to_dict()``.

References
----------
.. [1] G. L. Pearson, J. Bardeen, "Electrical properties of pure silicon and silicon alloys
   containing boron and phosphorus", Phys. Rev. 75, 865 (1949): alpha about 4.3e-8 eV cm
   for Si:B and Si:P (value from memory).
.. [2] P. P. Altermatt, A. Schenk, B. Schmithüsen, G. Heiser, J. Appl. Phys. 100, 113714
   (2006) (Si:P: N_ref = 3e18 cm^-3, c = 2) and 113715 (2006) (Si:B: N_ref = 1.7e18 cm^-3,
   c = 1.4): values as quoted in public device-simulation parameter sets, not read in the
   papers themselves (from memory of those sets).
"""

from __future__ import annotations

from dataclasses import dataclass

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


#: Largest alpha accepted [eV cm]: 5 times the largest published value quoted for the
#: bundled hosts (about 4e-8 eV cm; project choice, no source): a lowering of 0.2 eV at
#: 1e18 cm^-3.
MAX_ALPHA = 2e-7


@dataclass(frozen=True)
class PearsonBardeen:
    """E = E_0 - alpha N^(1/3) [1]; ``alpha`` in eV cm.

    ``host`` is the material the default alpha belongs to (Si), None for an alpha given.
    """

    alpha: float = PEARSON_BARDEEN_ALPHA_SI
    host: str | None = "Si"
    kind: str | None = None

    def energy(self, energy_0k, concentration):
        """E at concentration N [cm^-3] of a centre of energy E_0 [eV]. [eV]"""
        return pearson_bardeen_energy(energy_0k, concentration, self.alpha)

    def scale(self, concentration):
        """dE/dE_0. [1]"""
        return 1.0

    def slope(self, energy_0k, concentration):
        """dE/d ln N = -(alpha/3) N^(1/3). [eV]"""
        return -self.alpha / 3.0 * np.cbrt(concentration)

    def to_dict(self) -> dict:
        """JSON form."""
        return {"model": "pearson-bardeen", "alpha_eV_cm": self.alpha,
                "source": "G. L. Pearson, J. Bardeen, Phys. Rev. 75, 865 (1949) (alpha from "
                          "memory)"}


@dataclass(frozen=True)
class AltermattForm:
    """E = E_0 / (1 + (N/N_ref)^c) [2]; ``n_ref`` in cm^-3, ``exponent`` c.

    ``host`` and ``kind`` say which levels the set was fitted for (Si:P donors, Si:B
    acceptors): it applies to those only.
    """

    name: str
    n_ref: float
    exponent: float
    host: str | None = None
    kind: str | None = None

    def _x(self, concentration):
        return (np.asarray(concentration, dtype=float) / self.n_ref) ** self.exponent

    def energy(self, energy_0k, concentration):
        """E at concentration N [cm^-3] of a centre of energy E_0 [eV]. [eV]"""
        return energy_0k / (1.0 + self._x(concentration))  # [2]

    def scale(self, concentration):
        """dE/dE_0 = 1 / (1 + x), x = (N/N_ref)^c. [1]"""
        return 1.0 / (1.0 + self._x(concentration))

    def slope(self, energy_0k, concentration):
        """dE/d ln N = -E_0 c x / (1 + x)^2. [eV]"""
        x = self._x(concentration)
        return -energy_0k * self.exponent * x / (1.0 + x) ** 2

    def to_dict(self) -> dict:
        """JSON form."""
        return {"model": self.name, "n_ref_cm3": self.n_ref, "exponent": self.exponent,
                "source": "P. P. Altermatt, A. Schenk, B. Schmithüsen, G. Heiser, J. Appl. "
                          "Phys. 100, 113714 and 113715 (2006): E(N) form only"}


#: The E(N) sets of [2]: Si:P and Si:B.
ALTERMATT_SETS = {"altermatt-p": AltermattForm("altermatt-p", 3e18, 2.0, "Si", "donor"),
                  "altermatt-b": AltermattForm("altermatt-b", 1.7e18, 1.4, "Si", "acceptor")}


def check_lowering_use(model, material_name: str | None, kind: str | None = None) -> None:
    """InputError when an energy-versus-density model is used off its host or level kind.

    The default Pearson-Bardeen alpha and the Altermatt sets are silicon values [1, 2]; the
    Altermatt sets also belong to one kind of level. ``kind`` is the kind of the levels it
    is applied to; None (either) is not checked.
    """
    if model is None:
        return
    what = model.to_dict()["model"]
    if model.host is not None and material_name is not None and material_name != model.host:
        hint = (" (give pearson-bardeen:ALPHA with the host's own alpha)"
                if isinstance(model, PearsonBardeen) else "")
        raise InputError(f"--energy-vs-density {what}: its values are for {model.host}, the "
                         f"material is {material_name}{hint}")
    if kind is not None and model.kind is not None and kind != model.kind:
        raise InputError(f"--energy-vs-density {what}: the set is for {model.kind} levels; "
                         f"this run's partially ionized levels are {kind}s")


def parse_energy_vs_density(text: str | None):
    """The energy model of an option (``--energy-vs-density``).

    Parameters
    ----------
    text
        None or ``"none"`` (none), ``"pearson-bardeen"`` (alpha =
        :data:`PEARSON_BARDEEN_ALPHA_SI`), ``"pearson-bardeen:ALPHA"`` with ALPHA in eV cm,
        ``"altermatt-p"`` or ``"altermatt-b"``.

    Returns
    -------
    PearsonBardeen, AltermattForm or None

    Raises
    ------
    InputError
        Any other text, an empty ALPHA, or an alpha that is not a number in
        [0, :data:`MAX_ALPHA`] eV cm.
    """
    if text is None or text.strip().lower() in ("", "none"):
        return None
    name, _, value = text.strip().lower().partition(":")
    if name in ALTERMATT_SETS and not value:
        return ALTERMATT_SETS[name]
    if name != "pearson-bardeen":
        raise InputError(f"unknown energy-vs-density model {text!r}; use 'pearson-bardeen', "
                         "'pearson-bardeen:ALPHA' (ALPHA in eV cm), 'altermatt-p' or "
                         "'altermatt-b'")
    if not value:
        if ":" in text:
            raise InputError("pearson-bardeen: give the alpha after the colon (eV cm), or "
                             "leave out the colon for the silicon value")
        return PearsonBardeen()
    try:
        alpha = float(value)
    except ValueError:
        raise InputError(f"pearson-bardeen alpha {value!r} is not a number (eV cm)") from None
    if not (np.isfinite(alpha) and 0.0 <= alpha <= MAX_ALPHA):
        raise InputError(f"pearson-bardeen alpha {alpha!r} is outside [0, {MAX_ALPHA:g}] eV cm")
    return PearsonBardeen(alpha, host=None)
