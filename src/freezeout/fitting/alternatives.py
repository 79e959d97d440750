"""Distinct solutions of one fit: what tells two of them apart, and the ones that fit as well.

Two parameter sets are *distinct* when they lie in different compensation basins or assign
the levels differently (project choice, no source):

* their effective compensation ratios differ by more than a factor of 10, where the
  effective ratio is max(N_min, n_low) / N_maj with n_low the lowest majority density
  measured: compensation below the lowest measured density leaves the data unchanged, so
  every such value is one basin; or
* an energy, levels sorted by energy, differs by more than 20 %.

When standard errors are known, a difference also has to exceed twice its combined standard
error (an unknown error counts as none): points of one flat valley of chi^2 are not two
solutions.

A distinct solution whose chi^2 lies within :data:`DELTA_CHI2` of the best (in the units of
the stated uncertainties; of the fitted residual variance when there are none) is reported
beside it: the data cannot tell the two apart.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from freezeout.fitting.model import CarrierModel
from freezeout.fitting.parameters import to_public
from freezeout.numbers import finite_or_none

#: Largest chi^2 rise over the best fit at which a distinct solution is still reported
#: (about two standard deviations for one parameter; project choice, no source). [1]
DELTA_CHI2 = 4.0

#: Factor between effective compensation ratios that makes two basins (project choice). [1]
COMPENSATION_FACTOR = 10.0

#: Relative difference of a level energy that makes two level assignments (project choice).
ENERGY_FRACTION = 0.2


@dataclass(frozen=True)
class Signature:
    """What tells a solution apart: effective compensation and sorted level energies.

    Attributes
    ----------
    log10_compensation
        log10 of the effective compensation ratio (0 for an uncompensated model's floor). [1]
    energies
        Level energies, ascending. [eV]
    se_log10_compensation
        Standard error of log10 N_min, NaN when unknown. [1]
    se_energies
        Standard errors of ``energies`` (same order), NaN when unknown. [eV]
    """

    log10_compensation: float
    energies: tuple[float, ...]
    se_log10_compensation: float = math.nan
    se_energies: tuple[float, ...] = ()


def signature(model: CarrierModel, values: dict, low_density: float,
              stderr: dict | None = None) -> Signature:
    """The :class:`Signature` of internal parameter values.

    Parameters
    ----------
    model
        The fitted model.
    values
        Internal parameter values.
    low_density
        Lowest majority density measured among the points used. [cm^-3]
    stderr
        Standard errors by internal name (None when unknown).
    """
    ms = model.major_symbol
    n_maj = sum(10.0 ** values[k] for k in model.major_concentration_names)
    n_min = 10.0 ** values[model.compensation_name] if model.compensated else 0.0
    log_k = math.log10(max(n_min, low_density, 1e-300) / n_maj)
    names = [f"E_{ms}{i + 1}" for i in range(model.n_levels)]
    order = sorted(range(len(names)), key=lambda i: values[names[i]])
    se = stderr or {}

    def err(name: str) -> float:
        v = se.get(name)
        return math.nan if v is None or not np.isfinite(v) else float(v)

    if stderr is None:
        se_k = math.nan
    else:  # compensation below the lowest density is pinned to that floor
        se_k = err(model.compensation_name) if n_min > low_density else 0.0
    return Signature(log_k, tuple(float(values[names[i]]) for i in order), se_k,
                     tuple(err(names[i]) for i in order))


def _apart(diff: float, se_a: float, se_b: float, threshold: float) -> bool:
    """True when ``diff`` exceeds the threshold and twice its combined standard error."""
    if diff <= threshold:
        return False
    # an unknown error (the global stage, a singular covariance) counts as none
    combined = math.hypot(0.0 if math.isnan(se_a) else se_a, 0.0 if math.isnan(se_b) else se_b)
    return diff > 2.0 * combined


def basins_apart(a: Signature, b: Signature) -> bool:
    """True when the effective compensation ratios differ by more than COMPENSATION_FACTOR.

    Whatever their standard errors: the caller then asks whether chi^2 rises between them
    (:func:`freezeout.fitting.basin_barrier.profile_barrier`).
    """
    return abs(a.log10_compensation - b.log10_compensation) > math.log10(COMPENSATION_FACTOR)


def distinct(a: Signature, b: Signature) -> bool:
    """True when two solutions lie in different basins (see the module docstring)."""
    if _apart(abs(a.log10_compensation - b.log10_compensation), a.se_log10_compensation,
              b.se_log10_compensation, math.log10(COMPENSATION_FACTOR)):
        return True
    se_a = a.se_energies or (math.nan,) * len(a.energies)
    se_b = b.se_energies or (math.nan,) * len(b.energies)
    for ea, eb, sa, sb in zip(a.energies, b.energies, se_a, se_b, strict=True):
        if _apart(abs(ea - eb), sa, sb, ENERGY_FRACTION * max(abs(ea), abs(eb))):
            return True
    return False


@dataclass(frozen=True)
class Alternative:
    """A distinct solution that fits almost as well as the reported one.

    Attributes
    ----------
    parameters
        Fitted values, public names (concentrations in cm^-3, energies in eV).
    chi2
        Its chi^2. [1]
    delta_chi2
        Its chi^2 minus that of the reported fit. [1]
    compensation_ratio
        N_min / N_maj. [1]
    net_doping
        N_maj - N_min. [cm^-3]
    """

    parameters: dict
    chi2: float
    delta_chi2: float
    compensation_ratio: float
    net_doping: float

    def to_dict(self) -> dict:
        """JSON form: ``{parameters, chi2, delta_chi2, compensation_ratio, net_doping_cm3}``."""
        return {"parameters": {k: finite_or_none(v) for k, v in self.parameters.items()},
                "chi2": finite_or_none(self.chi2),
                "delta_chi2": finite_or_none(self.delta_chi2),
                "compensation_ratio": finite_or_none(self.compensation_ratio),
                "net_doping_cm3": finite_or_none(self.net_doping)}


def alternative(model: CarrierModel, values: dict, chi2: float, best_chi2: float
                ) -> Alternative:
    """The :class:`Alternative` of internal parameter values with their chi^2."""
    n_maj = sum(10.0 ** values[k] for k in model.major_concentration_names)
    n_min = 10.0 ** values[model.compensation_name] if model.compensated else 0.0
    public = dict(to_public(s.internal, float(values[s.internal])) for s in model.specs)
    return Alternative(public, float(chi2), float(chi2 - best_chi2), n_min / n_maj,
                       n_maj - n_min)


def alternatives_warning(model: CarrierModel, alternatives, best_chi2: float) -> str | None:
    """The plain-word warning that other solutions fit almost as well, or None."""
    if not alternatives:
        return None
    mn = model.minor_symbol
    parts = []
    for alt in alternatives:
        levels = ", ".join(f"{k} = {v:.3g}" for k, v in alt.parameters.items())
        parts.append(f"{levels} (compensation ratio {alt.compensation_ratio:.2g}, chi^2 "
                     f"{alt.chi2:.4g} against {best_chi2:.4g})")
    which = "another solution" if len(parts) == 1 else f"{len(parts)} other solutions"
    listed = "it is" if len(parts) == 1 else "they are"
    return (f"{which} ({'; '.join(parts)}) fits almost as well as the one reported (within "
            f"delta chi^2 = {DELTA_CHI2:g}): the data cannot tell them apart ({listed} "
            "listed under alternatives). Measure colder points (deeper freeze-out, where "
            "different compensation predicts different slopes) or the Hall mobility (its "
            "ionized-impurity scattering sees N_D + N_A, so it tells a heavily compensated "
            f"sample from a light one), or bound N_{mn} from independent knowledge")
