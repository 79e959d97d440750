"""Fit parameters: public names and units to internal ones, holds, bounds, local-fit Parameters.

Public names carry concentrations in cm^-3 and energies in eV (``N_D1``, ``E_D1``, ``N_A``);
internally concentrations are fitted as log10 (``log10_N_D1``).
"""

from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np

from freezeout.errors import InputError
from freezeout.fitting.local_fit import Param, Params
from freezeout.fitting.model import CarrierModel

#: Range of every fitted concentration, as log10 of cm^-3.
LOG10_CONCENTRATION_BOUNDS = (8.0, 22.0)


def to_internal(name: str, value: float, band_gap: float = math.inf) -> tuple[str, float]:
    """Map a public parameter value (N in cm^-3, E in eV) to its internal name and value.

    Concentrations must lie within the fit's range (1e8 to 1e22 cm^-3) and energies between
    0 and the band gap (at the lowest temperature of the run); anything else is bad input.
    """
    if name.startswith("N_"):
        lo, hi = (10.0**b for b in LOG10_CONCENTRATION_BOUNDS)
        if not (np.isfinite(value) and lo <= value <= hi):
            raise InputError(f"{name} = {value!r} cm^-3 is outside the range the model covers "
                             f"({lo:g} to {hi:g} cm^-3)")
        return f"log10_{name}", math.log10(value)
    if name.startswith("E_"):
        if not (np.isfinite(value) and 0 < value < band_gap):
            raise InputError(f"{name} = {value!r} eV must be above 0 and below the band gap "
                             f"({band_gap:.4g} eV)")
        return name, float(value)
    raise InputError(f"unknown parameter {name!r}")


def pow10(x: float) -> float:
    """10**x of an internal log10 value, x clipped to +-300 (no overflow to inf)."""
    return 10.0 ** float(np.clip(x, -300.0, 300.0))


def to_public(internal: str, value: float) -> tuple[str, float]:
    """The inverse of :func:`to_internal`: public name and value (cm^-3 or eV)."""
    if internal.startswith("log10_"):
        return internal.removeprefix("log10_"), 10.0**value
    return internal, value


def internal_options(model: CarrierModel, fix: Mapping[str, float] | None,
                     bounds: Mapping[str, tuple[float, float]] | None, band_gap: float
                     ) -> tuple[dict[str, float], dict[str, tuple[float, float]]]:
    """Held values and bounds of the caller, in internal names, checked against the model.

    Parameters
    ----------
    model
        The model whose parameters they name.
    fix
        Public name -> value to hold.
    bounds
        Public name -> (low, high).
    band_gap
        Band gap at the lowest temperature, the ceiling of every energy. [eV]

    Raises
    ------
    InputError
        A value out of range, a low bound not below its high one, or a name the model
        does not have.
    """
    internal_fix = dict(to_internal(k, v, band_gap) for k, v in (fix or {}).items())
    internal_bounds = {}
    for k, (lo, hi) in (bounds or {}).items():
        ik, ilo = to_internal(k, lo, band_gap)
        _, ihi = to_internal(k, hi, band_gap)
        if not ilo < ihi:
            raise InputError(f"bound of {k}: low {lo!r} is not below high {hi!r}")
        internal_bounds[ik] = (ilo, ihi)
    known = {s.internal for s in model.specs}
    for ik in (*internal_fix, *internal_bounds):
        if ik not in known:
            public = ik.removeprefix("log10_")
            raise InputError(f"unknown parameter {public!r}; this model has "
                             f"{', '.join(model.names)}")
    return internal_fix, internal_bounds


def fit_parameters(model: CarrierModel, start: dict, fixed: Mapping[str, float],
                   bounds: Mapping[str, tuple[float, float]]) -> Params:
    """Parameters of a local fit of the model from a start, with holds and bounds.

    Energies are bounded by 1e-4 eV and 0.9 of the gap at the lowest temperature, the
    concentrations by :data:`LOG10_CONCENTRATION_BOUNDS`, unless ``bounds`` says otherwise;
    the start is moved just inside its bounds.
    """
    params = Params()
    gap = float(model.material.band_gap(float(np.min(model.temperature))))
    for spec in model.specs:
        if spec.quantity == "concentration":
            lo, hi = LOG10_CONCENTRATION_BOUNDS
        else:
            lo, hi = 1e-4, 0.9 * gap
        if spec.internal in bounds:
            lo, hi = bounds[spec.internal]
        value = float(np.clip(start[spec.internal], lo + 1e-9 * abs(lo or 1),
                              hi - 1e-9 * abs(hi or 1)))
        if spec.internal in fixed:
            params[spec.internal] = Param(float(fixed[spec.internal]), vary=False)
        else:
            params[spec.internal] = Param(value, lo, hi)
    return params
