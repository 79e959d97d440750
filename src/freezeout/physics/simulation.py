"""Forward simulation: carrier densities, Fermi level and ionized fractions of given levels.

The model behind ``freezeout simulate``: charge neutrality solved on a temperature grid for
levels the user states, no fitting.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from freezeout.physics.materials import Material
from freezeout.physics.neutrality import DopantLevel, solve_charge_neutrality

SIM_SCHEMA_VERSION = 1


def temperature_grid(t_min: float, t_max: float, n: int) -> np.ndarray:
    """N temperatures from t_min to t_max evenly spaced in 1000/T, ascending.

    Parameters
    ----------
    t_min, t_max
        End points, 0 < t_min < t_max. [K]
    n
        Number of points (>= 2).
    """
    if not (np.isfinite(t_min) and np.isfinite(t_max)) or not 0 < t_min < t_max:
        raise ValueError(f"need 0 < TMIN < TMAX, got {t_min!r}:{t_max!r}")
    if n < 2:
        raise ValueError(f"need at least 2 temperatures, got {n}")
    return np.sort(1000.0 / np.linspace(1000.0 / t_min, 1000.0 / t_max, int(n)))


@dataclass(frozen=True)
class Simulation:
    """Result of :func:`simulate`.

    Attributes
    ----------
    material
        Host material.
    donors, acceptors
        Levels simulated.
    statistics
        ``"fermi-dirac"`` or ``"boltzmann"``.
    temperature
        Temperatures. [K]
    n, p
        Electron and hole densities. [cm^-3]
    fermi_level
        E_F - E_v. [eV]
    band_gap
        E_c - E_v. [eV]
    donor_ionized, acceptor_ionized
        Ionized fraction of each level. [1]
    """

    material: Material
    donors: tuple[DopantLevel, ...]
    acceptors: tuple[DopantLevel, ...]
    statistics: str
    temperature: np.ndarray
    n: np.ndarray
    p: np.ndarray
    fermi_level: np.ndarray
    band_gap: np.ndarray
    donor_ionized: tuple[np.ndarray, ...]
    acceptor_ionized: tuple[np.ndarray, ...]

    def columns(self) -> dict[str, np.ndarray]:
        """Output columns in order, headers with units (a valid input to ``fit``)."""
        cols = {"T [K]": self.temperature, "n [cm^-3]": self.n, "p [cm^-3]": self.p,
                "E_F - E_v [eV]": self.fermi_level}
        for i, f in enumerate(self.donor_ionized, 1):
            cols[f"ionized donor {i} [1]"] = f
        for i, f in enumerate(self.acceptor_ionized, 1):
            cols[f"ionized acceptor {i} [1]"] = f
        return cols

    def to_dict(self) -> dict:
        """JSON form."""
        def level(lv):
            return {"kind": lv.kind, "concentration_cm3": float(lv.concentration),
                    "energy_eV": None if lv.energy is None else float(lv.energy),
                    "degeneracy": None if lv.energy is None else float(lv.degeneracy)}
        return {
            "schema_version": SIM_SCHEMA_VERSION,
            "material": self.material.to_dict(),
            "statistics": self.statistics,
            "levels": [level(lv) for lv in (*self.donors, *self.acceptors)],
            "temperature_K": self.temperature.tolist(),
            "n_cm3": self.n.tolist(),
            "p_cm3": self.p.tolist(),
            "fermi_level_above_Ev_eV": self.fermi_level.tolist(),
            "band_gap_eV": self.band_gap.tolist(),
            "donor_ionized": [f.tolist() for f in self.donor_ionized],
            "acceptor_ionized": [f.tolist() for f in self.acceptor_ionized],
        }


def simulate(material: Material, temperature, donors: Sequence[DopantLevel] = (),
             acceptors: Sequence[DopantLevel] = (),
             statistics: str = "fermi-dirac") -> Simulation:
    """Solve charge neutrality on a temperature grid for given levels.

    Parameters
    ----------
    material
        Host material.
    temperature
        Temperatures. [K]
    donors, acceptors
        Levels (``energy=None`` for a fully ionized species).
    statistics
        ``"fermi-dirac"`` or ``"boltzmann"``.
    """
    t = np.asarray(temperature, dtype=float)
    res = solve_charge_neutrality(t, material, donors, acceptors, statistics)
    return Simulation(material, tuple(donors), tuple(acceptors), statistics, t, res.n, res.p,
                      res.fermi_level, res.band_gap, res.donor_ionized, res.acceptor_ionized)
