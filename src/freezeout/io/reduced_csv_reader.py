"""Reader of reduced temperature runs (CSV files, or a DataFrame) into a :class:`RunData`.

A run file may open with an instrument preamble (``key: value`` or free-text lines, with or
without ``#``; kept as metadata), then has one header row whose names carry units (or a
units row right under it), and one row per temperature. Separators ``,``, ``;`` or tab;
with ``;`` or tab, decimal commas are read (``400,000`` is 400.0). Encodings UTF-8 (with or
without byte-order mark), UTF-16 with byte-order mark, else Windows-1252/Latin-1 with a
note. Recognised columns (any order, case and spacing free; the unit in brackets or
parentheses, after a final underscore, or on the units row):

=================  ==========================================  ============================
quantity           names                                       units
=================  ==========================================  ============================
temperature        T, Temperature, Temp                        K, mK, degC
carrier density    n, p, carrier density, density, n_H, p_H    cm^-3, m^-3, 1/cm3
Hall coefficient   R_H, RH, Hall coefficient                   cm^3/C, cm3/C, m^3/C, m^3 C^-1
Hall mobility      mu, mu_H, mobility, Hall mobility           cm^2/(V s), cm^2/Vs, m^2/(V s)
resistivity        rho, resistivity                            ohm cm, Ohm-cm, ohm m, mohm cm
conductivity       sigma, conductivity                         S/cm, S/m, mS/cm, 1/(ohm cm)
uncertainty        <name>_err, <name>_error, <name>_unc, <name>_sigma, <name>_std
flags              flags                                       (data-quality codes)
=================  ==========================================  ============================

A conductivity column gives the resistivity rho = 1/sigma (its uncertainty
u(rho) = u(sigma)/sigma^2) unless a resistivity column is also given.

Precedence of density and Hall coefficient: when both columns are present the **density
column is used** for the fit and the Hall coefficient only gives each point's carrier type
(its sign); where they disagree beyond their uncertainties (three combined standard
uncertainties; 1 % without uncertainties) the run's notes say so. A density column is a Hall
density r_H/(q |R_H|) with r_H = 1 unless a ``# hall_factor: X`` line says it was computed
with r_H = X; the fit's Hall factor rescales it.

Columns the fit does not use are left out and listed (:attr:`RunData.ignored_columns` and a
note with the reason): unknown names, and transport columns (resistivity, conductivity,
mobility) whose unit cannot be read. Values are checked after conversion to canonical
units: temperatures from 0.1 K to 5000 K, finite uncertainties. The reduced CSV that
``freezeout reduce`` writes (:mod:`freezeout.io.reduced_csv_writer`) is one such file.
Limits: :data:`MAX_RUN_POINTS` rows and 50 MB, checked before parsing.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from freezeout.errors import InputError
from freezeout.io.frame_table import table_from_frame
from freezeout.io.raw_reader import parse_length
from freezeout.io.reduced_csv_layout import severe_from_flags
from freezeout.io.run_columns import header_names_run, plan_columns
from freezeout.io.run_values import density_hall_note, read_columns
from freezeout.io.table_reader import Table, read_table
from freezeout.numbers.digest import sha256_bytes
from freezeout.physics.constants import Q
from freezeout.records.limits import check_hall_factor
from freezeout.records.run import RunData, run_carrier
from freezeout.records.run_rules import mixed_note, split_scale_uncertainty

__all__ = ["MAX_RUN_POINTS", "read_reduced_csv", "read_reduced_frame", "run_from_table"]

#: Most lines a reduced-run file may have (project choice, no source): 10,000. A run has tens
#: to hundreds of temperatures; the fit's time grows with the points.
MAX_RUN_POINTS = 10_000


def _all_or_none(values, table, plan, key):
    """An optional uncertainty column: given on every row, or on none."""
    if values is None or np.all(np.isnan(values)):
        return None
    bad = np.nonzero(np.isnan(values))[0]
    if bad.size:
        raise InputError("uncertainty must be given on every row or none", file=table.source,
                         line=int(table.lines[bad[0]]), column=plan.cols[key][2])
    return values


def _metadata(table: Table) -> tuple[dict[str, str], list[str]]:
    meta: dict[str, str] = {}
    for key, value, _, _ in table.metadata:
        k = key.strip().lower().replace(" ", "_")
        if k and k not in meta:
            meta[k] = value
    notes = []
    if table.preamble:
        meta.setdefault("preamble", " | ".join(text for _, text in table.preamble))
    plain = [line for _, _, line, commented in table.metadata if not commented]
    kept = sorted(plain + [line for line, _ in table.preamble])
    if kept:
        notes.append(f"{len(kept)} preamble line(s) before the header (lines {kept[0]}-"
                     f"{kept[-1]}) kept as metadata")
    return meta, notes


def read_reduced_csv(path: str | Path, *, hall_factor: float | None = None,
                     include_mixed: bool = False) -> RunData:
    """Read a reduced run.

    Parameters
    ----------
    path
        CSV file (a regular file of at most 50 MB and :data:`MAX_RUN_POINTS` lines).
    hall_factor
        Hall scattering factor r_H applied to the densities; None keeps the file's own
        (its ``# hall_factor:`` line, else 1). [1]
    include_mixed
        Keep points whose Hall sign differs from the run's majority carrier (they are
        otherwise marked for exclusion from a single-carrier fit).

    Raises
    ------
    InputError
        With file, line and column, for any malformed content.
    """
    if hall_factor is not None:
        hall_factor = check_hall_factor(hall_factor)
    table = read_table(path, is_header=header_names_run, max_rows=MAX_RUN_POINTS,
                       what="reduced run")
    return run_from_table(table, hall_factor=hall_factor, include_mixed=include_mixed)


def read_reduced_frame(frame, *, source: str = "DataFrame", hall_factor: float | None = None,
                       include_mixed: bool = False, metadata=None) -> RunData:
    """Read a reduced run from a pandas DataFrame with a file's column names.

    Parameters
    ----------
    frame
        Columns named as in a file, units in the names (``T [K]``, ``n [cm^-3]``, ...).
    source
        Name for messages and provenance; lines in messages are those of
        ``frame.to_csv(index=False)`` (header line 1, first row line 2).
    hall_factor, include_mixed
        As for :func:`read_reduced_csv`.
    metadata
        ``key -> value`` pairs, as a file's ``# key: value`` lines.
    """
    if hall_factor is not None:
        hall_factor = check_hall_factor(hall_factor)
    table = table_from_frame(frame, source=source, metadata=metadata,
                             max_rows=MAX_RUN_POINTS)
    return run_from_table(table, hall_factor=hall_factor, include_mixed=include_mixed)


def run_from_table(table: Table, *, hall_factor: float | None = None,
                   include_mixed: bool = False) -> RunData:
    """Build the run from a table read by :func:`freezeout.io.table_reader.read_table`.

    Parameters
    ----------
    table
        The table.
    hall_factor
        r_H, already checked, or None for the table's own. [1]
    include_mixed
        As for :func:`read_reduced_csv`.
    """
    fname = table.source
    meta, notes = _metadata(table)
    notes = [*table.notes, *notes]
    plan = plan_columns(table.header, table.unit_lines, fname)
    hline = table.header_line
    if ("temperature", False) not in plan.cols:
        raise InputError("no temperature column (expected e.g. 'T [K]')", file=fname,
                         line=hline)
    if ("density", False) not in plan.cols and ("hall_coefficient", False) not in plan.cols:
        raise InputError("no carrier density or Hall coefficient column (expected e.g. "
                         "'n [cm^-3]', 'p [cm^-3]' or 'R_H [cm^3/C]')", file=fname, line=hline)
    if table.n_rows == 0:
        raise InputError("no data rows after the header", file=fname, line=hline)
    arr, flags = read_columns(table, plan)
    line_nos = table.lines

    t = arr[("temperature", False)]
    order = np.argsort(t, kind="stable")
    st = t[order]
    dup = np.nonzero(np.diff(st) == 0)[0]
    if dup.size:
        a, b = int(line_nos[order[dup[0]]]), int(line_nos[order[dup[0] + 1]])
        raise InputError(f"duplicate temperature {st[dup[0]]:g} K (also on line {a})",
                         file=fname, line=b, column=plan.cols[("temperature", False)][2])
    arr = {k: v[order] for k, v in arr.items()}
    flags = [flags[i] for i in order]
    line_nos = line_nos[order]
    t = arr[("temperature", False)]

    r_file = 1.0
    if "hall_factor" in meta:
        r_file = check_hall_factor(meta["hall_factor"], "metadata hall_factor", file=fname)
    if hall_factor is None:
        hall_factor = r_file
    stated = meta.get("carrier", meta.get("type", meta.get("carrier_type", ""))).strip().lower()
    stated = {"n": "n", "n-type": "n", "electrons": "n", "p": "p", "p-type": "p",
              "holes": "p"}.get(stated)

    rh = arr.get(("hall_coefficient", False))
    rh_err = arr.get(("hall_coefficient", True))
    base_names = plan.base_names
    point_hint = None
    if ("density_p", False) in arr:
        # electron and hole columns side by side (e.g. simulate output): per point the
        # larger one is the majority carrier and the one the Hall effect measures
        n_col, p_col = arr[("density", False)], arr[("density_p", False)]
        take_p = p_col > n_col
        arr[("density", False)] = np.where(take_p, p_col, n_col)
        if ("density", True) in arr and ("density_p", True) in arr:
            arr[("density", True)] = np.where(take_p, arr[("density_p", True)],
                                              arr[("density", True)])
        else:
            arr.pop(("density", True), None)
        base_names["density"] = "np"
        point_hint = ["p" if x else "n" for x in take_p]
    if ("density", False) in arr:
        dens = arr[("density", False)]
        dens_err = arr.get(("density", True))
        key = base_names["density"]
        named = {"n": "n", "nh": "n", "p": "p", "ph": "p"}.get(key)
        if point_hint is not None:
            point_type = point_hint
        elif named is not None:
            bad = np.nonzero(dens <= 0)[0]
            if bad.size:
                raise InputError(f"{key} must be > 0 (the column name gives the type)",
                                 file=fname, line=int(line_nos[bad[0]]),
                                 column=plan.cols[("density", False)][2])
            point_type = [named] * t.size
            if stated is not None and stated != named:
                notes.append(f"the file says '# carrier: {stated}' but its density column is "
                             f"{key!r}: the column's type ({named}) is used")
            if rh is not None:
                point_type = ["p" if x > 0 else "n" for x in rh]
        elif rh is not None:
            point_type = ["p" if x > 0 else "n" for x in rh]
        elif np.any(dens < 0):
            point_type = ["n" if x < 0 else "p" for x in dens]
            notes.append("signed density column: negative values read as electrons")
        else:
            point_type = [stated or "n"] * t.size
            if stated is None:
                notes.append("carrier type not stated: assumed electrons (n); name the column "
                             "'n' or 'p', or add a '# carrier: p' line")
        if rh is not None and "hall_factor_varies" not in meta:
            # (a file whose R_H carries a temperature-dependent r_H cannot agree with one r_H)
            note = density_hall_note(np.abs(dens), dens_err, rh, rh_err, r_file, t, line_nos,
                                     plan)
            if note:
                notes.append(note)
        density = np.abs(dens) * hall_factor / r_file
        density_err = None if dens_err is None else dens_err * hall_factor / r_file
    else:
        point_type = ["p" if x > 0 else "n" for x in rh]
        density = hall_factor / (Q * np.abs(rh))
        density_err = None if rh_err is None else density * rh_err / np.abs(rh)
    scale = 0.0
    if density_err is not None and "reduce" in meta.get("produced_by", ""):
        # our own reduced CSV: its uncertainties include the thickness, common to all points
        try:
            t_val, t_err = parse_length(meta.get("thickness", ""), "thickness")
        except ValueError:
            t_val, t_err = 1.0, 0.0
        density_err, scale = split_scale_uncertainty(density, density_err, t_err / t_val)
    if density_err is not None and np.all(np.isnan(density_err)):
        density_err = None
    if density_err is not None:
        if np.any(np.isnan(density_err)) or np.any(density_err <= 0):
            i = int(np.nonzero(np.isnan(density_err) | (density_err <= 0))[0][0])
            raise InputError("density uncertainty must be given (> 0) on every row or none",
                             file=fname, line=int(line_nos[i]),
                             column=_error_column(plan))
        _check_relative(density, density_err, fname, line_nos, plan)
    if plan.unrecognised:
        notes.append("columns not used (not a recognised quantity or uncertainty): "
                     + ", ".join(repr(h) for h in plan.unrecognised))
    for h, reason in plan.unused:
        notes.append(f"column {h!r} not used (the fit does not need it): {reason}")
    carrier = run_carrier(point_type, t, stated)
    note = mixed_note(point_type, carrier, t, include_mixed)
    if note:
        notes.append(note)
        if include_mixed:
            point_type = [carrier] * t.size
    severe = None
    if plan.flag_col is not None:
        severe = severe_from_flags(flags)
        if severe.any():
            notes.append(f"{int(severe.sum())} point(s) are flagged as failing a severe "
                         "data-quality check and are left out of the fit unless "
                         "--include-flagged is given")
    rho, rho_err = arr.get(("resistivity", False)), arr.get(("resistivity", True))
    if rho is None and ("conductivity", False) in arr:
        sigma = arr[("conductivity", False)]
        rho = 1.0 / sigma
        sigma_err = arr.get(("conductivity", True))
        rho_err = None if sigma_err is None else sigma_err / sigma**2
        notes.append(f"resistivity computed as 1/sigma from column "
                     f"{plan.cols[('conductivity', False)][2]!r}")

    return RunData(
        source=fname,
        sha256=sha256_bytes(table.data),
        temperature=t,
        density=density,
        density_err=density_err,
        carrier=carrier,
        point_carrier=tuple(point_type),
        resistivity=rho,
        resistivity_err=rho_err,
        mobility=arr.get(("mobility", False)),
        mobility_err=arr.get(("mobility", True)),
        hall_coefficient=rh,
        hall_coefficient_err=rh_err,
        flags=tuple(flags),
        severe=severe,
        metadata=meta,
        notes=tuple(notes),
        ignored_columns=tuple(plan.ignored),
        scale_uncertainty=scale,
        hall_factor=float(hall_factor),
        temperature_err=_all_or_none(arr.get(("temperature", True)), table, plan,
                                     ("temperature", True)),
    )


#: A density uncertainty below this fraction of the density is refused: no Hall measurement
#: comes near it (the best reach about 0.1 %), so the unit of the column is wrong (an error
#: column in m^-3 beside a density in cm^-3 is 1e-6 of its size) or a cell was cut short
#: (common practice, no source for the 0.1 %; the limit is a project choice, below the
#: 1e-6 that reductions of noise-free synthetic readings give).
MIN_RELATIVE_UNCERTAINTY = 1e-7


def _error_column(plan) -> str:
    """The header of the column the density uncertainties came from (n_err or R_H_err)."""
    return plan.cols.get(("density", True), plan.cols.get(("hall_coefficient", True)))[2]


def _check_relative(density, density_err, fname, line_nos, plan) -> None:
    """Refuse the first row whose density uncertainty is implausibly small (InputError)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        small = np.flatnonzero(density_err / density < MIN_RELATIVE_UNCERTAINTY)
    if small.size:
        i = int(small[0])
        raise InputError(f"the uncertainty is {density_err[i] / density[i]:.2g} of the value "
                         f"({density_err[i]:.4g} of {density[i]:.4g} cm^-3), below the "
                         f"{MIN_RELATIVE_UNCERTAINTY:g} no Hall measurement reaches: check the "
                         "column's unit (or a cell cut short)", file=fname,
                         line=int(line_nos[i]), column=_error_column(plan))
