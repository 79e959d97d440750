"""Fit results as documented, frozen objects that serialize to the JSON the CLI prints."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from freezeout.fitting.adequacy import model_inadequate, rms_percent, runs_z
from freezeout.numbers import finite_or_none
from freezeout.physics.materials import Material

SCHEMA_VERSION = 2


@dataclass(frozen=True)
class Estimate:
    """A fitted or derived quantity.

    Attributes
    ----------
    value
        Best estimate (unit of the quantity).
    stderr
        Standard error, or NaN when the data do not determine it.
    ci95
        95 % interval (lower, upper); asymmetric for quantities fitted in log space.
    method
        How ``ci95`` was computed: ``"wald-log"`` (value +- t se in log space),
        ``"wald-linear"`` (value +- t se), ``"profile"`` (profile likelihood, both ends set by
        the data), ``"profile-one-sided"`` (one end is a limit of the model's range, e.g. the
        floor of a concentration or the band gap, not a limit set by the data),
        ``"profile-unbounded"`` (both ends are), ``"plateau"`` (net doping from the
        saturation plateau), ``"fixed"`` (a held value: no interval) or ``"unspecified"``.
        See :mod:`freezeout.fitting.intervals`.
    """

    value: float
    stderr: float
    ci95: tuple[float, float]
    method: str = "unspecified"

    def to_dict(self) -> dict:
        """JSON form: ``{"value", "stderr", "ci95": [lo, hi], "method"}``.

        None where undetermined; a held value (method ``"fixed"``) has no ``"method"``.
        """
        d = {"value": finite_or_none(self.value), "stderr": finite_or_none(self.stderr),
             "ci95": [finite_or_none(self.ci95[0]), finite_or_none(self.ci95[1])]}
        if self.method != "fixed":
            d["method"] = self.method
        return d


@dataclass(frozen=True)
class LevelEstimate:
    """One fitted dopant level.

    Attributes
    ----------
    kind
        ``"donor"`` or ``"acceptor"``.
    concentration
        Concentration. [cm^-3]
    energy
        Ionization energy from its band edge, or None for a fully ionized species. [eV]
    degeneracy
        Ground-state degeneracy used (None for a fully ionized species). [1]
    name
        Parameter name stem, e.g. ``"D1"`` or ``"A"``.
    excited, lowering
        Excited states ``(E_0 - E_i [eV], g_i)`` and energy-versus-density model
        (:mod:`freezeout.physics.level_energy`) the fit used for the level (``energy`` is
        then E_0 of an isolated centre); in the JSON only when set.
    """

    kind: str
    concentration: Estimate
    energy: Estimate | None
    degeneracy: float | None
    name: str
    excited: tuple = ()
    lowering: object | None = None

    def to_dict(self) -> dict:
        """JSON form."""
        out = {"kind": self.kind, "name": self.name,
               "concentration_cm3": self.concentration.to_dict(),
               "energy_eV": None if self.energy is None else self.energy.to_dict(),
               "degeneracy": self.degeneracy}
        if self.excited:
            out["excited_states"] = [{"splitting_eV": d, "degeneracy": g}
                                     for d, g in self.excited]
        if self.lowering is not None:
            out["energy_vs_density"] = self.lowering.to_dict()
        return out


@dataclass(frozen=True)
class FitData:
    """The points of a fitted run, the model at them, and which points the fit used.

    A point is left out of the fit when its Hall sign differs from the run's carrier type
    (:attr:`mixed`) or when it failed a severe data-quality check (:attr:`flagged`, unless
    the fit was told to include those).

    Attributes
    ----------
    carrier
        Majority carrier of the run, ``"n"`` or ``"p"`` (not serialized: the fit's own).
    temperature
        Temperatures. [K]
    density
        Measured majority-carrier density. [cm^-3]
    density_err
        Its point-to-point standard uncertainty, or None. [cm^-3]
    model_density
        The fitted model at every point, used or not. [cm^-3]
    used
        True for the points the fit used.
    point_carrier
        Carrier type per point from the Hall sign.
    flags
        Data-quality finding codes per point (empty string when clean).
    severe
        True for points that failed a severe data-quality check.
    resistivity, resistivity_err
        Per point, or None (NaN where a point has none). [ohm cm]
    mobility, mobility_err
        Hall mobility per point, or None. [cm^2/(V s)]
    hall_coefficient
        Hall coefficient per point, or None. [cm^3/C]
    findings
        Data-quality findings of the reduction (objects with ``to_dict()``).
    scale_uncertainty
        Relative uncertainty common to every density, added to the concentrations. [1]
    """

    carrier: str
    temperature: np.ndarray
    density: np.ndarray
    density_err: np.ndarray | None
    model_density: np.ndarray
    used: np.ndarray
    point_carrier: tuple[str, ...]
    flags: tuple[str, ...]
    severe: np.ndarray
    resistivity: np.ndarray | None = None
    resistivity_err: np.ndarray | None = None
    mobility: np.ndarray | None = None
    mobility_err: np.ndarray | None = None
    hall_coefficient: np.ndarray | None = None
    findings: tuple = ()
    scale_uncertainty: float = 0.0

    @property
    def mixed(self) -> np.ndarray:
        """True where the point's Hall sign differs from the run's carrier type."""
        return np.array([c != self.carrier for c in self.point_carrier], dtype=bool)

    @property
    def flagged(self) -> np.ndarray:
        """True for points left out for a failed quality check (not for their Hall sign)."""
        return ~self.used & ~self.mixed

    def to_dict(self) -> dict:
        """JSON form (the ``data`` member of the fit document), lists in canonical units."""
        return {
            "temperature_K": self.temperature.tolist(),
            "density_cm3": self.density.tolist(),
            "density_err_cm3": None if self.density_err is None else self.density_err.tolist(),
            "model_density_cm3": self.model_density.tolist(),
            "used": self.used.tolist(),
            "point_carrier": list(self.point_carrier),
            "flags": list(self.flags),
            "severe": [bool(x) for x in self.severe],
            "resistivity_ohm_cm": _list_or_none(self.resistivity),
            "resistivity_err_ohm_cm": _list_or_none(self.resistivity_err),
            "mobility_cm2_per_Vs": _list_or_none(self.mobility),
            "mobility_err_cm2_per_Vs": _list_or_none(self.mobility_err),
            "hall_coefficient_cm3_per_C": _list_or_none(self.hall_coefficient),
            "findings": [f.to_dict() for f in self.findings],
            "scale_uncertainty": self.scale_uncertainty,
        }


def _list_or_none(a) -> list | None:
    """A list with None for every non-finite value, or None for no array."""
    if a is None:
        return None
    return [None if not np.isfinite(x) else float(x) for x in a]


@dataclass(frozen=True)
class FitResult:
    """Outcome of fitting a run to the carrier model.

    Attributes
    ----------
    carrier
        Majority carrier, ``"n"`` or ``"p"``.
    levels
        Fitted levels, majority-type levels first, then the compensating species.
    compensation_ratio
        N_minority / N_majority (N_A/N_D for an n-type run). [1]
    net_doping
        |N_D - N_A| (majority minus minority). [cm^-3]
    chi2, reduced_chi2, aic, bic
        Fit statistics of the residuals in ln(density) (weighted by ln-uncertainties when
        the run gives them). With stated uncertainties AIC = chi^2 + 2k and BIC = chi^2 +
        k ln N; without, N ln(chi^2/N) + 2k and N ln(chi^2/N) + k ln N.
    n_points, n_parameters
        Points used and free parameters.
    weighted
        True when per-point uncertainties weighted the fit (errors then not rescaled).
    parameter_names
        Public names of the free parameters, order of ``correlation``.
    correlation
        Correlation matrix of the free parameters (NaN when not estimated).
    warnings
        Plain-language statements of what the data cannot pin.
    hall_factor
        Hall scattering factor used. [1]
    statistics_model
        ``"fermi-dirac"`` or ``"boltzmann"``.
    material
        The host material fitted with (parameters and sources).
    provenance
        Input name, sha256, metadata, tool version, date, options (a JSON-like dict, as
        given by the caller).
    data
        Points of the run, the model at them, and which points were used.
    fixed
        Parameters held fixed, public name -> value; in the JSON each held value (and a
        derived one that depends on no free parameter) reads ``"fixed": true`` with no
        standard error or interval.
    optimizer_message
        Message of the local optimizer for the retained start.
    error_inflation
        Factor applied to the standard errors of a weighted fit, sqrt(reduced chi^2) when
        that exceeds 1, else 1. [1]
    alternatives
        Distinct solutions (another compensation basin or level assignment) within delta
        chi^2 = 4 of this one, best first
        (:class:`freezeout.fitting.alternatives.Alternative`); empty when the data single
        out one.
    raw
        The local fit of the retained start (:class:`freezeout.fitting.local_fit.LocalFit`;
        not serialized).
    mobility
        The mobility part of a joint density and mobility fit
        (:class:`freezeout.fitting.mobility_model.MobilityFit`), or None for a density-only
        fit; in the JSON under ``mobility`` keyed by carrier (``electron`` / ``hole``).
    two_carrier
        The electron-and-hole part of a fit of R_H(T) and rho(T)
        (:class:`freezeout.fitting.two_carrier_result.TwoCarrierFit`), or None; in the JSON
        its carriers are the ``mobility`` block, its reversal ``hall_sign_reversal_K`` and
        the rest ``two_carrier``.
    model_selection
        How the level count was chosen when it was asked for as ``"auto"``
        (:class:`freezeout.fitting.model_selection.ModelSelection`: every candidate's
        statistics, the refused ones with their reason, the rule), or None when the caller
        gave the counts; in the JSON under ``model_selection``.
    spectroscopy
        The level spectrum of the run's density without a fit
        (:class:`freezeout.fitting.spectroscopy.LevelSpectrum`), or None; in the JSON under
        ``spectroscopy``.
    posterior
        The sampled posterior of the density fit's parameters
        (:class:`freezeout.fitting.posterior.Posterior`: medians, 95 % credible intervals,
        the chain's statistics), or None; in the JSON under ``posterior``.
    """

    carrier: str
    levels: tuple[LevelEstimate, ...]
    compensation_ratio: Estimate
    net_doping: Estimate
    chi2: float
    reduced_chi2: float
    aic: float
    bic: float
    n_points: int
    n_parameters: int
    weighted: bool
    parameter_names: tuple[str, ...]
    correlation: np.ndarray
    warnings: tuple[str, ...]
    hall_factor: float
    statistics_model: str
    material: Material
    provenance: dict
    data: FitData
    fixed: dict = field(default_factory=dict)
    optimizer_message: str = ""
    error_inflation: float = 1.0
    alternatives: tuple = ()
    raw: Any = field(default=None, repr=False, compare=False)
    mobility: Any = None
    two_carrier: Any = None
    model_selection: Any = None
    spectroscopy: Any = None
    posterior: Any = None

    def _ln_residual(self) -> np.ndarray:
        """ln(model) - ln(measured) at the points used, in temperature order."""
        used = np.asarray(self.data.used, dtype=bool)
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.log(self.data.model_density[used] / self.data.density[used])

    @property
    def rms_residual_percent(self) -> float:
        """rms of ln(model/measured) over the points used, times 100. [%]"""
        return rms_percent(self._ln_residual())

    @property
    def model_adequate(self) -> bool:
        """False when the misfit is gross and systematic: the numbers are not measurements.

        The rule is :func:`freezeout.fitting.adequacy.model_inadequate`.
        """
        ln = self._ln_residual()
        return not model_inadequate(self.weighted, self.reduced_chi2, rms_percent(ln),
                                    runs_z(ln))

    def _fixed_marked(self) -> tuple[list[dict], dict, dict]:
        """Levels, net doping and compensation ratio as JSON, held values marked fixed.

        A held value, or a derived one that depends on no free parameter, has no standard
        error or interval: ``{"value", "stderr": null, "ci95": [null, null], "fixed": true}``.
        """
        def held(d: dict) -> dict:
            return {**d, "stderr": None, "ci95": [None, None], "fixed": True}

        levels = []
        for lv in self.levels:
            d = lv.to_dict()
            if f"N_{lv.name}" in self.fixed:
                d["concentration_cm3"] = held(d["concentration_cm3"])
            if d["energy_eV"] is not None and f"E_{lv.name}" in self.fixed:
                d["energy_eV"] = held(d["energy_eV"])
            levels.append(d)
        concentrations = [f"N_{lv.name}" for lv in self.levels]
        all_held = all(n in self.fixed for n in concentrations)
        # without a compensating species the model holds the ratio at 0
        uncompensated = all(lv.energy is not None for lv in self.levels)
        net = self.net_doping.to_dict()
        comp = self.compensation_ratio.to_dict()
        if all_held:
            net = held(net)
        if all_held or uncompensated:
            comp = held(comp)
        return levels, net, comp

    def to_dict(self) -> dict:
        """The JSON document printed by ``freezeout fit --json``."""
        corr = [[finite_or_none(x) for x in row] for row in np.asarray(self.correlation)]
        levels, net, comp = self._fixed_marked()
        out = {
            "schema_version": SCHEMA_VERSION,
            "carrier": self.carrier,
            "levels": levels,
            "compensation_ratio": comp,
            "net_doping_cm3": net,
            "statistics": {"chi2": finite_or_none(self.chi2),
                           "reduced_chi2": finite_or_none(self.reduced_chi2),
                           "aic": finite_or_none(self.aic), "bic": finite_or_none(self.bic),
                           "n_points": self.n_points, "n_parameters": self.n_parameters,
                           "weighted": self.weighted, "model": self.statistics_model,
                           "error_inflation": finite_or_none(self.error_inflation),
                           "rms_residual_percent": finite_or_none(self.rms_residual_percent),
                           "model_adequate": self.model_adequate},
            "correlation": {"parameters": list(self.parameter_names), "matrix": corr},
            "fixed": {k: finite_or_none(v) for k, v in self.fixed.items()},
            "warnings": list(self.warnings),
            "alternatives": [alt.to_dict() for alt in self.alternatives],
            "hall_factor": self.hall_factor,
            "material": self.material.to_dict(),
            "provenance": self.provenance,
            "data": self.data.to_dict(),
            "optimizer_message": self.optimizer_message,
        }
        if self.mobility is not None:
            carrier = {"n": "electron", "p": "hole"}[self.mobility.carrier]
            out["mobility"] = {carrier: self.mobility.to_dict()}
        if self.two_carrier is not None:
            out["mobility"] = self.two_carrier.mobility_dict()
            out["hall_sign_reversal_K"] = finite_or_none(self.two_carrier.reversal_K)
            out["two_carrier"] = self.two_carrier.to_dict()
        if self.model_selection is not None:
            out["model_selection"] = self.model_selection.to_dict()
        if self.spectroscopy is not None:
            out["spectroscopy"] = self.spectroscopy.to_dict()
        if self.posterior is not None:
            out["posterior"] = self.posterior.to_dict()
        return out
