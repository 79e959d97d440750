"""Electrons and holes together: each carrier's mobility, and the R_H and rho they give.

From a charge-neutrality solution (n, p and the ionized fractions at each T) both carriers
get their drift mobility and Hall factor from the same scattering mechanisms
(:func:`freezeout.physics.majority_mobility.majority_mobility`, called once per carrier
with that carrier's conductivity mass and lattice power law); the ionized-impurity density
and the screening density n' (which counts both bands) are the same for both. Then

    R_H = (r_p p mu_p^2 - r_n n mu_n^2) / (q (p mu_p + n mu_n)^2),
    sigma = q (n mu_n + p mu_p)

(:mod:`freezeout.physics.transport`; E. H. Putley, *The Hall Effect and Semiconductor
Physics*, Dover 1968, ch. 4, from memory). The Hall mobility a run measures is
|R_H| / rho = |R_H| sigma, which passes through zero where R_H changes sign.

The neutral-impurity density of each carrier's call is that of its own type's levels (the
un-ionized donors for electrons, acceptors for holes): project choice, no source; in the
mixed-conduction range where the minority carrier matters, its own type's levels are
nearly all ionized, so the choice moves nothing measurable.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from freezeout.physics.carrier_mobility import CarrierMobility
from freezeout.physics.hall_factor import QUADRATURE_NODES
from freezeout.physics.majority_mobility import majority_mobility
from freezeout.physics.materials import Material
from freezeout.physics.neutrality import DopantLevel, NeutralityResult
from freezeout.physics.transport import conductivity, hall_coefficient


@dataclass(frozen=True)
class BothCarriers:
    """Transport of electrons and holes together on one temperature grid.

    Attributes
    ----------
    models
        Scattering mechanisms (both carriers).
    electron_lattice, hole_lattice
        (mu_300 [cm^2/(V s)], a [1]) of each carrier's lattice term.
    n, p
        Carrier densities. [cm^-3]
    electron, hole
        Each carrier's mobilities and Hall factor
        (:class:`freezeout.physics.carrier_mobility.CarrierMobility`).
    hall_coefficient
        Two-carrier R_H (positive when holes dominate). [cm^3/C]
    resistivity
        1 / (q (n mu_n + p mu_p)). [ohm cm]
    """

    models: tuple[str, ...]
    electron_lattice: tuple
    hole_lattice: tuple
    n: np.ndarray
    p: np.ndarray
    electron: CarrierMobility
    hole: CarrierMobility
    hall_coefficient: np.ndarray
    resistivity: np.ndarray

    @property
    def hall_mobility(self) -> np.ndarray:
        """|R_H| / rho, the Hall mobility a run measures. [cm^2/(V s)]"""
        return np.abs(self.hall_coefficient) / self.resistivity

    def to_dict(self) -> dict:
        """JSON form (the ``transport`` block of a simulation with both carriers)."""
        def carrier(cm: CarrierMobility, lattice) -> dict:
            return {"lattice_mu300_cm2_per_Vs": float(lattice[0]),
                    "lattice_exponent": float(lattice[1]),
                    "drift_mobility_cm2_per_Vs": np.asarray(cm.drift).tolist(),
                    "hall_factor": np.asarray(cm.hall_factor).tolist()}

        return {"carriers": "both", "models": list(self.models),
                "electron": carrier(self.electron, self.electron_lattice),
                "hole": carrier(self.hole, self.hole_lattice),
                "hall_mobility_cm2_per_Vs": self.hall_mobility.tolist(),
                "resistivity_ohm_cm": self.resistivity.tolist(),
                "hall_coefficient_cm3_per_C": self.hall_coefficient.tolist()}


def both_carriers(material: Material, donors: Sequence[DopantLevel],
                  acceptors: Sequence[DopantLevel], result: NeutralityResult,
                  mechanisms: Sequence[str], electron_lattice, hole_lattice,
                  hall_factor: float | None = None,
                  nodes: int = QUADRATURE_NODES) -> BothCarriers:
    """R_H, rho and both carriers' mobilities of a neutrality solution.

    Parameters
    ----------
    material
        Host (both conductivity masses and the permittivity).
    donors, acceptors
        The levels ``result`` was solved for (concentrations may broadcast as a batch).
    result
        The neutrality solution.
    mechanisms
        Checked mechanism names (:func:`freezeout.physics.majority_mobility.check_mechanisms`).
    electron_lattice, hole_lattice
        (mu_300 [cm^2/(V s)], a [1]) of each carrier's lattice term (arrays broadcast).
    hall_factor
        None: each carrier's r_H from its scattering; a number: that constant for both. [1]
    nodes
        Quadrature nodes of the energy averages. [1]

    Returns
    -------
    BothCarriers
    """
    cm_n = majority_mobility(material, "n", donors, acceptors, result, mechanisms,
                             electron_lattice[0], electron_lattice[1], nodes)
    cm_p = majority_mobility(material, "p", donors, acceptors, result, mechanisms,
                             hole_lattice[0], hole_lattice[1], nodes)
    r_n = cm_n.hall_factor if hall_factor is None else hall_factor
    r_p = cm_p.hall_factor if hall_factor is None else hall_factor
    rh = hall_coefficient(result.n, result.p, cm_n.drift, cm_p.drift, r_n, r_p)
    rho = 1.0 / conductivity(result.n, result.p, cm_n.drift, cm_p.drift)
    return BothCarriers(tuple(mechanisms), tuple(electron_lattice), tuple(hole_lattice),
                        np.asarray(result.n), np.asarray(result.p), cm_n, cm_p, rh, rho)
