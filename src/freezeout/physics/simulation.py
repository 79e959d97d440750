"""Forward simulation: carrier densities, Fermi level and ionized fractions of given levels.

The model behind ``freezeout simulate``: charge neutrality solved on a temperature grid for
levels the user states, no fitting.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from freezeout.physics.constants import Q
from freezeout.physics.majority_mobility import check_lattice, check_mechanisms, majority_mobility
from freezeout.physics.materials import Material
from freezeout.physics.neutrality import DopantLevel, solve_charge_neutrality
from freezeout.physics.two_carrier import BothCarriers, both_carriers

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
class MajorityTransport:
    """Single-carrier transport of the majority carrier of a simulation.

    Attributes
    ----------
    carrier
        ``"n"`` or ``"p"``.
    models
        Scattering mechanisms (:data:`freezeout.physics.majority_mobility.MECHANISMS`).
    lattice_mobility_300, lattice_exponent
        Lattice power law (inf and 0 without the lattice mechanism). [cm^2/(V s)], [1]
    drift_mobility, hall_factor, hall_mobility
        mu, r_H and mu_H = r_H mu at each temperature. [cm^2/(V s)], [1], [cm^2/(V s)]
    resistivity
        rho = 1 / (q n mu) of the majority carrier alone. [ohm cm]
    hall_coefficient
        R_H = -+ r_H / (q n) (negative for electrons). [cm^3/C]
    """

    carrier: str
    models: tuple[str, ...]
    lattice_mobility_300: float
    lattice_exponent: float
    drift_mobility: np.ndarray
    hall_factor: np.ndarray
    hall_mobility: np.ndarray
    resistivity: np.ndarray
    hall_coefficient: np.ndarray

    def to_dict(self) -> dict:
        """JSON form."""
        lattice = "lattice" in self.models
        return {"carrier": self.carrier, "models": list(self.models),
                "lattice_mu300_cm2_per_Vs": self.lattice_mobility_300 if lattice else None,
                "lattice_exponent": self.lattice_exponent if lattice else None,
                "drift_mobility_cm2_per_Vs": self.drift_mobility.tolist(),
                "hall_factor": self.hall_factor.tolist(),
                "hall_mobility_cm2_per_Vs": self.hall_mobility.tolist(),
                "resistivity_ohm_cm": self.resistivity.tolist(),
                "hall_coefficient_cm3_per_C": self.hall_coefficient.tolist()}


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
    transport
        Majority-carrier mobility, Hall factor, resistivity and Hall coefficient
        (:class:`MajorityTransport`), or both carriers' (:class:`BothCarriers`), or None
        when no mobility model was asked for.
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
    transport: MajorityTransport | BothCarriers | None = None

    def columns(self) -> dict[str, np.ndarray]:
        """Output columns in order, headers with units (a valid input to ``fit``)."""
        cols = {"T [K]": self.temperature, "n [cm^-3]": self.n, "p [cm^-3]": self.p,
                "E_F - E_v [eV]": self.fermi_level}
        for i, f in enumerate(self.donor_ionized, 1):
            cols[f"ionized donor {i} [1]"] = f
        for i, f in enumerate(self.acceptor_ionized, 1):
            cols[f"ionized acceptor {i} [1]"] = f
        if self.transport is not None:
            cols["mu_H [cm^2/(V s)]"] = self.transport.hall_mobility
            cols["rho [ohm cm]"] = self.transport.resistivity
            cols["R_H [cm^3/C]"] = self.transport.hall_coefficient
        return cols

    def to_dict(self) -> dict:
        """JSON form."""
        def level(lv):
            return {"kind": lv.kind, "concentration_cm3": float(lv.concentration),
                    "energy_eV": None if lv.energy is None else float(lv.energy),
                    "degeneracy": None if lv.energy is None else float(lv.degeneracy)} | (
                {"excited_states": [{"splitting_eV": d, "degeneracy": g}
                                    for d, g in lv.excited]} if lv.excited else {}) | (
                {"energy_vs_density": lv.lowering.to_dict()} if lv.lowering else {})
        out = {
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
        if self.transport is not None:
            out["transport"] = self.transport.to_dict()
        return out


def simulate(material: Material, temperature, donors: Sequence[DopantLevel] = (),
             acceptors: Sequence[DopantLevel] = (),
             statistics: str = "fermi-dirac", mobility: Sequence[str] | str = (),
             lattice_mu300: float | None = None,
             lattice_exponent: float | None = None,
             minority_lattice: tuple[float, float] | None = None) -> Simulation:
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
    mobility
        Scattering mechanisms for the majority carrier's mobility (empty: none); see
        :func:`freezeout.physics.majority_mobility.check_mechanisms`.
    lattice_mu300, lattice_exponent
        Lattice mobility at 300 K and exponent, needed with ``"lattice"``. [cm^2/(V s)], [1]
    minority_lattice
        (mu_300, a) of the minority carrier's lattice term: with it both carriers conduct
        (:func:`freezeout.physics.two_carrier.both_carriers`), so R_H and rho show the mixed
        conduction of a hot run; without it, the majority carrier alone.
    """
    t = np.asarray(temperature, dtype=float)
    res = solve_charge_neutrality(t, material, donors, acceptors, statistics)
    transport = None
    if mobility and minority_lattice is not None:
        models = check_mechanisms(mobility)
        majority = check_lattice(models, lattice_mu300, lattice_exponent)
        minority = check_lattice(models, *minority_lattice)
        electron, hole = ((majority, minority) if simulation_majority(donors, acceptors) == "n"
                          else (minority, majority))
        transport = both_carriers(material, donors, acceptors, res, models, electron, hole)
    elif mobility:
        transport = majority_transport(material, donors, acceptors, res, mobility,
                                       lattice_mu300, lattice_exponent)
    return Simulation(material, tuple(donors), tuple(acceptors), statistics, t, res.n, res.p,
                      res.fermi_level, res.band_gap, res.donor_ionized, res.acceptor_ionized,
                      transport)


def simulation_majority(donors: Sequence[DopantLevel], acceptors: Sequence[DopantLevel]) -> str:
    """Majority carrier of given levels: ``"p"`` when acceptors outnumber donors, else ``"n"``."""
    total_d = sum(float(np.max(lv.concentration)) for lv in donors)
    total_a = sum(float(np.max(lv.concentration)) for lv in acceptors)
    return "p" if total_a > total_d else "n"


def majority_transport(material: Material, donors, acceptors, result, mobility,
                       lattice_mu300=None, lattice_exponent=None) -> MajorityTransport:
    """Majority-carrier mobility, Hall factor, resistivity and R_H of a neutrality solution.

    The Hall factor comes from the scattering (r_H = <tau^2>/<tau>^2 of the combined
    relaxation time), N_I and the screening density from the ionized fractions at each T.
    Single-carrier forms: rho = 1/(q n mu), R_H = -+ r_H/(q n) (K. Seeger, Semiconductor
    Physics, ch. 4; from memory).
    """
    models = check_mechanisms(mobility)
    mu300, a = check_lattice(models, lattice_mu300, lattice_exponent)
    carrier = simulation_majority(donors, acceptors)
    cm = majority_mobility(material, carrier, donors, acceptors, result, models, mu300, a)
    density = result.n if carrier == "n" else result.p
    sign = -1.0 if carrier == "n" else 1.0
    return MajorityTransport(carrier, models, mu300, a, cm.drift, cm.hall_factor, cm.hall,
                             1.0 / (Q * density * cm.drift),  # rho = 1/(q n mu)
                             sign * cm.hall_factor / (Q * density))  # R_H = -+ r_H/(q n)
