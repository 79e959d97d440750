"""The fit from tables in memory: a pandas DataFrame or arrays in, DataFrames out.

``fit_table(df)`` fits a DataFrame whose columns are named as a run file's (units in the
names: ``T [K]``, ``n [cm^-3]``, ``n_err [cm^-3]``, ``R_H [cm^3/C]``, ...), read by the same
reader as :func:`freezeout.api.fits.fit_file`, so a DataFrame read from a run file fits as
the file does. ``fit_arrays`` builds that DataFrame from arrays. ``parameters_frame`` and
``curves_frame`` give a result's parameters and model curves as DataFrames whose column
names carry their units. pandas is imported when a call runs.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import TYPE_CHECKING

from freezeout.api.fits import fit_run_record, reader_hall_factor
from freezeout.api.simulation import check_statistics
from freezeout.errors import InputError

if TYPE_CHECKING:
    from pathlib import Path

    from freezeout.fitting.result import FitResult
    from freezeout.physics.materials import Material

__all__ = ["curves_frame", "fit_arrays", "fit_table", "parameters_frame"]


def fit_table(
    frame,
    *,
    material: str | Material | None = None,
    material_file: str | Path | None = None,
    donors: int | str = 1,
    acceptors: int | str = 1,
    statistics: str = "fermi-dirac",
    hall_factor: float | None = None,
    degeneracy: float | None = None,
    fix: Mapping[str, float] | None = None,
    bounds: Mapping[str, tuple[float, float]] | None = None,
    include_mixed: bool = False,
    include_flagged: bool = False,
    metadata: Mapping[str, str] | None = None,
    name: str = "DataFrame",
) -> FitResult:
    """Fit a reduced run given as a pandas DataFrame.

    Parameters
    ----------
    frame
        One row per temperature; columns named as in a run file, units in the names
        (``T [K]``, ``n [cm^-3]`` or ``p [cm^-3]``, ``n_err [cm^-3]``, ``R_H [cm^3/C]``,
        ``rho [ohm cm]``, ``flags``, ...). NaN is a missing value.
    material, material_file, donors, acceptors, statistics, hall_factor, degeneracy, fix,
    bounds, include_mixed, include_flagged
        As for :func:`freezeout.api.fits.fit_file` (a level count may be ``"auto"``: the
        count chosen by BIC, :mod:`freezeout.fitting.model_selection`).
    metadata
        ``key -> value`` pairs, as a file's ``# key: value`` lines (``material``,
        ``carrier``, ``hall_factor``, ``sample``...).
    name
        Name of the table in messages and provenance; lines in messages are those of
        ``frame.to_csv(index=False)`` (header line 1).

    Raises
    ------
    InputError
        As the file reader: a missing column, a unit it cannot read, a bad value (naming the
        row's line and the column).
    """
    from freezeout.io.reduced_csv_reader import read_reduced_frame

    statistics = check_statistics(statistics)
    run = read_reduced_frame(frame, source=name, hall_factor=reader_hall_factor(hall_factor),
                             include_mixed=include_mixed, metadata=metadata)
    return fit_run_record(run, input_name=name, input_path=None, material=material,
                         material_file=material_file, donors=donors, acceptors=acceptors,
                         statistics=statistics, hall_factor=hall_factor, degeneracy=degeneracy,
                         fix=fix, bounds=bounds, include_mixed=include_mixed,
                         include_flagged=include_flagged, where="the table")


def fit_arrays(temperature, density, density_err=None, carrier: str = "n", *,
               temperature_unit: str = "K", density_unit: str = "cm^-3", **options
               ) -> FitResult:
    """Fit a run given as arrays of temperature and carrier density.

    Parameters
    ----------
    temperature
        Temperatures. [``temperature_unit``, default K]
    density
        Majority-carrier density (a Hall density r_H/(q|R_H|) with r_H = 1 unless
        ``metadata={"hall_factor": ...}`` says otherwise). [``density_unit``, default cm^-3]
    density_err
        Its standard uncertainty, or None. [``density_unit``]
    carrier
        ``"n"`` (electrons) or ``"p"`` (holes).
    temperature_unit, density_unit
        Units of the arrays, as a file's header would write them.
    **options
        As for :func:`fit_table`.
    """
    import numpy as np
    import pandas as pd

    if carrier not in ("n", "p"):
        raise InputError(f"carrier must be 'n' or 'p', got {carrier!r}")
    columns = {f"T [{temperature_unit}]": np.asarray(temperature, dtype=float),
               f"{carrier} [{density_unit}]": np.asarray(density, dtype=float)}
    if density_err is not None:
        columns[f"{carrier}_err [{density_unit}]"] = np.asarray(density_err, dtype=float)
    sizes = {k: v.shape for k, v in columns.items()}
    if len(set(sizes.values())) != 1 or len(next(iter(sizes.values()))) != 1:
        raise InputError(f"arrays must be one-dimensional and of one length, got {sizes}")
    options.setdefault("name", "arrays")
    return fit_table(pd.DataFrame(columns), **options)


def _estimate_row(parameter: str, unit: str, est, fixed: bool) -> dict:
    lo, hi = est.ci95
    return {"parameter": parameter, "unit": unit, "value": est.value,
            "stderr": float("nan") if fixed else est.stderr,
            "ci95_low": float("nan") if fixed else lo,
            "ci95_high": float("nan") if fixed else hi,
            "method": "fixed" if fixed else est.method, "fixed": fixed}


def parameters_frame(result: FitResult):
    """A fit's parameters as a DataFrame, one row per parameter.

    Parameters
    ----------
    result
        The fit.

    Returns
    -------
    pandas.DataFrame
        Columns ``parameter`` (``N_D1``, ``E_D1``, ``N_A``, ..., then ``net_doping`` and
        ``compensation_ratio``), ``unit`` (``cm^-3``, ``eV``, ``1``), ``value``, ``stderr``,
        ``ci95_low``, ``ci95_high`` (in that unit), ``method`` (how the interval was
        computed) and ``fixed`` (a held value).
    """
    import pandas as pd

    held = set(result.fixed)
    rows = []
    for lv in result.levels:
        rows.append(_estimate_row(f"N_{lv.name}", "cm^-3", lv.concentration,
                                  f"N_{lv.name}" in held or lv.concentration.method == "fixed"))
        if lv.energy is not None:
            rows.append(_estimate_row(f"E_{lv.name}", "eV", lv.energy,
                                      f"E_{lv.name}" in held or lv.energy.method == "fixed"))
    rows.append(_estimate_row("net_doping", "cm^-3", result.net_doping,
                              result.net_doping.method == "fixed"))
    rows.append(_estimate_row("compensation_ratio", "1", result.compensation_ratio,
                              result.compensation_ratio.method == "fixed"))
    return pd.DataFrame(rows, columns=["parameter", "unit", "value", "stderr", "ci95_low",
                                       "ci95_high", "method", "fixed"])


def curves_frame(result: FitResult, n_points: int = 400):
    """A fit's model curves on a temperature grid as a DataFrame, units in the column names.

    Parameters
    ----------
    result
        The fit.
    n_points
        Grid points, from a bit below to a bit above the data's temperatures.

    Returns
    -------
    pandas.DataFrame
        Columns ``T [K]``, ``<carrier> model [cm^-3]`` (majority), the minority carrier's,
        ``n_i [cm^-3]``, ``E_F - E_v [eV]``, ``E_g [eV]``, and per level ``ionized <name>
        [cm^-3]`` and ``ionized fraction <name> [1]``.
    """
    import pandas as pd

    from freezeout.fitting.curves import model_curves

    c = model_curves(result, n_points)
    minority = "p" if result.carrier == "n" else "n"
    cols = {"T [K]": c.temperature, f"{result.carrier} model [cm^-3]": c.majority,
            f"{minority} model [cm^-3]": c.minority, "n_i [cm^-3]": c.intrinsic,
            "E_F - E_v [eV]": c.fermi_level, "E_g [eV]": c.band_gap}
    for name, dens, frac in zip(c.level_names, c.ionized_density, c.ionized_fraction,
                                strict=True):
        cols[f"ionized {name} [cm^-3]"] = dens
        cols[f"ionized fraction {name} [1]"] = frac
    return pd.DataFrame(cols)
