"""A wafer's measured quantities from the fit of its temperature run."""

from __future__ import annotations

from typing import TYPE_CHECKING

from freezeout.numbers import finite_or_none
from freezeout.records.measurement import (
    HallFactorUsed,
    Measurement,
    ResistivityPoint,
    signed_net_doping,
)

if TYPE_CHECKING:
    from freezeout.fitting.result import FitResult

#: How a fitted net doping was obtained, for the record.
FITTED_NET_DOPING = "fitted net doping |N_D - N_A|"


def _material_name(material) -> str | None:
    """The name of a :class:`~freezeout.physics.materials.Material` (or of its dict form)."""
    if material is None:
        return None
    return getattr(material, "name", None) or material["name"]


def _resistivity_points(data) -> tuple[ResistivityPoint, ...]:
    """The run's usable resistivity points, those that failed a severe check left out."""
    temps = data.temperature
    rhos = data.resistivity
    if temps is None or rhos is None:
        return ()
    errs = data.resistivity_err if data.resistivity_err is not None else [None] * len(rhos)
    severe = data.severe if data.severe is not None else [False] * len(rhos)
    points = []
    for t, r, e, bad in zip(temps, rhos, errs, severe, strict=False):
        p = None if bad else ResistivityPoint.usable(t, r, e)
        if p is not None:
            points.append(p)
    return tuple(points)


def measurement_from_fit(fit: FitResult) -> Measurement:
    """A wafer's measured quantities from the fit of its run.

    Parameters
    ----------
    fit
        The fit (:func:`freezeout.api.fit_file`): uses its material's name, ``carrier``,
        ``net_doping``, ``compensation_ratio``, ``warnings``, ``hall_factor``, the input name
        of its ``provenance`` and, from ``data``, each point's temperature, resistivity and
        its standard uncertainty (points that failed a severe data-quality check are left
        out).

    Returns
    -------
    Measurement
        Net doping as fitted, signed by the run's carrier type
        (:func:`~freezeout.records.measurement.signed_net_doping`: the fit gives the majority
        excess |N_D - N_A|, the measurement N_D - N_A, negative for a p-type run), and
        compensation as fitted; the fit's r_H with no uncertainty (the lot file's, when it
        states one, is put in by the caller).
    """
    comp = fit.compensation_ratio
    return Measurement(
        material=_material_name(fit.material),
        carrier=fit.carrier,
        net_doping=signed_net_doping(finite_or_none(fit.net_doping.value), fit.carrier),
        net_doping_stderr=finite_or_none(fit.net_doping.stderr),
        net_doping_method=FITTED_NET_DOPING,
        resistivity=_resistivity_points(fit.data),
        compensation_ratio=None if comp is None else finite_or_none(comp.value),
        hall_factor=HallFactorUsed(finite_or_none(fit.hall_factor), 0.0, "the fit"),
        warnings=tuple(str(w) for w in fit.warnings or ()),
        source=(fit.provenance or {}).get("input"),
    )
