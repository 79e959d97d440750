"""The record of a two-carrier fit: each carrier's lattice term, the Hall sign reversal, curves.

Held by :attr:`freezeout.fitting.result.FitResult.two_carrier`; in the fit JSON its
:meth:`TwoCarrierFit.mobility_dict` is the ``mobility`` block (keyed ``electron`` and
``hole``), :attr:`TwoCarrierFit.reversal_K` is ``hall_sign_reversal_K`` and
:meth:`TwoCarrierFit.to_dict` the ``two_carrier`` block (weights, statistics, series).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from freezeout.fitting.result import Estimate
from freezeout.numbers.values import finite_or_none


@dataclass(frozen=True)
class CarrierLattice:
    """One carrier's fitted lattice term and its model series at the data temperatures.

    Attributes
    ----------
    lattice_mu300, lattice_exponent
        mu_300 [cm^2/(V s)] and a [1] of mu_L = mu_300 (T/300 K)^-a.
    drift_mobility, hall_factor
        The carrier's drift mobility and Hall factor at the data temperatures.
        [cm^2/(V s)], [1]
    """

    lattice_mu300: Estimate
    lattice_exponent: Estimate
    drift_mobility: np.ndarray
    hall_factor: np.ndarray

    def to_dict(self, models) -> dict:
        """JSON form (``mobility[electron|hole]``)."""
        return {"models": list(models),
                "lattice_mu300_cm2_per_Vs": self.lattice_mu300.to_dict(),
                "lattice_exponent": self.lattice_exponent.to_dict(),
                "drift_mobility_cm2_per_Vs": self.drift_mobility.tolist(),
                "hall_factor": self.hall_factor.tolist()}


@dataclass(frozen=True)
class TwoCarrierFit:
    """The electron-and-hole part of a fit of R_H(T) and rho(T).

    Attributes
    ----------
    models
        Scattering mechanisms of both carriers.
    hall_factor_source
        ``"scattering"`` (each carrier's r_H(T)) or the constant used, as text.
    electron, hole
        Each carrier's :class:`CarrierLattice`.
    reversal_K
        The model's temperature where R_H changes sign, searched from half the lowest to
        twice the highest measured temperature (where the gap is open); None if none. [K]
    reversal
        The same with its standard error and a Wald interval (delta method through the
        fit's covariance), or None.
    sigma_from
        For ``hall`` and ``resistivity``: ``"stated"`` or ``"scatter"``.
    sigma_scale
        The factor the scatter gave each series' relative weights (1 for stated errors).
    chi2, n_points, n_parameters
        Joint chi^2 of both series at the solution, points per series and free parameters.
    temperature, hall_coefficient, resistivity
        The points fitted and their measured R_H [cm^3/C] and rho [ohm cm].
    rms_percent
        rms misfit in percent: ``hall`` of (R_model - R) over the R_H weight scale
        sqrt(R^2 + (0.05 rho mu_ref)^2) (relative where one carrier dominates),
        ``resistivity`` of ln(rho_model / rho). [%]
    model_hall_coefficient, model_resistivity
        The model at those points. [cm^3/C], [ohm cm]
    curve_temperature, curve_hall_coefficient, curve_resistivity
        The model on a fine grid over the measured range, for figures. [K], [cm^3/C],
        [ohm cm]
    """

    models: tuple[str, ...]
    hall_factor_source: str
    electron: CarrierLattice
    hole: CarrierLattice
    reversal_K: float | None
    reversal: Estimate | None
    sigma_from: dict
    sigma_scale: dict
    chi2: float
    n_points: int
    n_parameters: int
    temperature: np.ndarray
    hall_coefficient: np.ndarray
    resistivity: np.ndarray
    rms_percent: dict
    model_hall_coefficient: np.ndarray
    model_resistivity: np.ndarray
    curve_temperature: np.ndarray
    curve_hall_coefficient: np.ndarray
    curve_resistivity: np.ndarray

    def mobility_dict(self) -> dict:
        """The fit JSON's ``mobility`` block: one entry per carrier."""
        return {"electron": self.electron.to_dict(self.models),
                "hole": self.hole.to_dict(self.models)}

    def to_dict(self) -> dict:
        """The fit JSON's ``two_carrier`` block."""
        return {
            "models": list(self.models),
            "hall_factor": self.hall_factor_source,
            "hall_sign_reversal": None if self.reversal is None else self.reversal.to_dict(),
            "sigma_from": dict(self.sigma_from),
            "sigma_scale": {k: finite_or_none(v) for k, v in self.sigma_scale.items()},
            "chi2": finite_or_none(self.chi2),
            "n_points": self.n_points,
            "n_parameters": self.n_parameters,
            "rms_percent": {k: finite_or_none(v) for k, v in self.rms_percent.items()},
            "temperature_K": self.temperature.tolist(),
            "hall_coefficient_cm3_per_C": self.hall_coefficient.tolist(),
            "resistivity_ohm_cm": self.resistivity.tolist(),
            "model_hall_coefficient_cm3_per_C": self.model_hall_coefficient.tolist(),
            "model_resistivity_ohm_cm": self.model_resistivity.tolist(),
        }
