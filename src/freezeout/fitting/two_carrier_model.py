"""The two-carrier model as the fit sees it: parameter values -> R_H and ln rho.

The levels' :class:`freezeout.fitting.model.CarrierModel` (charge neutrality) plus each
carrier's lattice term (``log10_mu300_n``, ``lattice_exponent_n``, ``log10_mu300_p``,
``lattice_exponent_p``), evaluated by :func:`freezeout.physics.two_carrier.both_carriers`.
No physics is written here.
"""

from __future__ import annotations

import numpy as np

from freezeout.fitting.model import CarrierModel
from freezeout.physics.two_carrier import both_carriers

#: Quadrature nodes of the energy averages in the fit: 4e-7 relative in r_H against the
#: 64 of the forward model, far below any measured scatter (project choice, no source).
FIT_NODES = 32


class TwoCarrierModel:
    """The levels' model plus both lattice terms: R_H and ln rho for parameter values.

    Parameters
    ----------
    model
        The levels' model on the data temperatures.
    mechanisms
        Scattering mechanisms of both carriers.
    hall_factor
        None for each carrier's r_H(T) from the scattering, else one constant. [1]
    """

    def __init__(self, model: CarrierModel, mechanisms, hall_factor):
        self.model = model
        self.mechanisms = mechanisms
        self.hall_factor = hall_factor

    def transport(self, values, res):
        """Both carriers' transport of a neutrality solution ``res`` of ``values``."""
        donors, acceptors = self.model.levels(values)
        return both_carriers(self.model.material, donors, acceptors, res, self.mechanisms,
                             (10.0 ** np.asarray(values["log10_mu300_n"]),
                              np.asarray(values["lattice_exponent_n"])),
                             (10.0 ** np.asarray(values["log10_mu300_p"]),
                              np.asarray(values["lattice_exponent_p"])), self.hall_factor,
                             nodes=FIT_NODES)

    def series(self, values, warm=True):
        """(R_H [cm^3/C], ln rho, BothCarriers) at the model's temperatures."""
        res = self.model.solve(values, warm=warm)
        bc = self.transport(values, res)
        return bc.hall_coefficient, np.log(bc.resistivity), bc

    def rows(self, values):
        """(R_H, ln rho) of a batch of parameter rows ((k, 1) arrays), from the warm start."""
        bc = self.transport(values, self.model.solve_rows(values))
        return bc.hall_coefficient, np.log(bc.resistivity)

    def at(self, temperature, values):
        """The same model on another temperature grid (a fresh, cold model)."""
        m = self.model
        other = CarrierModel(m.material, temperature, m.carrier, m.n_levels, m.compensated,
                             m.statistics, m.degeneracy)
        return TwoCarrierModel(other, self.mechanisms, self.hall_factor).series(values, False)
