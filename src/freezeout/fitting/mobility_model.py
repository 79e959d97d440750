"""The Hall-mobility series of a joint fit: measured mu_H, the model of it, the result record.

The measured Hall mobility is the run's mobility column, else |R_H| / rho, else
1 / (q n_H rho) with the Hall density n_H = n / r_H of the run's constant Hall factor
(mu_H = |R_H| / rho = 1 / (q n_H rho); K. Seeger, Semiconductor Physics, ch. 4; from
memory). Its uncertainty is the mobility error column, else the relative errors of R_H (or
n) and rho in quadrature, else none (the joint fit then estimates it from the scatter).

The model: the majority carrier's drift mobility from lattice and impurity scattering
(:func:`freezeout.physics.majority_mobility.majority_mobility`) with the impurity and
screening densities of the fitted levels at each temperature, and

* ``hall_factor="scattering"`` (default): mu_H = r_H(T) mu, r_H = <tau^2>/<tau>^2 of the
  combined relaxation time, which varies with T as the mechanisms trade places;
* ``hall_factor="run"``: mu_H = r mu with the run's one constant r (its ``hall_factor``),
  for a user who has stated the Hall factor of the sample.

Project choice, no source: the scattering r_H is the default because the lattice and
impurity terms the fit already computes give it at no cost, and a constant r would bias
mu_300 and the impurity density by the 10-20 % that r_H moves over a run.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from freezeout.errors import InputError
from freezeout.fitting.result import Estimate
from freezeout.physics.constants import Q
from freezeout.physics.majority_mobility import majority_mobility
from freezeout.records.run import RunData

#: Ways to turn the drift mobility into the Hall mobility.
HALL_FACTOR_SOURCES = ("scattering", "run")

#: JSON key of each carrier in the FitResult ``mobility`` block.
CARRIER_KEYS = {"n": "electron", "p": "hole"}


def measured_hall_mobility(run: RunData) -> tuple[np.ndarray, np.ndarray | None, str]:
    """Hall mobility of the run's points, its uncertainty (or None) and where it came from.

    Returns
    -------
    tuple
        (mu_H [cm^2/(V s)], u(mu_H) [cm^2/(V s)] or None, source text).

    Raises
    ------
    InputError
        When the run has neither a mobility column nor a resistivity column.
    """
    if run.mobility is not None:
        mu = np.abs(np.asarray(run.mobility, dtype=float))
        err = None if run.mobility_err is None else np.asarray(run.mobility_err, dtype=float)
        return mu, err, "mobility column"
    if run.resistivity is None:
        raise InputError(f"{run.source}: a joint fit with mobility needs a mobility column "
                         "(mu_H) or a resistivity column (rho) beside the density", file=run.source)
    rho = np.asarray(run.resistivity, dtype=float)
    rel = [] if run.resistivity_err is None else [np.asarray(run.resistivity_err) / rho]
    if run.hall_coefficient is not None:
        rh = np.abs(np.asarray(run.hall_coefficient, dtype=float))
        mu = rh / rho  # mu_H = |R_H| / rho
        if run.hall_coefficient_err is not None:
            rel.append(np.asarray(run.hall_coefficient_err) / rh)
        elif run.resistivity_err is not None:
            rel = []  # only one of the two errors: no per-point uncertainty
        source = "|R_H| / rho"
    else:
        n_hall = np.asarray(run.density, dtype=float) / run.hall_factor
        mu = 1.0 / (Q * n_hall * rho)  # mu_H = 1 / (q n_H rho)
        if run.density_err is not None:
            rel.append(np.asarray(run.density_err) / np.asarray(run.density))
        elif run.resistivity_err is not None:
            rel = []
        source = "1 / (q n_H rho)"
    err = mu * np.sqrt(sum(r * r for r in rel)) if len(rel) == 2 else None
    return mu, err, source


def model_hall_mobility(model, values: dict, result, mechanisms, hall_factor_source: str,
                        run_hall_factor: float):
    """ln of the model Hall mobility at the model's temperatures, and the drift mobility.

    Parameters
    ----------
    model
        The :class:`freezeout.fitting.model.CarrierModel` of the density part.
    values
        Internal parameter values, with ``log10_mu300`` and ``lattice_exponent``.
    result
        The neutrality solution of ``values`` on the model's grid.
    mechanisms
        Checked mechanism names.
    hall_factor_source
        ``"scattering"`` or ``"run"``.
    run_hall_factor
        The run's constant Hall factor (used with ``"run"``). [1]

    Returns
    -------
    tuple
        (ln mu_H, CarrierMobility).
    """
    donors, acceptors = model.levels(values)
    cm = majority_mobility(model.material, model.carrier, donors, acceptors, result, mechanisms,
                           10.0 ** np.asarray(values["log10_mu300"]),
                           np.asarray(values["lattice_exponent"]))
    if hall_factor_source == "scattering":
        return np.log(cm.hall), cm
    return np.log(run_hall_factor * cm.drift), cm


@dataclass(frozen=True)
class MobilityFit:
    """The mobility part of a joint fit.

    Attributes
    ----------
    carrier
        ``"n"`` or ``"p"``.
    models
        Scattering mechanisms.
    lattice_mu300, lattice_exponent
        Fitted lattice mobility at 300 K [cm^2/(V s)] and exponent [1].
    hall_factor_source
        ``"scattering"`` or ``"run"``.
    measured_from
        Where the measured mu_H came from (mobility column, |R_H|/rho, 1/(q n_H rho)).
    sigma_ln_density, sigma_ln_mobility
        Standard uncertainty of ln n and ln mu_H per point: the median of the stated ones, or
        the one estimated from the series' scatter. [1]
    sigma_from
        For each series, ``"stated"`` or ``"scatter"``.
    n_density_points, n_mobility_points
        Points of each series in the fit.
    chi2
        Joint chi^2 at the solution.
    density_only_compensation
        The compensating concentration of the density-only fit, for comparison. [cm^-3]
    temperature, model_hall_mobility, model_hall_factor
        The mobility series' temperatures [K], the model mu_H [cm^2/(V s)] and r_H [1].
    """

    carrier: str
    models: tuple[str, ...]
    lattice_mu300: Estimate
    lattice_exponent: Estimate
    hall_factor_source: str
    measured_from: str
    sigma_ln_density: float
    sigma_ln_mobility: float
    sigma_from: dict
    n_density_points: int
    n_mobility_points: int
    chi2: float
    density_only_compensation: Estimate | None
    temperature: np.ndarray
    model_hall_mobility: np.ndarray
    model_hall_factor: np.ndarray

    def to_dict(self) -> dict:
        """JSON form (the value under ``mobility[<carrier>]`` of the fit JSON)."""
        return {
            "models": list(self.models),
            "lattice_mu300_cm2_per_Vs": self.lattice_mu300.to_dict(),
            "lattice_exponent": self.lattice_exponent.to_dict(),
            "hall_factor": self.hall_factor_source,
            "measured_from": self.measured_from,
            "sigma_ln_density": float(self.sigma_ln_density),
            "sigma_ln_mobility": float(self.sigma_ln_mobility),
            "sigma_from": dict(self.sigma_from),
            "n_density_points": self.n_density_points,
            "n_mobility_points": self.n_mobility_points,
            "joint_chi2": float(self.chi2),
            "density_only_compensation_cm3": (None if self.density_only_compensation is None
                                              else self.density_only_compensation.to_dict()),
            "temperature_K": self.temperature.tolist(),
            "model_hall_mobility_cm2_per_Vs": self.model_hall_mobility.tolist(),
            "model_hall_factor": self.model_hall_factor.tolist(),
        }
