"""The reduced-run CSV layout, shared by its writer and its reader.

The columns in order, their names, and the mark of a severe finding in the ``flags`` column.
"""

from __future__ import annotations

import numpy as np

from freezeout.records.readings import ReducedRun

__all__ = ["SEVERE_MARK", "reduced_columns", "severe_from_flags"]

#: Mark appended to the code of a severe finding in the reduced-CSV ``flags`` column.
SEVERE_MARK = "!"


def reduced_columns(run: ReducedRun) -> dict[str, list]:
    """The reduced run as named columns, pandas-free, in the reduced-CSV layout.

    Parameters
    ----------
    run
        A reduced run.

    Returns
    -------
    dict
        Column header -> list of values, in the order ``T [K]``, ``T_err [K]`` (the set
        point's spread over sqrt(12)), ``rho [ohm cm]``, ``rho_err [ohm cm]``,
        ``R_H [cm^3/C]``, ``R_H_err [cm^3/C]``, ``n [cm^-3]`` or ``p [cm^-3]`` (the run's
        carrier type, :attr:`ReducedRun.majority_carrier`; unsigned), its ``_err``,
        ``mu_H [cm^2/(V s)]``, ``mu_H_err [cm^2/(V s)]``, ``flags`` (codes joined by ``;``,
        the codes of severe findings followed by :data:`SEVERE_MARK`).
    """
    c = run.majority_carrier
    flags = []
    for i in range(run.n_points):
        codes = {}
        for f in run.findings_at(i):
            mark = SEVERE_MARK if f.severity == "severe" else ""
            codes[f.code] = codes.get(f.code, "") or mark
        flags.append(";".join(code + mark for code, mark in codes.items()))
    return {
        "T [K]": run.temperature.tolist(),
        "T_err [K]": run.temperature_err.tolist(),
        "rho [ohm cm]": run.resistivity.tolist(),
        "rho_err [ohm cm]": run.resistivity_err.tolist(),
        "R_H [cm^3/C]": run.hall_coefficient.tolist(),
        "R_H_err [cm^3/C]": run.hall_coefficient_err.tolist(),
        f"{c} [cm^-3]": run.density.tolist(),
        f"{c}_err [cm^-3]": run.density_err.tolist(),
        "mu_H [cm^2/(V s)]": run.mobility.tolist(),
        "mu_H_err [cm^2/(V s)]": run.mobility_err.tolist(),
        "flags": flags,
    }


def severe_from_flags(flags) -> np.ndarray:
    """Which points of a reduced CSV failed a severe check, from its ``flags`` column.

    Parameters
    ----------
    flags
        The ``flags`` strings, one per point (codes joined by ``;``, severe ones ending in
        :data:`SEVERE_MARK`).

    Returns
    -------
    ndarray of bool
        True where any code carries the severe mark.
    """
    return np.array([any(code.strip().endswith(SEVERE_MARK) for code in str(f).split(";"))
                     for f in flags], dtype=bool)
