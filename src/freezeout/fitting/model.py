"""The carrier model as the fit sees it: named parameters mapped onto dopant levels.

For a run whose majority carrier is electrons the parameters are, for each donor level i,
``N_D{i}`` (fitted as log10) and ``E_D{i}``, and, when compensation is included, ``N_A`` (a
fully ionized acceptor). For holes the roles swap (``N_A{i}``, ``E_A{i}``, ``N_D``). No
physics is written here: the model calls :func:`freezeout.physics.neutrality.solve_levels`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from freezeout.physics.materials import Material
from freezeout.physics.neutrality import (
    DEFAULT_ACCEPTOR_DEGENERACY,
    DEFAULT_DONOR_DEGENERACY,
    BandState,
    DopantLevel,
    NeutralityResult,
    solve_levels,
)


@dataclass(frozen=True)
class ParameterSpec:
    """One fit parameter: its public name, internal (lmfit) name, kind and level index."""

    name: str  # e.g. "N_D1", "E_D1", "N_A"
    internal: str  # e.g. "log10_N_D1"
    quantity: str  # "concentration" or "energy"
    level: int  # index into the level list (majority first, then compensating)


class CarrierModel:
    """Majority-carrier levels plus an optional fully ionized compensating species.

    Parameters
    ----------
    material
        Host material.
    temperature
        Temperature grid of the data. [K]
    carrier
        Majority carrier, ``"n"`` or ``"p"``.
    n_levels
        Number of partially ionized majority-type levels (>= 1).
    compensated
        Include a fully ionized compensating species of the minority type.
    statistics
        ``"fermi-dirac"`` or ``"boltzmann"``.
    degeneracy
        Ground-state degeneracy of the majority levels (default 2 for donors, 4 for
        acceptors). [1]
    """

    def __init__(self, material: Material, temperature, carrier: str, n_levels: int = 1,
                 compensated: bool = True, statistics: str = "fermi-dirac",
                 degeneracy: float | None = None) -> None:
        if carrier not in ("n", "p"):
            raise ValueError(f"carrier must be 'n' or 'p', got {carrier!r}")
        if n_levels < 1:
            raise ValueError("at least one majority-carrier level is needed")
        self.material = material
        self.temperature = np.asarray(temperature, dtype=float)
        self.carrier = carrier
        self.n_levels = int(n_levels)
        self.compensated = bool(compensated)
        self.statistics = statistics
        self.major_kind = "donor" if carrier == "n" else "acceptor"
        self.minor_kind = "acceptor" if carrier == "n" else "donor"
        default_g = (DEFAULT_DONOR_DEGENERACY if carrier == "n"
                     else DEFAULT_ACCEPTOR_DEGENERACY)
        self.degeneracy = float(default_g if degeneracy is None else degeneracy)
        self.bands = BandState.from_material(material, self.temperature)
        ms = "D" if carrier == "n" else "A"
        mn = "A" if carrier == "n" else "D"
        specs = []
        for i in range(1, self.n_levels + 1):
            specs.append(ParameterSpec(f"N_{ms}{i}", f"log10_N_{ms}{i}", "concentration", i - 1))
            specs.append(ParameterSpec(f"E_{ms}{i}", f"E_{ms}{i}", "energy", i - 1))
        if self.compensated:
            specs.append(ParameterSpec(f"N_{mn}", f"log10_N_{mn}", "concentration",
                                       self.n_levels))
        self.specs = tuple(specs)
        self._last_fermi = None

    @property
    def names(self) -> tuple[str, ...]:
        """Public parameter names in order."""
        return tuple(s.name for s in self.specs)

    def levels(self, values: dict[str, np.ndarray | float]):
        """Donor and acceptor level lists for a set of internal parameter values."""
        major = []
        for i in range(1, self.n_levels + 1):
            ms = "D" if self.carrier == "n" else "A"
            major.append(DopantLevel(self.major_kind, 10.0 ** values[f"log10_N_{ms}{i}"],
                                     values[f"E_{ms}{i}"], self.degeneracy))
        minor = []
        if self.compensated:
            mn = "A" if self.carrier == "n" else "D"
            minor.append(DopantLevel(self.minor_kind, 10.0 ** values[f"log10_N_{mn}"], None))
        if self.carrier == "n":
            return major, minor
        return minor, major

    def solve(self, values: dict, bands: BandState | None = None,
              warm: bool = True) -> NeutralityResult:
        """Solve neutrality for the parameter values (arrays broadcast as a batch)."""
        donors, acceptors = self.levels(values)
        init = self._last_fermi if warm else None
        res = solve_levels(bands or self.bands, donors, acceptors, self.statistics, init)
        if warm and res.fermi_level.shape == self.temperature.shape:
            self._last_fermi = res.fermi_level
        return res

    def log_density(self, values: dict, warm: bool = True) -> np.ndarray:
        """ln of the majority-carrier density (cm^-3) at the data temperatures."""
        res = self.solve(values, warm=warm)
        return res.log_n if self.carrier == "n" else res.log_p
