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
    """One fit parameter: its public name, internal name, kind and level index."""

    name: str  # e.g. "N_D1", "E_D1", "N_A"
    internal: str  # e.g. "log10_N_D1"
    quantity: str  # "concentration" or "energy"
    level: int  # index into the level list (majority first, then compensating)


class CarrierModel:
    """Majority-carrier levels plus an optional fully ionized compensating species.

    The model keeps the Fermi level of its last warm solve on its own temperature grid and
    starts the next warm solve from it (a warm start: far fewer Newton steps between nearby
    parameter sets). :meth:`warm_start` sets that starting point from outside (e.g. from a
    batch solve), :meth:`clear_warm_start` forgets it, :attr:`warm_fermi` reads it.

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
    excited
        ``(E_0 - E_i [eV], g_i)`` of the majority levels' excited states (none: a constant
        g; see :class:`freezeout.physics.neutrality.DopantLevel`).
    lowering
        Energy-versus-density model of the majority levels
        (:mod:`freezeout.physics.level_energy`), or None; their ``E_*`` parameters are then
        the isolated-centre energies E_0.
    """

    def __init__(self, material: Material, temperature, carrier: str, n_levels: int = 1,
                 compensated: bool = True, statistics: str = "fermi-dirac",
                 degeneracy: float | None = None, *, excited: tuple = (),
                 lowering=None) -> None:
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
        #: Letter of the majority and of the compensating species in parameter names.
        self.major_symbol = "D" if carrier == "n" else "A"
        self.minor_symbol = "A" if carrier == "n" else "D"
        default_g = (DEFAULT_DONOR_DEGENERACY if carrier == "n"
                     else DEFAULT_ACCEPTOR_DEGENERACY)
        self.degeneracy = float(default_g if degeneracy is None else degeneracy)
        self.excited = tuple(excited)
        self.lowering = lowering
        self.bands = BandState.from_material(material, self.temperature)
        b = self.bands
        #: The same band state as one row, (1, temperatures): it broadcasts over a batch of
        #: parameter rows ((k, 1) values).
        self.row_bands = BandState(b.temperature[None, :], b.kt[None, :], b.band_gap[None, :],
                                   b.log_nc[None, :], b.log_nv[None, :])
        ms, mn = self.major_symbol, self.minor_symbol
        specs = []
        for i in range(1, self.n_levels + 1):
            specs.append(ParameterSpec(f"N_{ms}{i}", f"log10_N_{ms}{i}", "concentration", i - 1))
            specs.append(ParameterSpec(f"E_{ms}{i}", f"E_{ms}{i}", "energy", i - 1))
        if self.compensated:
            specs.append(ParameterSpec(f"N_{mn}", f"log10_N_{mn}", "concentration",
                                       self.n_levels))
        self.specs = tuple(specs)
        self._warm_fermi: np.ndarray | None = None

    @property
    def names(self) -> tuple[str, ...]:
        """Public parameter names in order."""
        return tuple(s.name for s in self.specs)

    @property
    def major_concentration_names(self) -> tuple[str, ...]:
        """Internal names of the majority-level concentrations (``log10_N_D1``...)."""
        return tuple(f"log10_N_{self.major_symbol}{i}" for i in range(1, self.n_levels + 1))

    @property
    def compensation_name(self) -> str:
        """Internal name of the compensating concentration (``log10_N_A`` for n-type).

        The name exists whether or not the model includes compensation.
        """
        return f"log10_N_{self.minor_symbol}"

    # ---- warm start ---------------------------------------------------------------------
    @property
    def warm_fermi(self) -> np.ndarray | None:
        """Fermi level E_F - E_v the next warm solve starts from, or None (cold). [eV]"""
        return self._warm_fermi

    def warm_start(self, fermi_level) -> None:
        """Start the next warm solve from ``fermi_level`` (E_F - E_v on the model's grid).

        Parameters
        ----------
        fermi_level
            One Fermi level per temperature of the model (a copy is kept). [eV]

        Raises
        ------
        ValueError
            When the shape differs from the model's temperature grid.
        """
        ef = np.array(fermi_level, dtype=float)
        if ef.shape != self.temperature.shape:
            raise ValueError(f"warm start of shape {ef.shape} for a grid of shape "
                             f"{self.temperature.shape}")
        self._warm_fermi = ef

    def clear_warm_start(self) -> None:
        """Forget the kept Fermi level: the next solve starts cold (mid-gap)."""
        self._warm_fermi = None

    # ---- evaluation ---------------------------------------------------------------------
    def levels(self, values: dict[str, np.ndarray | float]):
        """Donor and acceptor level lists for a set of internal parameter values."""
        ms, mn = self.major_symbol, self.minor_symbol
        major = []
        for i in range(1, self.n_levels + 1):
            major.append(DopantLevel(self.major_kind, 10.0 ** values[f"log10_N_{ms}{i}"],
                                     values[f"E_{ms}{i}"], self.degeneracy, self.excited,
                                     self.lowering))
        minor = []
        if self.compensated:
            minor.append(DopantLevel(self.minor_kind, 10.0 ** values[f"log10_N_{mn}"], None))
        if self.carrier == "n":
            return major, minor
        return minor, major

    def solve(self, values: dict, bands: BandState | None = None,
              warm: bool = True) -> NeutralityResult:
        """Solve neutrality for the parameter values (arrays broadcast as a batch).

        With ``warm`` the solve starts from :attr:`warm_fermi` (cold when None) and, on the
        model's own grid, keeps its solution as the next warm start; without, it starts cold
        and keeps nothing.
        """
        donors, acceptors = self.levels(values)
        init = self._warm_fermi if warm else None
        res = solve_levels(bands or self.bands, donors, acceptors, self.statistics, init)
        if warm and res.fermi_level.shape == self.temperature.shape:
            self._warm_fermi = res.fermi_level
        return res

    def solve_rows(self, values: dict) -> NeutralityResult:
        """Solve a batch of parameter rows (each value a (k, 1) array) on the model's grid.

        Every row starts from the kept warm Fermi level (cold without one), and nothing is
        kept: the batch of a finite-difference Jacobian around the last solution.
        """
        donors, acceptors = self.levels(values)
        init = None
        if self._warm_fermi is not None:
            k = max(int(np.shape(v)[0]) for v in values.values() if np.ndim(v) == 2)
            init = np.broadcast_to(self._warm_fermi, (k, self._warm_fermi.size))
        return solve_levels(self.row_bands, donors, acceptors, self.statistics, init)

    def log_density(self, values: dict, warm: bool = True) -> np.ndarray:
        """ln of the majority-carrier density (cm^-3) at the data temperatures."""
        return self.majority_log(self.solve(values, warm=warm))

    # ---- reading a solution in majority/minority terms ------------------------------------
    def majority_log(self, res: NeutralityResult) -> np.ndarray:
        """ln of the majority-carrier density of a solution (cm^-3). [1]"""
        return res.log_n if self.carrier == "n" else res.log_p

    def minority_log(self, res: NeutralityResult) -> np.ndarray:
        """ln of the minority-carrier density of a solution (cm^-3). [1]"""
        return res.log_p if self.carrier == "n" else res.log_n

    def majority_ionized(self, res: NeutralityResult) -> tuple[np.ndarray, ...]:
        """Ionized fraction of each majority level of a solution, in level order. [1]"""
        return res.donor_ionized if self.carrier == "n" else res.acceptor_ionized
