"""The Hall-mobility series of a joint fit: measured mu_H, the model of it, the result record.

The measured Hall mobility is the run's mobility column, else |R_H| / rho, else
1 / (q n_H rho) with the Hall density n_H = n / r_H of the run's constant Hall factor
(mu_H = |R_H| / rho = 1 / (q n_H rho); K. Seeger, Semiconductor Physics, ch. 4; from
memory). Its uncertainty is the mobility error column, else the relative errors of R_H (or
n) and rho in quadrature, else none (the joint fit then estimates it from the scatter).

The model: the majority carrier's drift mobility from lattice and impurity scattering
(:func:`freezeout.physics.majority_mobility.majority_mobility`) with the impurity and
screening densities of the fitted levels at each temperature, and one Hall factor applied to
both series:

* ``hall_factor="scattering"``: r_H(T) = <tau^2>/<tau>^2 of the combined relaxation time,
  which varies with T as the mechanisms trade places. mu_H = r_H(T) mu, and the run's
  density column, computed with the run's one constant r_run as r_run / (q |R_H|), is
  modelled as r_run n / r_H(T) (ln model = ln n + ln r_run - ln r_H(T));
* ``hall_factor="constant"``: the run's one constant r (its ``hall_factor``, stated in the
  file or given by the user) for both: the density column is n itself (it already carries
  r) and mu_H = r mu.

Which one applies by default is decided by the API
(:func:`freezeout.api.fits.fit_run_record`): a stated constant r is kept, otherwise the
scattering r_H(T) (project choice, no source: a constant r would bias mu_300 and the
impurity density by the 10-20 % that r_H moves over a run, and the lattice and impurity
terms the fit already computes give r_H(T) at no cost).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from freezeout.errors import InputError
from freezeout.fitting.result import Estimate
from freezeout.physics.constants import Q
from freezeout.physics.majority_mobility import majority_mobility
from freezeout.records.run import RunData

#: Hall factors of a joint fit: r_H(T) from the scattering, or the run's constant r.
HALL_FACTOR_SOURCES = ("scattering", "constant")

#: Older spelling of ``"constant"``, still read.
_SOURCE_ALIASES = {"run": "constant"}

#: The ionized-impurity mechanisms (one at a time), whose mobility is CarrierMobility.ionized.
_IONIZED = ("brooks-herring", "conwell-weisskopf")

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
        raise InputError("a joint fit with mobility needs a mobility column "
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
        ``"scattering"`` or ``"constant"``.
    run_hall_factor
        The run's constant Hall factor (used with ``"constant"``). [1]

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


def check_hall_factor_source(source: str) -> str:
    """``"scattering"`` or ``"constant"`` (``"run"`` read as ``"constant"``), else InputError."""
    key = _SOURCE_ALIASES.get(str(source).strip().lower(), str(source).strip().lower())
    if key not in HALL_FACTOR_SOURCES:
        raise InputError(f"unknown hall factor source {source!r}; valid: "
                         + ", ".join(HALL_FACTOR_SOURCES))
    return key


def model_series(model, values: dict, result, mechanisms, hall_factor_source: str,
                 run_hall_factor: float):
    """ln of the model of the measured density and of mu_H, and the CarrierMobility.

    With ``"scattering"`` the measured density r_run / (q |R_H|) is modelled as
    r_run n / r_H(T) and mu_H = r_H(T) mu; with ``"constant"`` the density is n and
    mu_H = r mu (module docstring). Shapes broadcast as the solution's and the values'.

    Returns
    -------
    tuple
        (ln density model, ln mu_H, CarrierMobility).
    """
    ln_mu, cm = model_hall_mobility(model, values, result, mechanisms, hall_factor_source,
                                    run_hall_factor)
    ln_n = model.majority_log(result)
    if hall_factor_source == "scattering":
        ln_n = ln_n + (math.log(run_hall_factor) - np.log(cm.hall_factor))
    return ln_n, ln_mu, cm


def applied_hall_factor(cm, hall_factor_source: str, run_hall_factor: float) -> np.ndarray:
    """The Hall factor the model applied at each point: r_H(T), or the run's constant. [1]"""
    if hall_factor_source == "scattering":
        return np.asarray(cm.hall_factor, dtype=float)
    return np.full(np.shape(cm.drift), float(run_hall_factor))


def mechanism_mobilities(cm, mechanisms) -> dict[str, np.ndarray]:
    """Each chosen mechanism's own mobility (mechanism name -> array). [cm^2/(V s)]

    ``lattice`` is CarrierMobility.lattice, ``brooks-herring`` or ``conwell-weisskopf``
    its ``ionized``, ``neutral`` its ``neutral`` (inf where the mechanism has no scatterers).
    """
    pick = {"lattice": cm.lattice, "neutral": cm.neutral}
    return {m: np.asarray(cm.ionized if m in _IONIZED else pick[m], dtype=float)
            for m in mechanisms}


def _finite_list(values) -> list:
    """A list with non-finite values as None (strict JSON)."""
    return [float(v) if math.isfinite(v) else None for v in np.asarray(values, dtype=float)]


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
        ``"scattering"`` (r_H(T) for both series) or ``"constant"`` (the run's r).
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
        The mobility series' temperatures [K], the model mu_H [cm^2/(V s)] and the Hall
        factor applied there (to the mobility and to the density alike) [1].
    run_hall_factor
        The constant r the run's density column was computed with (r_run / (q |R_H|)); with
        ``"constant"`` also the one applied to the mobility. [1]
    point_hall_factor
        The Hall factor applied to the density model at every point of the run (fit data
        order, used or not). [1]
    curve_temperature, curve_hall_mobility, curve_hall_factor
        A grid over the run's temperatures [K], the model mu_H [cm^2/(V s)] and the applied
        Hall factor on it [1].
    mechanism_mobility
        Each mechanism's own mobility on the grid (name -> array; inf where it has no
        scatterers), :func:`mechanism_mobilities`. [cm^2/(V s)]
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
    run_hall_factor: float = 1.0
    point_hall_factor: np.ndarray | None = None
    curve_temperature: np.ndarray | None = None
    curve_hall_mobility: np.ndarray | None = None
    curve_hall_factor: np.ndarray | None = None
    mechanism_mobility: dict = field(default_factory=dict)

    def to_dict(self) -> dict:
        """JSON form (the value under ``mobility[<carrier>]`` of the fit JSON)."""
        return {
            "models": list(self.models),
            "lattice_mu300_cm2_per_Vs": self.lattice_mu300.to_dict(),
            "lattice_exponent": self.lattice_exponent.to_dict(),
            "hall_factor": self.hall_factor_source,
            "run_hall_factor": float(self.run_hall_factor),
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
            "point_hall_factor": (None if self.point_hall_factor is None
                                  else self.point_hall_factor.tolist()),
            "curve_temperature_K": _list(self.curve_temperature),
            "curve_hall_mobility_cm2_per_Vs": _list(self.curve_hall_mobility),
            "curve_hall_factor": _list(self.curve_hall_factor),
            "mechanism_mobility_cm2_per_Vs": {k: _finite_list(v) for k, v
                                              in self.mechanism_mobility.items()},
        }


def _list(values) -> list | None:
    return None if values is None else _finite_list(values)
