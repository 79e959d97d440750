"""The Jacobian of ln(majority density) by the fit's internal parameters, without extra solves.

From :func:`freezeout.physics.neutrality_sensitivity.sensitivities` (implicit
differentiation of the neutrality condition at the solution), mapped onto the internal names
of a :class:`freezeout.fitting.model.CarrierModel`: ``log10_N_*`` (d/d log10 N = ln 10
d/d ln N) and ``E_*`` (eV). One solve of a batch gives its Jacobian; a forward-difference
Jacobian needs a solve of (parameters + 1) times the batch.
"""

from __future__ import annotations

import math

import numpy as np

from freezeout.fitting.model import CarrierModel
from freezeout.physics.neutrality import BandState, NeutralityResult
from freezeout.physics.neutrality_sensitivity import sensitivities

_LN10 = math.log(10.0)


def majority_log_jacobian(model: CarrierModel, bands: BandState, values: dict,
                          result: NeutralityResult, names: list[str],
                          levels: tuple | None = None) -> np.ndarray:
    """d ln(majority density) / d theta for the internal ``names``, stacked on axis -2.

    Parameters
    ----------
    model
        The model (its level layout and statistics).
    bands
        The band state ``result`` was solved on.
    values
        The internal parameter values it was solved for (arrays broadcast as a batch).
    result
        The solution.
    names
        Internal names to differentiate by (free parameters, in order).
    levels
        ``model.levels(values)`` when the caller has them already (the solve's own).

    Returns
    -------
    numpy.ndarray
        Shape ``result.log_n.shape[:-1] + (len(names), n_temperatures)``.
    """
    donors, acceptors = model.levels(values) if levels is None else levels
    sens_d, sens_a = sensitivities(bands, donors, acceptors, result, model.statistics)
    major, minor = (sens_d, sens_a) if model.carrier == "n" else (sens_a, sens_d)
    n_type = model.carrier == "n"
    columns = {}
    for i, s in enumerate(major, start=1):
        d_c = s.d_log_n_d_log_conc if n_type else s.d_log_p_d_log_conc
        d_e = s.d_log_n_d_energy if n_type else s.d_log_p_d_energy
        columns[f"log10_N_{model.major_symbol}{i}"] = _LN10 * d_c
        columns[f"E_{model.major_symbol}{i}"] = d_e
    if model.compensated:
        s = minor[0]
        columns[model.compensation_name] = _LN10 * (s.d_log_n_d_log_conc if n_type
                                                     else s.d_log_p_d_log_conc)
    shape = np.shape(result.log_n)
    return np.stack([np.broadcast_to(columns[k], shape) for k in names], axis=-2)
