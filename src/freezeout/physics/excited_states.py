"""Excited states of a donor: the temperature-dependent effective degeneracy g_eff(T).

A donor whose bound electron can also sit in excited states of the impurity (in silicon the
valley-orbit split 1s(A1), 1s(T2) and 1s(E) states) is ionized in the fraction

    N_D+ / N_D = 1 / (1 + g_eff(T) exp((E_F - E_D)/kT)),
    g_eff(T) = g_0 + sum_i g_i exp(-(E_0 - E_i)/kT)                                  [1]

with E_0 the ground-state binding energy (the level's ``energy``), E_i the excited states'
binding energies and g_i their degeneracies, spin included. A level keeps the splittings
E_0 - E_i of its set, so a fitted ground-state energy moves the excited states with it.

At low temperature g_eff -> g_0 (2 for Si:P, the spin of the 1s(A1) singlet); at high
temperature it tends to the total count of the 1s manifold (12 in Si: six valleys times
spin).

References
----------
.. [1] J. S. Blakemore, *Semiconductor Statistics* (Pergamon, 1962), Sec. 3.2 (impurity
   levels with excited states; the occupancy with the internal partition function; section
   from memory).
.. [2] A. K. Ramdas, S. Rodriguez, "Spectroscopy of the solid-state analogues of the hydrogen
   atom: donors and acceptors in semiconductors", Rep. Prog. Phys. 44, 1297 (1981), the
   1s binding energies of P, As and Sb in Si (values here from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from freezeout.errors import InputError


@dataclass(frozen=True)
class ExcitedStates:
    """A donor's ground state and excited states.

    Attributes
    ----------
    name
        Set name, e.g. ``"si-p"``.
    host
        Name of the host material the energies belong to, e.g. ``"Si"``.
    ground_energy
        Ground-state binding energy E_0 below E_c. [eV]
    ground_degeneracy
        Ground-state degeneracy g_0, spin included. [1]
    states
        ``(binding energy E_i [eV], degeneracy g_i [1])`` of each excited state.
    source
        Where the energies come from.
    """

    name: str
    host: str
    ground_energy: float
    ground_degeneracy: float
    states: tuple[tuple[float, float], ...]
    source: str

    @property
    def splittings(self) -> tuple[tuple[float, float], ...]:
        """``(E_0 - E_i [eV], g_i)`` of each excited state."""
        return tuple((self.ground_energy - e, g) for e, g in self.states)

    def to_dict(self) -> dict:
        """JSON form (energies in eV)."""
        return {"name": self.name, "host": self.host, "ground_energy_eV": self.ground_energy,
                "ground_degeneracy": self.ground_degeneracy,
                "states": [{"energy_eV": e, "degeneracy": g} for e, g in self.states],
                "source": self.source}


_RR = "A. K. Ramdas, S. Rodriguez, Rep. Prog. Phys. 44, 1297 (1981) (from memory)"

#: Bundled sets: the 1s(A1) ground state (g = 2) and the 1s(T2) (g = 6) and 1s(E) (g = 4)
#: valley-orbit states of group-V donors in silicon [2].
EXCITED_STATE_SETS = {
    "si-p": ExcitedStates("si-p", "Si", 0.04559, 2.0, ((0.03389, 6.0), (0.03258, 4.0)), _RR),
    "si-as": ExcitedStates("si-as", "Si", 0.05376, 2.0, ((0.03267, 6.0), (0.03126, 4.0)), _RR),
    "si-sb": ExcitedStates("si-sb", "Si", 0.04274, 2.0, ((0.03291, 6.0), (0.03047, 4.0)), _RR),
}


def get_excited_states(name: str) -> ExcitedStates:
    """A bundled set by name, case-insensitively (``si-p``, ``si-as``, ``si-sb``).

    Raises
    ------
    InputError
        For an unknown name; the message lists the known ones.
    """
    key = name.strip().lower().replace(":", "-")
    if key not in EXCITED_STATE_SETS:
        raise InputError(f"unknown excited-state set {name!r}; known: "
                         f"{', '.join(EXCITED_STATE_SETS)}")
    return EXCITED_STATE_SETS[key]


def log_effective_degeneracy(kt, ground_degeneracy, splittings):
    """ln g_eff(T), g_eff = g_0 + sum_i g_i exp(-(E_0 - E_i)/kT).

    Parameters
    ----------
    kt
        Thermal energy. [eV]
    ground_degeneracy
        g_0. [1]
    splittings
        ``(E_0 - E_i [eV], g_i [1])`` of each excited state.

    Returns
    -------
    numpy.ndarray
        ln g_eff at each kT. [1]

    References
    ----------
    [1], Sec. 3.2.
    """
    kt = np.asarray(kt, dtype=float)
    g = np.full(kt.shape, float(ground_degeneracy))
    for delta, gi in splittings:
        g = g + gi * np.exp(-delta / kt)  # [1] the internal partition function
    return np.log(g)


def effective_degeneracy(kt, ground_degeneracy, splittings):
    """g_eff(T) of :func:`log_effective_degeneracy`. [1]"""
    return np.exp(log_effective_degeneracy(kt, ground_degeneracy, splittings))
