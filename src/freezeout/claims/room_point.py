"""The measured quantities of a single room-temperature result.

With every dopant ionized (the saturation range) and non-degenerate statistics, charge
neutrality n + N_A = p + N_D and n p = n_i^2 give the net doping from the majority density m
as ``|N_D - N_A| = m - n_i^2 / m``, with n_i(T) of the material. Whether the point is in
saturation is checked with the tool's own model (:mod:`freezeout.claims.single_point`).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from pathlib import Path

from freezeout.claims.single_point import check_single_point
from freezeout.errors import InputError
from freezeout.physics.materials import Material
from freezeout.records.measurement import (
    HallFactorUsed,
    Measurement,
    ResistivityPoint,
    signed_net_doping,
)
from freezeout.records.run import RunData

#: A run with a single point is read as a room-temperature result when its temperature lies
#: in this range; common practice for "room temperature", no source. [K]
ROOM_TEMPERATURE_RANGE_K = (250.0, 350.0)


def room_point_measurement(run: RunData, material: Material, *,
                           dopants: Sequence[str | None] = (None,),
                           hall_factor: HallFactorUsed | None = None) -> Measurement:
    """The measured quantities of a single room-temperature result.

    The net doping ``m - n_i^2 / m`` is reported signed by the one rule
    :func:`~freezeout.records.measurement.signed_net_doping` (negative for a p-type point). Its
    standard uncertainty is ``hypot(u_m, s m) (1 + n_i^2 / m^2)``, with u_m the file's
    point-to-point density uncertainty and s the relative uncertainty common to every point
    that the reader split out of it (``RunData.scale_uncertainty``, the sample thickness of a
    reduced run); no density uncertainty given: unknown. The Hall factor's uncertainty is
    added when the claim is evaluated (:mod:`freezeout.claims.budget`). A resistivity column
    with its uncertainty is kept as the measured resistivity at that temperature (the readers
    keep the thickness part inside ``resistivity_err``; nothing is split out of it).

    Whether the point is in saturation is checked for each dopant in ``dopants``
    (:func:`freezeout.claims.single_point.check_single_point`); the result goes under
    ``ionization``, and a failed check makes the net-doping claims that depend on it
    indeterminate.

    Parameters
    ----------
    run
        The run with exactly one point.
    material
        The host (for n_i and the ionization).
    dopants
        The dopants the lot's net-doping claims are taken to come from (None: none named;
        see :func:`freezeout.claims.dopants.net_doping_dopants`).
    hall_factor
        The r_H the density was taken with; None: 1, with no uncertainty.

    Returns
    -------
    Measurement
        With the point's note (how the net doping was taken, and the Hall factor) and the
        run's notes as warnings.

    Raises
    ------
    InputError
        If the point is not at room temperature (:data:`ROOM_TEMPERATURE_RANGE_K`), failed a
        severe data-quality check, or its density does not exceed n_i (then it is not a
        majority-carrier density).
    """
    t = float(run.temperature[0])
    lo, hi = ROOM_TEMPERATURE_RANGE_K
    name = Path(run.source).name
    if not lo <= t <= hi:
        raise InputError(f"a single point at {t:g} K is not a room-temperature result "
                         f"({lo:g} to {hi:g} K); net doping needs a temperature run there",
                         file=name)
    if run.severe is not None and bool(run.severe[0]):
        raise InputError("the only point failed a severe data-quality check", file=name)
    m = float(run.density[0])
    ni = float(material.intrinsic_density(t))
    if not m > ni:
        raise InputError(f"the density {m:.4g} cm^-3 does not exceed the intrinsic density "
                         f"{ni:.3g} cm^-3 of {material.name} at {t:g} K", file=name)
    net = m - ni * ni / m
    u_m = None if run.density_err is None else float(run.density_err[0])
    if u_m is not None and not math.isfinite(u_m):
        u_m = None
    scale = float(run.scale_uncertainty)
    u_net = None if u_m is None else math.hypot(u_m, scale * m) * (1.0 + (ni / m) ** 2)
    carrier_word = "n" if run.carrier == "n" else "p"
    rho = None
    if run.resistivity is not None:
        err = None if run.resistivity_err is None else run.resistivity_err[0]
        rho = ResistivityPoint.usable(t, run.resistivity[0], err)
    ionization = {d or "": check_single_point(material, d, run.carrier, m, t)
                  for d in dict.fromkeys(dopants)}
    hall = hall_factor if hall_factor is not None else HallFactorUsed(1.0, 0.0, "default")
    note = (f"single room-temperature result: net doping |N_D - N_A| taken from the majority "
            f"carrier density {carrier_word} at {t:g} K as {carrier_word} - n_i^2/"
            f"{carrier_word} (n_i = {ni:.3g} cm^-3), which holds in the saturation range where "
            "every dopant is ionized; the ionization of the claimed dopant at the measured "
            f"density is checked with the tool's model. Hall factor r_H = {hall.value:g} "
            f"({hall.source}).")
    if scale > 0 and u_m is not None:
        note += (f" The density's uncertainty includes the {100 * scale:.3g} % common to every "
                 "point (the sample thickness), in quadrature.")
    return Measurement(
        material=material.name,
        carrier=run.carrier,
        net_doping=signed_net_doping(net, run.carrier),
        net_doping_stderr=u_net,
        net_doping_method=f"majority carrier density at {t:g} K (single room-temperature "
                          "result)",
        resistivity=() if rho is None else (rho,),
        compensation_ratio=None,
        hall_factor=hall,
        ionization=ionization,
        warnings=(note, *run.notes),
        source=name,
    )
